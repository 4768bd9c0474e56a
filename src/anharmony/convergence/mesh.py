"""Cross-check solvers of a different family than the oscillator basis.

- Radial channels (d = 1 parities, d = 2, d = 3): the Laguerre functions *in r* of the
  regularised Lagrange–Laguerre mesh (D. Baye, Phys. Rep. 565, 1 (2015), §3.4),
  u(r) = r^{(d−1)/2} R(r) expanded in ℓ_k(x) = x^{a} e^{−x/2} p_k(x), x = r/h, with p_k the
  orthonormal Laguerre polynomials of weight x^{2a} e^{−x} and a = ν + ½, ν = λ + d/2 − 1. The
  functions decay like e^{−r/2h}, the shape of a bound state's tail, and are polynomials in r
  (not r²) — so they converge fast exactly where the oscillator basis is slow (Woods–Saxon,
  Coulomb, spin–orbit) and near threshold. The kinetic matrix, centrifugal term included, is
  exact: ⟨ℓ_m|−d²/dx² + a(a−1)/x²|ℓ_n⟩ = ∫ x^{2a} e^{−x} q_m q_n dx with q_n = p_n′ − p_n/2,
  and L_n^{(α)}′ = −Σ_{k<n} L_k^{(α)} (Abramowitz & Stegun 22.8.6 with 22.7.30) gives it in
  closed form. The potential matrix is integrated by composite Gauss–Legendre quadrature in
  √x (split at kinks such as a Coulomb radius) until it stops changing, rather than by the
  Gauss mesh-point approximation, so the levels are variational upper bounds and kinks or 1/r
  terms do not spoil the rate.
- The line without symmetry: the Lagrange–sinc mesh on a uniform grid (Baye 2015, §3.6;
  D. T. Colbert and W. H. Miller, J. Chem. Phys. 96, 1982 (1992)),
  T_ij = (ħ²/2m h²)(−1)^{i−j} [π²/3 if i = j, 2/(i−j)² otherwise], V diagonal.

The extent of the mesh (r_max or [x_lo, x_hi]) is set from the outermost classical turning
point of the highest requested bound level plus a decay length where ∫κ dr = ``DECAY``; the
number of points then grows by ``GROWTH`` until every bound level changes by less than the
tolerance, and the last change is the uncertainty.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.linalg import eigh, toeplitz
from scipy.special import gammaln

from .._checks import integer, numbers, positive
from ..basis import OrthogonalFamily, panel_rule
from ..eigensolvers import diagonalize
from ..errors import InputError
from ..units import UnitSystem
from ..well import Well
from ._problem import Problem, make_problem, shared_docs

__all__ = ["DECAY", "GROWTH", "CrossCheck", "cross_check", "laguerre_kinetic"]

DECAY = 22.0  # ∫κ dr beyond the turning point: |ψ|² falls by e^{−44} ≈ 1e-19 at the edge
GROWTH = 1.4  # ratio of successive mesh sizes
_QUAD_RTOL = 1e-13  # potential matrix stable to this fraction of its largest element
_ESTIMATE_SIZE = 60  # oscillator basis used to estimate the levels when none are given


@dataclass(frozen=True)
class CrossCheck:
    """Levels of one channel from the cross-check solver.

    Attributes
    ----------
    method : str
        ``"lagrange_laguerre"`` (radial channels) or ``"lagrange_sinc"`` (the line).
    energies : ndarray
        The levels (NaN where the solver found none).
    uncertainty : ndarray
        Change of each level over the last mesh refinement.
    bound : ndarray of bool
        Below the threshold.
    converged : bool
        Whether every bound level settled within the tolerance before ``max_points``.
    points : int
        Mesh size N of the last mesh.
    scale : float
        Mesh scale h (radial: r = h x; line: the grid step).
    extent : tuple of float
        (0, r_max) or (x_lo, x_hi).
    history : tuple
        (points, energies) of each mesh.
    note : str
        What was done, in words.
    """

    method: str
    energies: np.ndarray
    uncertainty: np.ndarray
    bound: np.ndarray
    converged: bool
    points: int
    scale: float
    extent: tuple[float, float]
    history: tuple[tuple[int, tuple[float, ...]], ...] = ()
    note: str = ""

    def difference(self, energies: Sequence[float]) -> np.ndarray:
        """``energies`` − the cross-check levels (same length)."""
        e = np.asarray(energies, dtype=float)
        k = min(e.size, self.energies.size)
        out = np.full(e.size, np.nan)
        out[:k] = e[:k] - self.energies[:k]
        return out


# --------------------------------------------------------------------------- Laguerre functions
def laguerre_kinetic(size: int, alpha: float) -> np.ndarray:
    """Exact matrix of −d²/dx² + a(a−1)/x² between ℓ_m, ℓ_n (a = α/2), weak form.

    T = C Cᵀ with q_n = Σ_k C_nk p_k: C_nn = −½, C_nk = −sqrt(h_k/h_n) for k < n, where
    h_k = Γ(k+α+1)/k! is the squared norm of L_k^{(α)}. In closed form
    T_mn = δ_mn/4 + ½(S_mn + S_nm) + Σ_{k<min(m,n)} h_k / sqrt(h_m h_n), S = strict lower part
    of −C. For α = 0 (even parity on the line) the weak form carries the natural condition
    u′(0) = 0; for α > 0 the functions vanish at the origin.
    """
    k = np.arange(size)
    logh = gammaln(k + alpha + 1.0) - gammaln(k + 1.0)
    s = np.tril(np.exp(0.5 * (logh[None, :] - logh[:, None])), -1)
    top = float(logh.max())
    cum = np.concatenate([[0.0], np.cumsum(np.exp(logh - top))])[:-1]  # Σ_{k<j} h_k / e^top
    mn = np.minimum.outer(k, k)
    t = np.exp(top - 0.5 * (logh[:, None] + logh[None, :])) * cum[mn]
    return t + 0.5 * (s + s.T) + 0.25 * np.eye(size)


def _laguerre_rule(size: int, alpha: float, top: float, breaks: Sequence[float], panels: int
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Nodes x and U[q, k] = sqrt(w_q) ℓ_k(x_q), panels uniform in s = sqrt(x)."""
    cuts = [math.sqrt(b) for b in breaks if 0.0 < b < top]
    s, w = panel_rule(0.0, math.sqrt(top), cuts, math.sqrt(top) / panels)
    ws = w * 2.0 * s  # dx = 2 s ds
    x = s * s
    fam = OrthogonalFamily("laguerre", alpha)
    vals, logs, _ = fam.values(x, size)
    logpre = 0.5 * np.log(ws) + 0.5 * alpha * np.log(x) - 0.5 * x
    return x, (vals * np.exp(logs + logpre[None, :])).T


