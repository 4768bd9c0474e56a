"""The ``deformed_woods_saxon`` term: a Woods–Saxon well with an axially deformed surface.

V(r, θ) = −V₀ / (1 + exp((r − R(θ))/a)), R(θ) = R₀ (1 + β₂ Y₂₀(θ) + β₄ Y₄₀(θ)), θ measured from
the symmetry axis z (the usual parametrisation of deformed nuclear potentials; Bohr &
Mottelson, Nuclear Structure vol. II, ch. 4, quoted from memory). Y₂₀ = sqrt(5/16π)(3c² − 1),
Y₄₀ = (3/16) sqrt(1/π)(35c⁴ − 30c² + 3), c = cos θ. R₀ is not rescaled to conserve the volume.
Symmetric about z; not central (at β₂ = β₄ = 0 it is the spherical ``woods_saxon``), so it is
solved in the axial or Cartesian geometry. The deformed surface is :class:`DeformedSurface`,
shared with ``deformed_spin_orbit``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import DepthTerm, number, positive
from .noncentral import GeometryTerm
from .woods_saxon import WoodsSaxon, WoodsSaxonShape

__all__ = ["DeformedSurface", "DeformedWoodsSaxon"]

_Y20 = math.sqrt(5.0 / (16.0 * math.pi))
_Y40 = 3.0 / 16.0 * math.sqrt(1.0 / math.pi)


@dataclass(frozen=True)
class DeformedSurface(WoodsSaxonShape, GeometryTerm):
    """Base of the terms on a deformed Woods–Saxon surface R(θ) = R₀ (1 + β₂ Y₂₀ + β₄ Y₄₀):
    ``beta2`` and ``beta4`` (default 0) beside R₀ and a; symmetric about z, in 3D only."""

    dimensions: ClassVar[tuple[int, ...]] = (3,)
    beta2: float = 0.0
    beta4: float = 0.0

    @classmethod
    def _checked(cls, p) -> dict[str, float]:
        return {**super()._checked(p), "beta2": number(cls.kind, "beta2", p.get("beta2", 0.0)),
                "beta4": number(cls.kind, "beta4", p.get("beta4", 0.0))}

    def is_axial(self) -> bool:
        return True

    def _surface(self, c2):
        """R(θ) at c2 = cos²θ."""
        return self.radius * (1.0 + self.beta2 * _Y20 * (3.0 * c2 - 1.0)
                              + self.beta4 * _Y40 * (35.0 * c2 * c2 - 30.0 * c2 + 3.0))

    def _surface_slope(self, c):
        """q(cos θ), smooth, with R′(θ) = −sin θ · q(cos θ)."""
        c2 = c * c
        return self.radius * (6.0 * self.beta2 * _Y20 * c
                              + self.beta4 * _Y40 * (140.0 * c2 * c - 60.0 * c))


@dataclass(frozen=True)
class DeformedWoodsSaxon(DeformedSurface, DepthTerm):
    """``depth`` V₀ > 0, ``radius`` R₀ (or ``r0`` with ``mass_number``), ``diffuseness`` a,
    ``beta2``, ``beta4``."""

    kind: ClassVar[str] = "deformed_woods_saxon"
    display_name: ClassVar[str] = "Woods–Saxon"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "radius", "r0", "mass_number",
                                             "diffuseness", "beta2", "beta4")
    quadrature_geometry: ClassVar[str] = "panels"  # f′(0) ≠ 0: a cusp at the centre
    depth: float = 50.0

    @classmethod
    def _build(cls, p, ctx):
        return cls(depth=positive(cls.kind, p, "depth"), **cls._checked(p))

    def spherical(self):
        """The undeformed term (β₂ = β₄ = 0): ``woods_saxon`` with the same V₀, R₀, a; the
        geometries choose their default basis length from it (a deformed surface has no
        useful curvature at the centre)."""
        return WoodsSaxon(depth=self.depth, radius=self.radius, diffuseness=self.diffuseness)

    def value_axial(self, rho, z):
        rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
        r = np.hypot(rho, z)
        with np.errstate(invalid="ignore", divide="ignore"):
            c2 = np.where(r > 0.0, (z / np.where(r > 0.0, r, 1.0)) ** 2, 1.0)
        surface = self._surface(c2)
        with np.errstate(over="ignore"):
            return -self.depth / (1.0 + np.exp((r - surface) / self.diffuseness))

    def value_cartesian(self, x, y, z):
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        return self.value_axial(np.hypot(x, y), z)
