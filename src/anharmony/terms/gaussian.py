"""The ``gaussian`` term: −V₀ e^{−(x − x₀)²/a²}, the well of an optical trap."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import AnalyticDepthTerm, TermError, arr, center, number, positive

__all__ = ["Gaussian"]


@dataclass(frozen=True)
class Gaussian(AnalyticDepthTerm):
    """−V₀ exp(−(x − x₀)²/a²); ``waist`` w means a = w/√2 (V = −V₀ e^{−2r²/w²})."""

    kind: ClassVar[str] = "gaussian"
    display_name: ClassVar[str] = "Gaussian"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "range", "waist", "center")
    range: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        depth = positive(cls.kind, p, "depth")
        if ("range" in p) == ("waist" in p):
            raise TermError(cls.kind, "range", "give exactly one of range or waist")
        if "range" in p:
            a = number(cls.kind, "range", p["range"], positive=True)
        else:
            a = number(cls.kind, "waist", p["waist"], positive=True) / math.sqrt(2.0)
        return cls(center=center(cls.kind, p), depth=depth, range=a)

    def _g(self, x):
        y = (arr(x) - self.center) / self.range
        return y, np.exp(-y * y)

    def value(self, x):
        return -self.depth * self._g(x)[1]

    def d1(self, x):
        y, g = self._g(x)
        return 2.0 * self.depth * y * g / self.range

    def d2(self, x):
        y, g = self._g(x)
        return 2.0 * self.depth * (1.0 - 2.0 * y * y) * g / self.range**2

    @property
    def scale(self):
        return self.range
