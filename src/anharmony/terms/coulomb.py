"""The ``coulomb`` term: the field of a uniformly charged sphere (protons in a nucleus)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import Term, arr, number, radius, require

__all__ = ["Coulomb"]


@dataclass(frozen=True)
class Coulomb(Term):
    """Coulomb field of a uniformly charged sphere of charge Z (times the particle's)."""

    kind: ClassVar[str] = "coulomb"
    display_name: ClassVar[str] = "Coulomb"
    parameters: ClassVar[tuple[str, ...]] = ("charge", "radius", "r0", "mass_number")
    linear_parameter: ClassVar[str | None] = "charge"
    charge: float = 1.0
    radius: float = 1.0
    e2: float = 1.0  # e²/(4πε₀) in the unit system's energy × length

    @classmethod
    def _build(cls, p, ctx):
        z = number(cls.kind, "charge", require(cls.kind, p, "charge"))
        return cls(charge=z, radius=radius(cls.kind, p), e2=ctx.units.coulomb_constant)

    def value(self, r):
        r = np.abs(arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, k * (3.0 - (r / rc) ** 2) / (2.0 * rc), k / r)

    def d1(self, r):
        r = np.abs(arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, -k * r / rc**3, -k / r**2)

    def d2(self, r):
        r = np.abs(arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, -k / rc**3, 2.0 * k / r**3)

    @property
    def scale(self):
        return self.radius

    def breaks(self, radial):
        return (self.radius,) if radial else (-self.radius, self.radius)
