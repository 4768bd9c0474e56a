"""Spin ½ in the axial basis: Ω = Λ + Σ blocks and the spin–orbit term (∇f × p)·s.

With a spin–orbit term the conserved quantum numbers of a well symmetric about z are
Ω = Λ + Σ (Σ = ±½) and, for a well even in z, the parity π. The block Ω > 0 holds the states
|n_ρ, Λ = Ω − ½, n_z, ↑⟩ (part A) and |n_ρ, Λ = Ω + ½, n_z, ↓⟩ (part B); the block −Ω is its
time-reversed copy with the same levels (Kramers degeneracy).

The spin–orbit operator of a term with prefactor C (V_ls r_ls² for ``spin_orbit``) and form
f(ρ, z) is V_so = C (∇f × p)·s / ħ; for a spherical f(r) it is C (1/r)(df/dr) l·s, the central
channels' form. With ∇f = f_ρ ρ̂ + f_z ẑ and p = −iħ∇ (derived here from s_ρ, s_φ written with
s_± = s_x ± i s_y; standard vector algebra in cylindrical coordinates):

    V_so = C [ Λ Σ f_ρ/ρ                                   (diagonal in Λ and Σ)
              − ½ e^{−iφ} s₊ ( f_z (∂_ρ + Λ/ρ) − f_ρ ∂_z )  (Λ → Λ − 1, ↓ → ↑)
              + ½ e^{+iφ} s₋ ( f_z (∂_ρ − Λ/ρ) − f_ρ ∂_z ) ] (Λ → Λ + 1, ↑ → ↓)

The off-diagonal element ⟨A|V_so|B⟩ = −(C/2) ⟨R_a Z_a| f_z (∂_ρ + Λ_b/ρ) − f_ρ ∂_z |R_b Z_b⟩
uses the ladder relations of the basis functions (verified against finite differences in the
tests; common practice, no source):

    (∂_ρ + m/ρ) R_n^m = [√(n + m) R_n^{m−1} + √(n + 1) R_{n+1}^{m−1}] / b_⊥
    ∂_z φ_n = [√(n/2) φ_{n−1} − √((n + 1)/2) φ_{n+1}] / b_z

and a tensor product of composite Gauss–Legendre rules in ρ and z, grown until it settles.

A term enters through ``gradient_axial(rho, z)``, which returns C f_ρ, C f_z and C f_ρ/ρ (the
last finite on the axis).
"""

from __future__ import annotations

import numpy as np

from ..basis import HermiteBasis, RadialBasis, panel_rule
from ..basis import _panel_width as panel_width
from .cartesian import PANEL_RTOL, settle

__all__ = ["has_spin", "so_diagonal", "so_gradient", "so_off_diagonal"]

_MARGIN = 6.0  # beyond the classical extent of the highest basis function, in lengths


def has_spin(well) -> bool:
    """True if the well has a spin–orbit term (then the axial blocks are Ω blocks)."""
    return any(getattr(t, "spin_orbit", False) for t in well.terms)


