"""The ``anisotropic_harmonic`` term: V = Σ_i ½ m ω_i² (x_i − c_i)², one frequency per axis.

``frequencies`` are ħω values: [ħω_x, ħω_y, ħω_z] (3D), [ħω_x, ħω_y] (2D), or [ħω_⊥, ħω_z]
(3D, symmetric about z). Not central; a polynomial, so it enters both the Cartesian and the
axial basis exactly (:mod:`anharmony.geometry`). It has no channel on the line or in a
central well: those are refused.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..errors import InputError
from .base import TermError, number, require
from .noncentral import GeometryTerm

__all__ = ["AnisotropicHarmonic"]


@dataclass(frozen=True)
class AnisotropicHarmonic(GeometryTerm):
    """Σ ½ k_i (x_i − c_i)², k_i = mω_i² from ``frequencies`` (ħω_i), optional ``centers``."""

    kind: ClassVar[str] = "anisotropic_harmonic"
    display_name: ClassVar[str] = "harmonic"
    parameter_facts: ClassVar[dict] = {"frequencies": ("frequencies ħω_i", (1, 0)),
                                       "centers": ("centres x₀ᵢ", (0, 1))}
    parameters: ClassVar[tuple[str, ...]] = ("frequencies", "centers")
    stiffness: tuple[float, ...] = (1.0, 1.0, 1.0)
    centers: tuple[float, ...] = (0.0, 0.0, 0.0)

    @classmethod
    def _build(cls, params, ctx):
        freqs = require(cls.kind, params, "frequencies")
        if isinstance(freqs, (str, bytes)) or not hasattr(freqs, "__len__") \
                or len(freqs) not in (2, 3):
            raise TermError(cls.kind, "frequencies", "must be a list of 2 or 3 hbar*omega "
                            f"values ([x, y, z], [x, y] or [perp, z]); got {freqs!r}")
        hw = [number(cls.kind, "frequencies", f, positive=True) for f in freqs]
        k = tuple(h * h / (2.0 * ctx.hbar2_2m) for h in hw)  # mω² = (ħω)²/(2 ħ²/2m)
        centers = params.get("centers", [0.0] * len(k))
        if isinstance(centers, (str, bytes)) or not hasattr(centers, "__len__") \
                or len(centers) != len(k):
            raise TermError(cls.kind, "centers", f"must be a list of {len(k)} numbers (one per "
                            f"frequency); got {centers!r}")
        c = tuple(number(cls.kind, "centers", v) for v in centers)
        return cls(stiffness=k, centers=c)

    def _axes(self, dimension: int) -> tuple[tuple[float, ...], tuple[float, ...]]:
        """Stiffness and centre per Cartesian axis in ``dimension``."""
        k, c = self.stiffness, self.centers
        if len(k) == dimension:
            return k, c
        if len(k) == 2 and dimension == 3:  # [perp, z]
            if c[0] != 0.0:
                raise InputError("anisotropic_harmonic.centers: the perpendicular centre of a "
                                 f"[perp, z] oscillator must be 0; got {c[0]}")
            return (k[0], k[0], k[1]), (0.0, 0.0, c[1])
        raise InputError(f"anisotropic_harmonic.frequencies: {len(k)} values do not fit "
                         f"dimension {dimension}")

    @property
    def dimensions(self) -> tuple[int, ...]:
        return (2, 3) if len(self.stiffness) == 2 else (3,)

    def is_axial(self) -> bool:
        """Symmetric about z: [perp, z] given, or ω_x = ω_y with c_x = c_y = 0."""
        if len(self.stiffness) == 2:
            return True
        k, c = self.stiffness, self.centers
        return k[0] == k[1] and c[0] == 0.0 and c[1] == 0.0

    def value_cartesian(self, *coords):
        k, c = self._axes(len(coords))
        return sum(0.5 * ki * (np.asarray(x, dtype=float) - ci) ** 2
                   for ki, ci, x in zip(k, c, coords, strict=True))

    def value_axial(self, rho, z):
        k, c = self._axes(3)
        rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
        return 0.5 * k[0] * rho * rho + 0.5 * k[2] * (z - c[2]) ** 2

    def polynomial_cartesian(self, dimension):
        k, c = self._axes(dimension)
        out: dict[tuple[int, ...], float] = {}
        for axis, (ki, ci) in enumerate(zip(k, c, strict=True)):
            for p, coef in ((2, 0.5 * ki), (1, -ki * ci), (0, 0.5 * ki * ci * ci)):
                key = tuple(p if a == axis else 0 for a in range(dimension))
                out[key] = out.get(key, 0.0) + coef
        return out

    def polynomial_axial(self):
        k, c = self._axes(3)
        return {(2, 0): 0.5 * k[0], (0, 2): 0.5 * k[2], (0, 1): -k[2] * c[2],
                (0, 0): 0.5 * k[2] * c[2] ** 2}

    def limits(self):
        return (math.inf, math.inf)

    @property
    def scale(self):
        return 1.0 / math.sqrt(min(self.stiffness))

