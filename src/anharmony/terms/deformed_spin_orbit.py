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

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .deformed_woods_saxon import DeformedSurface
from .woods_saxon import SpinOrbit, SpinOrbitShape

__all__ = ["DeformedSpinOrbit"]


@dataclass(frozen=True)
class DeformedSpinOrbit(DeformedSurface, SpinOrbitShape):
    """``strength`` V_ls, ``radius`` R₀ (or ``r0`` with ``mass_number``), ``diffuseness`` a,
    ``length`` r_ls (default 1 length unit), ``beta2``, ``beta4``."""

    kind: ClassVar[str] = "deformed_spin_orbit"
    display_name: ClassVar[str] = "spin–orbit"
    parameters: ClassVar[tuple[str, ...]] = ("strength", "radius", "r0", "mass_number",
                                             "diffuseness", "length", "beta2", "beta4")

    @classmethod
    def _build(cls, p, ctx):
        return cls(**cls._checked(p))

    def spherical(self):
        """The undeformed term: ``spin_orbit`` with the same V_ls, R₀, a, r_ls."""
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
        surface = self._surface(c2)
        # R′(θ) = −sinθ · q(cosθ): q is smooth, so (1/r)∂_θ f = f′ s q / (a r) and its share of
        # f_ρ/ρ is f′ c q / (a r²) (s/ρ = 1/r), finite on the axis
        q = self._surface_slope(c)
        with np.errstate(over="ignore"):
            f = 1.0 / (1.0 + np.exp((r - surface) / self.diffuseness))
        fp = -f * (1.0 - f)
        a = self.diffuseness
        pre = self._prefactor
        d_r = fp / a
        d_theta = np.where(r > 0.0, fp * s * q / (a * safe), 0.0)
        f_rho = s * d_r + c * d_theta
        f_z = c * d_r - s * d_theta
        over_rho = np.where(r > 0.0, d_r / safe + fp * c * q / (a * safe * safe), 0.0)
        return pre * f_rho, pre * f_z, pre * over_rho
