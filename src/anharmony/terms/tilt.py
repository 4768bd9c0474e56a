"""The ``tilt`` term: a uniform force, V = F · x_axis (an electric field on a charge, gravity).

Not central, so it exists only on the line without symmetry (dimension 1, l = None), where it
is the polynomial F x and enters the Hamiltonian exactly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..errors import InputError
from .base import Term, TermError, arr, number, require

__all__ = ["Tilt"]

AXES = ("x", "y", "z")


@dataclass(frozen=True)
class Tilt(Term):
    """F · x_axis; ``force`` F (energy per length), ``axis`` x, y or z (only x in 1D)."""

    kind: ClassVar[str] = "tilt"
    display_name: ClassVar[str] = "tilt"
    parameter_facts: ClassVar[dict] = {"axis": ("axis", (0, 0))}
    parameters: ClassVar[tuple[str, ...]] = ("force", "axis")
    quadrature_1d: ClassVar[str] = "exact"
    linear_parameter: ClassVar[str | None] = "force"
    central: ClassVar[bool] = False
    force: float = 0.0
    axis: str = "x"

    @classmethod
    def _build(cls, p, ctx):
        f = number(cls.kind, "force", require(cls.kind, p, "force"))
        axis = p.get("axis", "x")
        if axis not in AXES:
            raise TermError(cls.kind, "axis", f"must be one of {', '.join(AXES)}; got {axis!r}")
        return cls(force=f, axis=axis)

    def value(self, x):
        return self.force * arr(x)

    def d1(self, x):
        return np.full_like(arr(x), self.force)

    def d2(self, x):
        return np.zeros_like(arr(x))

    def limits(self):
        if self.force == 0:
            return (0.0, 0.0)
        return (-math.copysign(math.inf, self.force), math.copysign(math.inf, self.force))

    def polynomial(self):
        return {1: self.force}

    def check_channel(self, dimension, l, j, lam):
        super().check_channel(dimension, l, j, lam)  # refuses central channels: not central
        if self.axis != "x":
            raise InputError(f"tilt.axis: the 1D line is the x axis; got {self.axis!r} "
                             "(use axis: x, or leave it out)")