def so_gradient(well, rho: np.ndarray, z: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Σ over the spin–orbit terms of C f_ρ, C f_z and C f_ρ/ρ at (ρ, z)."""
    shape = np.broadcast_shapes(np.shape(rho), np.shape(z))
    out = [np.zeros(shape) for _ in range(3)]
    for t in well.terms:
        if getattr(t, "spin_orbit", False):
            for acc, part in zip(out, t.gradient_axial(rho, z), strict=True):
                acc += part
    return out[0], out[1], out[2]


def so_diagonal(well, basis, idx: np.ndarray, sigma: float) -> np.ndarray:
    """Λ Σ ⟨C f_ρ/ρ⟩ on the states ``idx`` of one Λ (zero for Λ = 0)."""
    if basis.lam == 0:
        return np.zeros((len(idx), len(idx)))
    over = basis.quadrature(lambda r, z: so_gradient(well, r, z)[2], idx, kind="panels")
    return basis.lam * sigma * over


def _rule(radial: RadialBasis, axis: HermiteBasis, points: list[int], cz: float):
    """Physical nodes and weights (ρ dρ, dz) of the panel product rule of level ``points``."""
    top = np.sqrt(4.0 * radial.size + 2.0 * radial.alpha + 2.0) + _MARGIN
    s, ws = panel_rule(0.0, top, (), panel_width(points[0], radial.size))
    rho = radial.length * s
    w_rho = rho * radial.length * ws
    top_z = np.sqrt(2.0 * axis.size + 1.0) + _MARGIN
    t, wt = panel_rule(-top_z, top_z, (0.0,), panel_width(points[1], axis.size))
    return rho, w_rho, cz + axis.length * t, axis.length * wt


def so_off_diagonal(well, a, b, idx_a: np.ndarray, idx_b: np.ndarray) -> np.ndarray:
    """⟨A|V_so|B⟩ between part A (Λ_a, Σ = +½) and part B (Λ_b = Λ_a + 1, Σ = −½).

    ``a`` and ``b`` are the :class:`~anharmony.geometry.axial.AxialBasis` of Λ_a and Λ_b.
    """
    sa, sb = a.states[idx_a], b.states[idx_b]
    if len(sa) == 0 or len(sb) == 0:
        return np.zeros((len(sa), len(sb)))
    b_perp, b_z = a.lengths
    lam_b = b.lam
    na_r, na_z = int(sa[:, 0].max()) + 1, int(sa[:, 1].max()) + 1
    nb_r, nb_z = int(sb[:, 0].max()) + 1, int(sb[:, 1].max()) + 1
    rad_a = RadialBasis(na_r, b_perp, a.lam, 2)
    rad_b = RadialBasis(nb_r, b_perp, lam_b, 2)
    rad_b_down = RadialBasis(nb_r + 1, b_perp, lam_b - 1, 2)  # for (∂_ρ + Λ_b/ρ) R^{Λ_b}
    ax_a = HermiteBasis(na_z, b_z, a.center)
    ax_b = HermiteBasis(nb_z + 1, b_z, a.center)  # for ∂_z φ
    n = np.arange(nb_r)[:, None]
    m = np.arange(nb_z)[:, None]
    widest = RadialBasis(max(na_r, nb_r + 1), b_perp, lam_b, 2)
    longest = HermiteBasis(max(na_z, nb_z + 1), b_z, a.center)

    def evaluate(points: list[int]) -> tuple[np.ndarray, float]:
        rho, w_rho, z, w_z = _rule(widest, longest, points, a.center)
        with np.errstate(over="ignore", invalid="ignore"):
            f_rho, f_z, _ = so_gradient(well, rho[:, None], z[None, :])
        fmax = float(np.max(np.abs(np.concatenate([f_rho.ravel(), f_z.ravel()]))))
        ra = rad_a.functions(rho) * w_rho[None, :]
        rb = rad_b.functions(rho)
        down = rad_b_down.functions(rho)
        d_rb = (np.sqrt(n + lam_b) * down[:-1] + np.sqrt(n + 1.0) * down[1:]) / b_perp
        za = ax_a.functions(z) * w_z[None, :]
        zf = ax_b.functions(z)
        zb = zf[:-1]
        low = np.vstack([np.zeros((1, len(z))), zf[:-2]])
        d_zb = (np.sqrt(m / 2.0) * low - np.sqrt((m + 1.0) / 2.0) * zf[1:]) / b_z
        g1 = np.einsum("ip,qp,jp->qij", za, f_z, zb)     # Σ_z Z_a f_z Z_b
        g2 = np.einsum("ip,qp,jp->qij", za, f_rho, d_zb)  # Σ_z Z_a f_ρ ∂_z Z_b
        t1 = np.einsum("sq,tq,qst->st", ra[sa[:, 0]], d_rb[sb[:, 0]],
                       g1[:, sa[:, 1][:, None], sb[:, 1][None, :]])
        t2 = np.einsum("sq,tq,qst->st", ra[sa[:, 0]], rb[sb[:, 0]],
                       g2[:, sa[:, 1][:, None], sb[:, 1][None, :]])
        return -0.5 * (t1 - t2), fmax

    start = [widest.size + 24, longest.size + 24]
    return settle(evaluate, start, PANEL_RTOL, "axial spin-orbit", lambda k: int(1.35 * k) + 8)