def _laguerre_levels(problem: Problem, r_max: float, size: int, nev: int
                     ) -> tuple[np.ndarray, float]:
    """Lowest ``nev`` levels in ``size`` Laguerre functions spanning [0, r_max]."""
    alpha = 2.0 * problem.nu + 1.0
    fam = OrthogonalFamily("laguerre", alpha)
    x_last = float(fam.gauss_nodes(size)[-1])
    h = r_max / x_last
    top = x_last + 4.0 * math.sqrt(x_last) + 24.0
    breaks = [b / h for b in problem.breaks]
    panels = size // 3 + 12
    prev = None
    for _ in range(10):
        x, u = _laguerre_rule(size, alpha, top, breaks, panels)
        pot = problem.potential(h * x)
        pot = np.where(np.isfinite(pot), pot, 0.0)
        fu = pot[:, None] * u
        fu[u == 0.0] = 0.0
        vm = u.T @ fu
        if prev is not None and float(np.max(np.abs(vm - prev))) <= \
                _QUAD_RTOL * max(float(np.max(np.abs(vm))), 1e-300):
            break
        prev = vm
        panels = int(GROWTH * panels) + 4
    hmat = problem.hbar2_2m / h**2 * laguerre_kinetic(size, alpha) + 0.5 * (vm + vm.T)
    e = eigh(hmat, eigvals_only=True, subset_by_index=(0, min(nev, size) - 1), driver="evr")
    return e, h


