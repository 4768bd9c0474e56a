"""The ``morse`` term: D (1 − e^{−α(x − x₀)})² (P. M. Morse, Phys. Rev. 34, 57 (1929))."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import DepthTerm, arr, center, positive

__all__ = ["Morse"]


@dataclass(frozen=True)
class Morse(DepthTerm):
    """D (1 − e^{−α(x − x₀)})²; in a radial channel the centre is the bond length r_e."""

    kind: ClassVar[str] = "morse"
    display_name: ClassVar[str] = "Morse"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "width", "center")
    quadrature_1d: ClassVar[str] = "weight"  # analytic in x
    quadrature_radial: ClassVar[str] = "panels"  # e^{−αr} is not analytic in r²
    width: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        d = positive(cls.kind, p, "depth")
        a = positive(cls.kind, p, "width")
        return cls(center=center(cls.kind, p), depth=d, width=a)

    def _e(self, x):
        with np.errstate(over="ignore"):
            return np.exp(-self.width * (arr(x) - self.center))

    def value(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return self.depth * (1.0 - e) ** 2

    def d1(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return 2.0 * self.depth * self.width * e * (1.0 - e)

    def d2(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return 2.0 * self.depth * self.width**2 * e * (2.0 * e - 1.0)

    def limits(self):
        return (math.inf, self.depth)

    @property
    def scale(self):
        return 1.0 / self.width
