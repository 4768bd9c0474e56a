"""The ``deformed_spin_orbit`` term: the spin–orbit companion of ``deformed_woods_saxon``.

V_so = V_ls r_ls² (∇f × p)·s / ħ with f(r, θ) = 1 / (1 + exp((r − R(θ))/a)) and the deformed
surface R(θ) = R₀ (1 + β₂ Y₂₀(θ) + β₄ Y₄₀(θ)) of ``deformed_woods_saxon``; at β₂ = β₄ = 0 it is
the spherical ``spin_orbit`` term V_ls r_ls² (1/r)(df/dr) l·s (the usual form of deformed
nuclear mean fields; Bohr & Mottelson, Nuclear Structure vol. II, ch. 5, quoted from memory).
V_ls > 0 lowers the states whose spin is parallel to their orbital motion, as ``spin_orbit``.
Solved in the axial geometry with spin ½ (Ω blocks, :mod:`anharmony.geometry.spin`).

The gradient in spherical coordinates, with u = (r − R(θ))/a and f′ = df/du = −f(1 − f):
∂f/∂r = f′/a, (1/r)∂f/∂θ = −f′ R′(θ)/(a r); then f_ρ = sinθ ∂_r f + cosθ (1/r)∂_θ f and
f_z = cosθ ∂_r f − sinθ (1/r)∂_θ f.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import diffuseness, number, radius, require
from .noncentral import GeometryTerm

__all__ = ["DeformedSpinOrbit"]

_Y20 = math.sqrt(5.0 / (16.0 * math.pi))
_Y40 = 3.0 / 16.0 * math.sqrt(1.0 / math.pi)


@dataclass(frozen=True)
class DeformedSpinOrbit(GeometryTerm):
    """``strength`` V_ls, ``radius`` R₀ (or ``r0`` with ``mass_number``), ``diffuseness`` a,
    ``length`` r_ls (default 1 length unit), ``beta2``, ``beta4``."""

    kind: ClassVar[str] = "deformed_spin_orbit"
    display_name: ClassVar[str] = "spin–orbit"
    parameters: ClassVar[tuple[str, ...]] = ("strength", "radius", "r0", "mass_number",
                                             "diffuseness", "length", "beta2", "beta4")
    linear_parameter: ClassVar[str | None] = "strength"
    spin_orbit: ClassVar[bool] = True
    dimensions: ClassVar[tuple[int, ...]] = (3,)
    strength: float = 0.0
    radius: float = 4.0
    diffuseness: float = 0.65
    length: float = 1.0
    beta2: float = 0.0
    beta4: float = 0.0

    @classmethod
    def _build(cls, p, ctx):
        big_r = radius(cls.kind, p)
        return cls(strength=number(cls.kind, "strength", require(cls.kind, p, "strength")),
                   radius=big_r, diffuseness=diffuseness(cls.kind, p, big_r),
                   length=number(cls.kind, "length", p.get("length", 1.0), positive=True),
                   beta2=number(cls.kind, "beta2", p.get("beta2", 0.0)),
                   beta4=number(cls.kind, "beta4", p.get("beta4", 0.0)))

    def is_axial(self) -> bool:
        return True

    def spherical(self):
        """The undeformed term: ``spin_orbit`` with the same V_ls, R₀, a, r_ls."""
        from .woods_saxon import SpinOrbit

        return SpinOrbit(strength=self.strength, radius=self.radius,
                         diffuseness=self.diffuseness, length=self.length)

    def gradient_axial(self, rho, z):
        """C f_ρ, C f_z and C f_ρ/ρ at cylindrical points (C = V_ls r_ls²)."""
        rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
        r = np.hypot(rho, z)
        safe = np.where(r > 0.0, r, 1.0)
        c = np.where(r > 0.0, z / safe, 0.0)
        s = np.where(r > 0.0, rho / safe, 0.0)
        c2 = c * c
        surface = self.radius * (1.0 + self.beta2 * _Y20 * (3.0 * c2 - 1.0)
                                 + self.beta4 * _Y40 * (35.0 * c2 * c2 - 30.0 * c2 + 3.0))
        # R′(θ) = −sinθ · q(cosθ): q is smooth, so (1/r)∂_θ f = f′ s q / (a r) and its share of
        # f_ρ/ρ is f′ c q / (a r²) (s/ρ = 1/r), finite on the axis
        q = self.radius * (6.0 * self.beta2 * _Y20 * c
                           + self.beta4 * _Y40 * (140.0 * c2 * c - 60.0 * c))
        with np.errstate(over="ignore"):
            f = 1.0 / (1.0 + np.exp((r - surface) / self.diffuseness))
        fp = -f * (1.0 - f)
        a = self.diffuseness
        pre = self.strength * self.length**2
        d_r = fp / a
        d_theta = np.where(r > 0.0, fp * s * q / (a * safe), 0.0)
        f_rho = s * d_r + c * d_theta
        f_z = c * d_r - s * d_theta
        over_rho = np.where(r > 0.0, d_r / safe + fp * c * q / (a * safe * safe), 0.0)
        return pre * f_rho, pre * f_z, pre * over_rho

    def limits(self):
        return (0.0, 0.0)

    @property
    def scale(self):
        return self.radius
