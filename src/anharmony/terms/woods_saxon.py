"""The nuclear mean field: ``woods_saxon`` and its ``spin_orbit`` companion.

Both use the Woods–Saxon form factor f(r) = 1/(1 + e^{(r−R)/a}) (R. D. Woods and D. S. Saxon,
Phys. Rev. 95, 577 (1954)); neither is analytic in r² (f′(0) ≠ 0), so both use panels. The
form's parameters live once, in :class:`WoodsSaxonShape` (R, a) and :class:`SpinOrbitShape`
(V_ls, r_ls), the bases of these terms and of their deformed counterparts
(:mod:`.deformed_woods_saxon`, :mod:`.deformed_spin_orbit`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy.special import expit

from ..errors import InputError
from .base import (
    DepthTerm,
    StrengthTerm,
    Term,
    arr,
    diffuseness,
    number,
    positive,
    radius,
    require,
)

__all__ = ["SpinOrbit", "SpinOrbitShape", "WoodsSaxon", "WoodsSaxonShape"]


@dataclass(frozen=True)
class WoodsSaxonShape(Term):
    """Base of the terms on a Woods–Saxon surface: ``radius`` R (or ``r0`` with
    ``mass_number``) and ``diffuseness`` a of f(r) = 1/(1 + e^{(r−R)/a}); R is the scale."""

    radius: float = 4.0
    diffuseness: float = 0.65

    @classmethod
    def _checked(cls, p) -> dict[str, float]:
        """The checked values of the parameters this base declares, by field name."""
        big_r = radius(cls.kind, p)
        return {"radius": big_r, "diffuseness": diffuseness(cls.kind, p, big_r)}

    def _f(self, r):
        return expit(-(arr(r) - self.radius) / self.diffuseness)  # stable 1/(1+e^{(r-R)/a})

    @property
    def scale(self):
        return self.radius


@dataclass(frozen=True)
class SpinOrbitShape(WoodsSaxonShape, StrengthTerm):
    """Base of the spin–orbit terms V_ls r_ls² (∇f × p)·s / ħ of a Woods–Saxon form f:
    ``strength`` V_ls (required; V_ls > 0 lowers j = l + ½) and ``length`` r_ls (default 1)."""

    spin_orbit: ClassVar[bool] = True
    length: float = 1.0

    @classmethod
    def _checked(cls, p) -> dict[str, float]:
        s = number(cls.kind, "strength", require(cls.kind, p, "strength"))
        return {"strength": s, **super()._checked(p),
                "length": number(cls.kind, "length", p.get("length", 1.0), positive=True)}

    @property
    def _prefactor(self) -> float:
        """V_ls r_ls²."""
        return self.strength * self.length**2


@dataclass(frozen=True)
class WoodsSaxon(WoodsSaxonShape, DepthTerm):
    """−V₀ / (1 + exp((r − R)/a)), R given or R = r₀ A^(1/3)."""

    kind: ClassVar[str] = "woods_saxon"
    display_name: ClassVar[str] = "Woods–Saxon"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "radius", "r0", "mass_number",
                                             "diffuseness")
    depth: float = 50.0

    @classmethod
    def _build(cls, p, ctx):
        return cls(depth=positive(cls.kind, p, "depth"), **cls._checked(p))

    def value(self, r):
        return -self.depth * self._f(r)

    def d1(self, r):
        f = self._f(r)
        return self.depth * f * (1.0 - f) / self.diffuseness

    def d2(self, r):
        f = self._f(r)
        return -self.depth * f * (1.0 - f) * (1.0 - 2.0 * f) / self.diffuseness**2


@dataclass(frozen=True)
class SpinOrbit(SpinOrbitShape):
    """Radial form V_ls r_ls² (1/r) df/dr of the spin–orbit term; multiplied by ⟨l·s⟩.

    f is the Woods–Saxon form 1/(1 + e^{(r−R)/a}); V_ls > 0 lowers j = l + ½.
    """

    kind: ClassVar[str] = "spin_orbit"
    display_name: ClassVar[str] = "spin–orbit"
    parameters: ClassVar[tuple[str, ...]] = ("strength", "radius", "r0", "mass_number",
                                             "diffuseness", "length")

    @classmethod
    def _build(cls, p, ctx):
        return cls(**cls._checked(p))

    def gradient_axial(self, rho, z):
        """C f_ρ, C f_z and C f_ρ/ρ of the spherical form at cylindrical points (C = V_ls r_ls²):
        ∇f = f′(r) r̂, so f_ρ = f′ ρ/r, f_z = f′ z/r, f_ρ/ρ = f′/r (axial geometry, spin ½)."""
        rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
        r = np.hypot(rho, z)
        _, pre, f1, _, _ = self._form(r)
        with np.errstate(invalid="ignore", divide="ignore"):
            over_r = np.where(r > 0.0, pre * f1 / np.where(r > 0.0, r, 1.0), 0.0)
        return over_r * rho, over_r * z, over_r

    def _form(self, r):
        """r, the prefactor V_ls r_ls², and f′, f″, f‴ of the Woods–Saxon form."""
        r = arr(r)
        a = self.diffuseness
        f = self._f(r)
        g = f * (1.0 - f)
        return (r, self._prefactor, -g / a, g * (1.0 - 2.0 * f) / a**2,
                -g * (1.0 - 6.0 * g) / a**3)

    def value(self, r):
        r, c, f1, _, _ = self._form(r)
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * f1 / r

    def d1(self, r):
        r, c, f1, f2, _ = self._form(r)  # d/dr (f′/r) = f″/r − f′/r²
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * (f2 / r - f1 / r**2)

    def d2(self, r):
        r, c, f1, f2, f3 = self._form(r)  # d²/dr² (f′/r) = f‴/r − 2f″/r² + 2f′/r³
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * (f3 / r - 2.0 * f2 / r**2 + 2.0 * f1 / r**3)

    def check_channel(self, dimension, l, j, lam):
        super().check_channel(dimension, l, j, lam)
        if dimension != 3 or l is None:
            raise InputError("spin_orbit: the spin-orbit term needs the 3D central channels "
                             "(l, j) of a spin-1/2 particle; it would be dropped in "
                             f"dimension={dimension}{' without symmetry' if l is None else ''}")
        if l > 0 and j is None:
            raise InputError(f"j: required with spin_orbit terms (l = {l}: j = {l - 0.5} or "
                             f"{l + 0.5}); without j the term would be dropped")
