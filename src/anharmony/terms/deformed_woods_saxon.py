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

from .base import DepthTerm, TermError, number, positive
from .noncentral import GeometryTerm
from .woods_saxon import WoodsSaxon, WoodsSaxonShape

__all__ = ["DeformedSurface", "DeformedWoodsSaxon", "allowed_range", "surface_minimum"]

_Y20 = math.sqrt(5.0 / (16.0 * math.pi))
_Y40 = 3.0 / 16.0 * math.sqrt(1.0 / math.pi)


def _shape(c2):
    """Y₂₀ and Y₄₀ at cos²θ = c2: R(θ)/R₀ = 1 + β₂ Y₂₀ + β₄ Y₄₀."""
    c2 = np.asarray(c2, dtype=float)
    return _Y20 * (3.0 * c2 - 1.0), _Y40 * (35.0 * c2 * c2 - 30.0 * c2 + 3.0)


def surface_minimum(beta2: float, beta4: float) -> tuple[float, float]:
    """The smallest R(θ)/R₀ over all directions and the cos²θ where it is.

    R/R₀ is a quadratic in t = cos²θ ∈ [0, 1], so its minimum is at an end or at the vertex.
    """
    a = 35.0 * _Y40 * beta4
    b = 3.0 * _Y20 * beta2 - 30.0 * _Y40 * beta4
    ts = [0.0, 1.0] + ([-b / (2.0 * a)] if a > 0.0 and 0.0 < -b / (2.0 * a) < 1.0 else [])
    values = [1.0 + beta2 * y2 + beta4 * y4 for y2, y4 in (_shape(t) for t in ts)]
    k = int(np.argmin(values))
    return float(values[k]), ts[k]


def allowed_range(field: str, other: float) -> tuple[float, float] | None:
    """The open interval of ``field`` (``"beta2"`` or ``"beta4"``) for which R(θ) > 0 in every
    direction, the other β fixed at ``other``; ``None`` if there is none.

    1 + β A(t) + C(t) > 0 for all t bounds β below by −(1 + C)/A where A > 0 and above by
    (1 + C)/(−A) where A < 0 (A the shape of ``field``, C = other × the other shape); the
    bounds are taken on 20001 values of t = cos²θ and polished by a bounded search.
    """
    from scipy.optimize import minimize_scalar

    def parts(t):
        y2, y4 = _shape(t)
        return (y2, other * y4) if field == "beta2" else (y4, other * y2)

    def lower(t):  # −(1 + C)/A where A > 0, else −∞
        a, c = parts(t)
        return np.where(a > 0, -(1.0 + c) / np.where(a > 0, a, 1.0), -np.inf)

    def upper(t):  # (1 + C)/(−A) where A < 0, else +∞
        a, c = parts(t)
        return np.where(a < 0, (1.0 + c) / np.where(a < 0, -a, 1.0), np.inf)

    t = np.linspace(0.0, 1.0, 20001)
    out = []
    for f, sign in ((lower, -1.0), (upper, 1.0)):
        v = f(t)
        k = int(np.argmax(v) if sign < 0 else np.argmin(v))
        best = float(v[k])
        if np.isfinite(best) and 0 < k < len(t) - 1:
            r = minimize_scalar(lambda s, f=f, sign=sign: sign * float(f(s)),
                                bounds=(t[k - 1], t[k + 1]), method="bounded",
                                options={"xatol": 1e-12})
            best = max(best, -r.fun) if sign < 0 else min(best, r.fun)
        out.append(float(best))
    # where A → 0 with 1 + C < 0 the bounds run off to +∞ (below) or −∞ (above): no interval
    if not out[0] < out[1]:
        return None
    return out[0], out[1]


@dataclass(frozen=True)
class DeformedSurface(WoodsSaxonShape, GeometryTerm):
    """Base of the terms on a deformed Woods–Saxon surface R(θ) = R₀ (1 + β₂ Y₂₀ + β₄ Y₄₀):
    ``beta2`` and ``beta4`` (default 0) beside R₀ and a; symmetric about z, in 3D only."""

    dimensions: ClassVar[tuple[int, ...]] = (3,)
    beta2: float = 0.0
    beta4: float = 0.0

    def __post_init__(self) -> None:
        """Refuse a shape whose radius is zero or negative in some direction."""
        low, c2 = surface_minimum(self.beta2, self.beta4)
        if low > 0.0:
            return
        kind = getattr(self, "kind", "deformed_woods_saxon")
        # blame β₄ when β₂ alone makes a good shape, else β₂; give its range at the other fixed
        field = "beta4" if self.beta4 != 0.0 and surface_minimum(self.beta2, 0.0)[0] > 0.0 \
            else "beta2"
        other = "beta2" if field == "beta4" else "beta4"
        fixed = self.beta2 if field == "beta4" else self.beta4
        span = allowed_range(field, fixed)
        theta = math.degrees(math.acos(math.sqrt(min(max(c2, 0.0), 1.0))))
        where = f"θ = {theta:.4g}°" + ("" if theta == 90.0 else f" and {180.0 - theta:.4g}°")
        allowed = (f"at {other} = {fixed:g} no {field} keeps it positive" if span is None else
                   f"at {other} = {fixed:g} it stays positive for {span[0]:.4g} < {field} < "
                   f"{span[1]:.4g}")
        raise TermError(kind, field, f"the surface R(θ) = R0 (1 + beta2 Y20 + beta4 Y40) is not "
                        f"positive in every direction: R/R0 = {low:.4g} at {where} from the "
                        f"z axis for beta2 = {self.beta2:g}, beta4 = {self.beta4:g}; "
                        + allowed)

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
