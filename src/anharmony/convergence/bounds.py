"""Residual error bars of Ritz values: variance, Weinstein interval, Kato–Temple bound.

For a normalised Ritz vector ψ with Ritz value E = ⟨H⟩ the variance is
σ² = ⟨H²⟩ − ⟨H⟩² = ‖(H − E)ψ‖², where Hψ is taken in the *infinite* space, not projected back
onto the truncated basis (there the residual would vanish).

- Polynomial wells: every matrix is exact and banded, so (H − E)ψ lies in the first
  N + bandwidth states and is computed exactly from a larger exact matrix.
- Otherwise: the kinetic part Tψ lies exactly in the first N + 2 (line) or N + 1 (radial)
  states; the residual function (T + V − E)ψ is evaluated at composite Gauss–Legendre nodes
  (with the basis' adaptive panel rule) and its squared norm summed, the node count growing
  until σ² changes by less than ``SIGMA_RTOL``. Summing squares of the residual itself avoids
  the cancellation of ⟨H²⟩ − ⟨H⟩².

Bounds (each assumes only that H is self-adjoint and bounded below):

- Weinstein: the interval [E − σ, E + σ] contains an exact eigenvalue (D. H. Weinstein,
  Proc. Natl. Acad. Sci. USA 20, 529 (1934)).
- Kato–Temple: if λ is the only eigenvalue in an interval (α, β) around E, then
  E − σ²/(β − E) ≤ λ ≤ E + σ²/(E − α) (T. Kato, J. Phys. Soc. Japan 4, 334 (1949);
  G. Temple, Proc. R. Soc. A 119, 276 (1928)). For level k, α is the Ritz value of level
  k − 1 (an upper bound on λ_{k−1}), and the interval holds an eigenvalue — λ_k — whenever
  (β − E)(E − α) > σ²; the bound is reported only then. The gap estimate β is the next Ritz
  level minus its own σ, capped at the threshold (where the continuum begins); that the next
  exact level lies no lower than β is the assumption, stated in
  :attr:`ResidualBounds.assumption`.
- Each Ritz value is an upper bound on its exact level: E_k(N) ≥ λ_k (Hylleraas–Undheim–
  MacDonald theorem; J. K. L. MacDonald, Phys. Rev. 43, 830 (1933)).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from .._checks import integer, length_or_auto
from ..basis import _cached_rule
from ..eigensolvers import diagonalize
from ..errors import InputError
from ..units import UnitSystem
from ..well import Well
from ._problem import Problem, make_problem, shared_docs

__all__ = ["SIGMA_RTOL", "ResidualBounds", "residual_bounds"]

SIGMA_RTOL = 1e-3  # σ² stable to this relative change between quadrature refinements (σ to
#                    5e-4: ample for an error bar). Measured: σ² of well-converged Morse levels
#                    in a basis that reaches a steep wall (N = 452, b = 0.237 Å, σ ≈ 1e-7 cm⁻¹)
#                    wanders by 1e-5…1e-4 from one refinement to the next up to 26 000 points,
#                    so a test at 1e-6 was passed by chance, after seconds of refinements
_MAX_REFINE = 14  # quadrature refinements before giving up (points grow ×1.35 each)
_EPS = float(np.finfo(float).eps)
ROUNDING_FACTOR = 4.0  # σ² changes below (4 eps)² · N · ||terms||² are rounding: each residual
#                        value is a sum of N products, rounded to ~sqrt(N) eps of its terms
UPPER_BOUND_NOTE = ("each Ritz value is an upper bound on its exact level "
                    "(Hylleraas-Undheim-MacDonald theorem)")
KT_ASSUMPTION = ("Kato-Temple: assumes the next exact level lies at or above the gap estimate "
                 "beta = (next Ritz value - its sigma), capped at the threshold; reported only "
                 "where (beta - E)(E - previous Ritz value) > sigma^2")


@dataclass(frozen=True)
class ResidualBounds:
    """Variance-based error bars of the Ritz values of one basis.

    Attributes
    ----------
    energies : ndarray
        Ritz values E_k (each an upper bound on its exact level).
    sigma : ndarray
        sqrt(⟨H²⟩ − ⟨H⟩²) of each Ritz vector, Hψ taken beyond the truncated space.
    weinstein_lower, weinstein_upper : ndarray
        E ± σ: each interval contains an exact eigenvalue.
    kato_temple_lower : ndarray
        E − σ²/(β − E); NaN where the gap estimate β does not exceed E (assumption fails).
    gap : ndarray
        β used for each level (the lower estimate of the next exact level).
    exact : bool
        True when Hψ was evaluated exactly (polynomial wells).
    size : int
        Basis size.
    lengths : ndarray
        Oscillator length of the basis each level's bounds come from.
    assumption : str
        The Kato–Temple assumption, in words.
    note : str
        The upper-bound statement.
    """

    energies: np.ndarray
    sigma: np.ndarray
    weinstein_lower: np.ndarray
    weinstein_upper: np.ndarray
    kato_temple_lower: np.ndarray
    gap: np.ndarray
    exact: bool
    size: int
    lengths: np.ndarray
    assumption: str = KT_ASSUMPTION
    note: str = UPPER_BOUND_NOTE

    @property
    def length(self) -> float:
        """The oscillator length when all levels share one basis (NaN otherwise)."""
        b = np.unique(self.lengths)
        return float(b[0]) if b.size == 1 else math.nan

    @property
    def kato_temple_width(self) -> np.ndarray:
        """E − Kato–Temple lower bound: a bound on the Ritz error under the assumption."""
        return self.energies - self.kato_temple_lower


def compute_bounds(problem: Problem, size: int, length: float, levels: int) -> ResidualBounds:
    """Bounds for the lowest ``levels`` Ritz values of (size, length) (validated inputs).

    One extra Ritz pair is computed where the basis allows, for the gap of the last level.
    """
    mats = problem.hamiltonian(size, length)
    nev = min(levels + 1, size)
    e, v = diagonalize(mats.total, nev, mats.bandwidth)
    sigma2, exact = _variance(problem, size, length, e, v, mats)
    sigma = np.sqrt(np.maximum(sigma2, 0.0))
    beta = np.full(nev, np.nan)
    for k in range(nev):
        nxt = e[k + 1] - sigma[k + 1] if k + 1 < nev else math.inf
        beta[k] = min(nxt, problem.threshold)
    # the interval (α, β), α = the previous Ritz value (≥ λ_{k−1}), must hold an eigenvalue,
    # which is then λ_k: guaranteed when (β − E)(E − α) > σ² (Kato 1949)
    alpha = np.concatenate([[-math.inf], e[:-1]])
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        holds = (beta > e) & ((beta - e) * (e - alpha) > sigma2)
        kt = np.where(holds, e - sigma2 / (beta - e), np.nan)
    k = min(levels, nev)
    return ResidualBounds(energies=e[:k], sigma=sigma[:k], weinstein_lower=(e - sigma)[:k],
                          weinstein_upper=(e + sigma)[:k], kato_temple_lower=kt[:k],
                          gap=beta[:k], exact=exact, size=int(size),
                          lengths=np.full(k, float(length)))


def _variance(problem: Problem, size: int, length: float, e: np.ndarray, v: np.ndarray,
              mats: Any) -> tuple[np.ndarray, bool]:
    if problem.polynomial:
        band = mats.bandwidth
        if band is not None:
            big = problem.hamiltonian(size + band, length).total[:, :size]
            r = big @ v
            r[:size] -= v * e[None, :]
            return np.sum(r * r, axis=0), True
    extra = 2 if not problem.radial else 1
    basis = problem.basis(size + extra, length)
    hw = problem.frequency(length)
    tv = (hw * basis.kinetic())[:, :size] @ v  # Tψ, exact in the first N + extra states
    points = 2 * (size + extra) + 48
    prev = None
    s2 = None
    for step in range(_MAX_REFINE):
        if step < 2:
            # the first pair of rules from the basis module's cache: stored at unit length,
            # they serve every length of a scan at this size (the same nodes and U as
            # basis.quadrature(points, "panels", breaks)); the rarer, larger refinements are
            # made once and not kept
            coords, u, _, _ = _cached_rule(basis, points, "panels", tuple(problem.breaks))
        else:
            coords, u = basis.quadrature(points, kind="panels", breaks=problem.breaks)
        psi = u[:, :size] @ v
        pot = problem.potential(coords)
        pot = np.where(np.isfinite(pot), pot, 0.0)  # infinite only where ψ vanishes to 0
        t_psi = u @ tv
        v_psi = (pot[:, None] - e[None, :]) * psi
        res = t_psi + v_psi
        s2 = np.sum(res * res, axis=0)
        # σ² = ||Tψ + (V − E)ψ||² cancels terms of size ||Tψ||, ||(V − E)ψ||: below
        # (ROUNDING_FACTOR · eps · that size)² it is rounding and cannot settle any further
        size2 = np.sum(t_psi * t_psi, axis=0) + np.sum(v_psi * v_psi, axis=0)
        floor = (ROUNDING_FACTOR * _EPS) ** 2 * size2 * (size + extra)
        if prev is not None and np.all(np.abs(s2 - prev) <= SIGMA_RTOL * np.abs(s2) + floor
                                       + 1e-300):
            break
        prev = s2
        points = int(1.35 * points) + 8
    return s2, False


@shared_docs
def residual_bounds(well: Well, dimension: int = 3, l: int | None = 0,
                    j: float | str | None = None, *, size: int = 60,
                    length: float | Literal["auto"] = "auto",
                    units: str | UnitSystem = "oscillator", mass: float | None = None,
                    levels: int = 5, reference: str | Mapping[str, float] = "auto"
                    ) -> ResidualBounds:
    """Variance, Weinstein interval and Kato–Temple bound of the lowest levels of one basis.

    Parameters
    ----------
    [channel parameters]
    size : int
        Number of basis states N.
    length : float or "auto"
        Oscillator length b of the basis, or ``"auto"`` for the reference oscillator's.
    [units and mass]
    levels : int
        Number of levels, counted from the lowest of the channel (at most ``size``).
    reference : "auto" or mapping
        Reference oscillator, as for :func:`anharmony.solve`.

    Returns
    -------
    ResidualBounds

    Raises
    ------
    InputError
        A bad argument; the message names it.
    """
    size = integer("size", size, 1)
    levels = integer("levels", levels, 1)
    if levels > size:
        raise InputError(f"levels: {levels} levels need a basis of at least that size; "
                         f"got size={size}")
    b = length_or_auto("length", length)
    problem = make_problem(well, dimension, l, j, units, mass, levels, reference)
    return compute_bounds(problem, size, problem.reference.length if b is None else b, levels)


def combine_bounds(parts: dict[int, ResidualBounds], levels: int) -> ResidualBounds:
    """Per-level bounds picked from several bases: ``parts[k]`` holds level k's basis."""
    def pick(name: str) -> np.ndarray:
        return np.array([getattr(parts[k], name)[k] for k in range(levels)])

    first = parts[0]
    return ResidualBounds(energies=pick("energies"), sigma=pick("sigma"),
                          weinstein_lower=pick("weinstein_lower"),
                          weinstein_upper=pick("weinstein_upper"),
                          kato_temple_lower=pick("kato_temple_lower"), gap=pick("gap"),
                          exact=all(p.exact for p in parts.values()), size=first.size,
                          lengths=pick("lengths"))