def _sinc_levels(problem: Problem, lo: float, hi: float, size: int, nev: int
                 ) -> tuple[np.ndarray, float]:
    x = np.linspace(lo, hi, size)
    h = float(x[1] - x[0])
    k = np.arange(size, dtype=float)
    col = np.where(k == 0, math.pi**2 / 3.0, 2.0 * (-1.0) ** k / np.maximum(k, 1.0) ** 2)
    pot = problem.potential(x)
    hmat = problem.hbar2_2m / h**2 * toeplitz(col) + np.diag(pot)
    e = eigh(hmat, eigvals_only=True, subset_by_index=(0, min(nev, size) - 1), driver="evr")
    return e, h


# --------------------------------------------------------------------------- extent
def _effective(problem: Problem, r: np.ndarray) -> np.ndarray:
    v = problem.potential(r)
    if problem.radial:
        nu = problem.nu
        with np.errstate(divide="ignore"):
            v = v + problem.hbar2_2m * (nu * nu - 0.25) / r**2
    return v


def _edge(problem: Problem, start: float, direction: float, e_top: float, scale: float
          ) -> float:
    """Outer turning point of e_top beyond ``start`` plus the decay length (one side)."""
    reach = 4.0 * scale
    for _ in range(60):
        xs = start + direction * np.linspace(0.0, reach, 4001)[1:]
        v = _effective(problem, np.abs(xs) if problem.radial else xs)
        inside = np.flatnonzero(v <= e_top)
        last = xs[inside[-1]] if inside.size else start
        if inside.size == 0 or inside[-1] < xs.size - 1 - 400:
            # turning point found with room to spare: integrate κ beyond it
            tail = last + direction * np.linspace(0.0, reach, 20001)
            vv = _effective(problem, np.abs(tail) if problem.radial else tail)
            kap = np.sqrt(np.maximum(vv - e_top, 0.0) / problem.hbar2_2m)
            acc = np.concatenate([[0.0], np.cumsum(0.5 * (kap[1:] + kap[:-1])
                                                   * np.abs(np.diff(tail)))])
            hit = np.flatnonzero(acc >= DECAY)
            if hit.size:
                return float(tail[hit[0]])
        reach *= 2.0
    raise InputError("well: the level is not confined (the well does not rise above it "
                     "on one side); the mesh solver needs a bound level")


def _estimate(problem: Problem, levels: int) -> np.ndarray:
    n = max(_ESTIMATE_SIZE, levels + 10)
    mats = problem.hamiltonian(n, problem.reference.length)
    e, _ = diagonalize(mats.total, levels, mats.bandwidth)
    return e


