"""Shared base of the terms that exist only off the line: Cartesian and axial geometries.

Such a term is not a function of one coordinate, so it has neither a 1D nor a central channel;
it provides the geometry protocol instead (:mod:`anharmony.geometry.potential`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from ..errors import InputError
from .base import Term, TermError

__all__ = ["GeometryTerm"]


@dataclass(frozen=True)
class GeometryTerm(Term):
    """A non-central term for :func:`anharmony.geometry.solve_geometry` only."""

    central: ClassVar[bool] = False

    def value(self, x):
        raise TermError(self.kind, None, "is not central; solve it with "
                        "anharmony.geometry.solve_geometry (geometry='cartesian' or 'axial')")

    d1 = d2 = value

    def check_channel(self, dimension, l, j, lam):
        raise InputError(f"{self.kind}: the term is not central and has no {dimension}D line "
                         "or radial channel; solve it with anharmony.geometry.solve_geometry "
                         "(geometry='cartesian' or 'axial')")
