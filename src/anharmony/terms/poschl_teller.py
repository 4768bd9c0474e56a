"""The ``poschl_teller`` term: −V₀ / cosh²((x − x₀)/a) (G. Pöschl and E. Teller, Z. Phys. 83,
143 (1933))."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import AnalyticDepthTerm, arr, center, positive

__all__ = ["PoschlTeller"]


@dataclass(frozen=True)
class PoschlTeller(AnalyticDepthTerm):
    """−V₀ / cosh²((x − x₀)/a)."""

    kind: ClassVar[str] = "poschl_teller"
    display_name: ClassVar[str] = "Pöschl–Teller"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "range", "center")
    range: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        d = positive(cls.kind, p, "depth")
        a = positive(cls.kind, p, "range")
        return cls(center=center(cls.kind, p), depth=d, range=a)

    def _st(self, x):
        y = (arr(x) - self.center) / self.range
        return 1.0 / np.cosh(np.clip(y, -700, 700)) ** 2, np.tanh(y)

    def value(self, x):
        return -self.depth * self._st(x)[0]

    def d1(self, x):
        s2, t = self._st(x)
        return 2.0 * self.depth * s2 * t / self.range

    def d2(self, x):
        s2, t = self._st(x)
        return 2.0 * self.depth * s2 * (s2 - 2.0 * t * t) / self.range**2

    @property
    def scale(self):
        return self.range