# --------------------------------------------------------------------------- front end
def run_cross_check(problem: Problem, levels: int, energies: np.ndarray | None = None,
                    rtol: float = 1e-10, max_points: int = 1200) -> CrossCheck:
    """Cross-check levels of a resolved channel (validated inputs)."""
    est = _estimate(problem, levels) if energies is None else np.asarray(energies, dtype=float)
    thr = problem.threshold
    bound_est = est < thr
    scale = float(problem.well.scale)
    v_min = float(problem.reference.v_min)
    if bound_est.any():
        e_top = float(np.max(est[bound_est]))
    else:
        e_top = v_min + 0.5 * (thr - v_min) if math.isfinite(thr) else float(np.max(est))
    e_scale = max(float(np.max(np.abs(est))), abs(e_top - v_min), 1e-300)
    atol = rtol * e_scale
    if problem.radial:
        r_max = _edge(problem, 0.0, 1.0, e_top, scale)
        extent = (0.0, r_max)
        size = max(40, 4 * levels + 20)
        method = "lagrange_laguerre"
    else:
        x0 = problem.center
        extent = (_edge(problem, x0, -1.0, e_top, scale), _edge(problem, x0, 1.0, e_top, scale))
        kmax = math.sqrt(max(e_top - v_min, 1e-300) / problem.hbar2_2m)
        size = max(60, 4 * levels + 20, int(1.5 * (extent[1] - extent[0]) * kmax / math.pi))
        method = "lagrange_sinc"
    history = []
    prev = None
    converged = False
    best: tuple[float, np.ndarray, np.ndarray, float, int] | None = None
    rises = 0
    h = math.nan
    while True:
        size = min(size, max_points)
        if problem.radial:
            vals, h = _laguerre_levels(problem, extent[1], size, levels)
        else:
            vals, h = _sinc_levels(problem, extent[0], extent[1], size, levels)
        e = np.full(levels, np.nan)
        e[:vals.size] = vals
        history.append((int(size), tuple(float(v) for v in e)))
        if prev is not None:
            unc = np.abs(e - prev)
            check = (e < thr) & np.isfinite(unc)
            worst = float(np.max(unc[check])) if check.any() else math.inf
            if best is not None and worst > best[0]:
                rises += 1  # rounding (which grows with the mesh) has taken over
            else:
                rises = 0
            if best is None or worst <= best[0]:
                best = (worst, e, unc, h, int(size))
            if check.any() and worst <= atol:
                converged = True
                break
            if not check.any() or rises >= 2:
                break
        if size >= max_points:
            break
        prev = e
        size = math.ceil(GROWTH * size)
    if best is not None:
        _, e, unc, h, _ = best
    else:
        unc = np.full(levels, np.inf)
    note = (f"{method.replace('_', '-')} mesh, scale {h:.4g}, extent {extent[0]:.4g} to "
            f"{extent[1]:.4g}; uncertainty = change from the previous mesh"
            + ("" if converged else "; not settled within the tolerance"))
    points = best[4] if best is not None else int(history[-1][0])
    return CrossCheck(method=method, energies=e, uncertainty=unc, bound=e < thr,
                      converged=bool(converged), points=points, scale=float(h),
                      extent=(float(extent[0]), float(extent[1])), history=tuple(history),
                      note=note)


@shared_docs
def cross_check(well: Well, dimension: int = 3, l: int | None = 0, j: float | str | None = None,
                *, units: str | UnitSystem = "oscillator", mass: float | None = None,
                levels: int = 5, reference: str | Mapping[str, float] = "auto",
                energies: Sequence[float] | None = None, rtol: float = 1e-10,
                max_points: int = 1200) -> CrossCheck:
    """Levels of one channel by a solver of another family (see the module notes).

    Parameters
    ----------
    [channel parameters]
    [units and mass]
    levels : int
        Number of levels, from the lowest of the channel.
    reference : "auto" or mapping
        Reference oscillator, as for :func:`anharmony.solve` (sets the estimate basis).
    energies : sequence of float, optional
        Estimates of the ``levels`` levels (e.g. the oscillator result), used only to size the
        mesh; by default a 60-state oscillator basis supplies them.
    rtol : float
        Stop refining when every bound level changes by less than rtol × the energy scale
        (the largest |E| of the estimates or the depth of the highest one).
    max_points : int
        Largest mesh, at least ``levels + 2``.

    Returns
    -------
    CrossCheck

    Raises
    ------
    InputError
        A bad argument (the message names it), or a level the well does not confine.
    """
    levels = integer("levels", levels, 1)
    rtol = positive("rtol", rtol)
    max_points = integer("max_points", max_points, levels + 2)
    est = None if energies is None else np.array(
        numbers("energies", energies, levels, what="finite numbers (one per level)"))
    problem = make_problem(well, dimension, l, j, units, mass, levels, reference)
    return run_cross_check(problem, levels, est, rtol, max_points)
