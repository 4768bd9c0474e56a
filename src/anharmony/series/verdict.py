"""Perturbation theory against exact energies: how far, and to which order, it can be trusted.

The exact energies come in as arrays (from the diagonaliser, or anywhere else), so nothing here
depends on how they were obtained.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from anharmony.errors import NumericalError

from ..errors import InputError
from .truncation import partial_sums

__all__ = ["Verdict", "lowest_order", "partial_sum_verdict", "verdict"]

COUPLING_MATCH_RTOL = 1e-12  # a requested coupling equals a grid value within this (relative)


def _values(source: Any) -> Sequence[Any]:
    """Coefficients of a :class:`~anharmony.series.Series` or of a plain sequence."""
    values = getattr(source, "analysis_values", None)
    return values() if callable(values) else list(source)


def _tolerances(energies: np.ndarray, atol: float, rtol: float) -> np.ndarray:
    for name, v in (("atol", atol), ("rtol", rtol)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
            raise InputError(f"{name} must be a finite number >= 0; got {v!r}")
    if atol == 0 and rtol == 0:
        raise InputError("give a tolerance: atol > 0 (energy units) or rtol > 0 (relative)")
    return atol + rtol * np.abs(energies)


@dataclass(frozen=True, eq=False)
class Verdict:
    """Partial sums and resummed values of a series beside exact energies.

    Attributes
    ----------
    couplings, energies : ndarray, shape (n,)
        The grid, ordered by |λ|, and the exact energies there.
    tolerance : ndarray, shape (n,)
        atol + rtol·|E| at each coupling.
    partial_sums, errors : ndarray, shape (K+1, n)
        S_k(λ) and |S_k(λ) − E(λ)|.
    within : ndarray of bool, shape (K+1, n)
        errors ≤ tolerance.
    max_coupling : ndarray, shape (K+1,)
        For each order k, the largest |λ| on the grid such that order-k perturbation theory is
        within tolerance at every grid coupling up to it (signed as on the grid); NaN where it
        already fails at the smallest.
    pade, borel_pade : ndarray or None, shape (n,)
        Padé and Borel–Padé values (NaN where undefined; :func:`~.resum.pade_sum`,
        :func:`~.borel.borel_pade`), and their errors against ``energies``.
    pade_uncertainty, borel_pade_uncertainty : ndarray or None, shape (n,)
        The uncertainties those methods claim (inf where not measured).
    pade_trusted, borel_pade_trusted : ndarray of bool or None, shape (n,)
        Whether each method's value is to be trusted by its own account (see
        :class:`~.resum.Resummed`); ``energies`` play no part in it.
    """

    couplings: np.ndarray
    energies: np.ndarray
    tolerance: np.ndarray
    partial_sums: np.ndarray
    errors: np.ndarray
    within: np.ndarray
    max_coupling: np.ndarray
    pade: np.ndarray | None
    pade_errors: np.ndarray | None
    borel_pade: np.ndarray | None
    borel_pade_errors: np.ndarray | None
    pade_uncertainty: np.ndarray | None = None
    borel_pade_uncertainty: np.ndarray | None = None
    pade_trusted: np.ndarray | None = None
    borel_pade_trusted: np.ndarray | None = None

    @property
    def orders(self) -> np.ndarray:
        """0..K."""
        return np.arange(self.partial_sums.shape[0])

    def lowest_order(self, coupling: float) -> int | None:
        """Lowest order whose partial sum is within tolerance at ``coupling`` (a grid value).

        Returns ``None`` when no order up to K is.
        """
        i = _grid_index(self.couplings, coupling)
        hits = np.flatnonzero(self.within[:, i])
        return int(hits[0]) if hits.size else None


def _grid_index(grid: np.ndarray, coupling: float) -> int:
    x = float(coupling)
    match = np.flatnonzero(np.abs(grid - x) <= COUPLING_MATCH_RTOL * max(1.0, abs(x)))
    if not match.size:
        raise InputError(
            f"coupling {coupling!r} is not on the grid; the exact energy is known only at "
            f"{np.array2string(np.sort(grid), precision=6, threshold=8)}"
        )
    return int(match[0])


def verdict(
    source: Any,
    couplings: Sequence[float],
    energies: Sequence[float],
    *,
    atol: float = 0.0,
    rtol: float = 0.0,
    pade_orders: tuple[int, int] | None = None,
    borel: bool = True,
) -> Verdict:
    """Compare a series with exact energies on a coupling grid.

    Parameters
    ----------
    source
        A :class:`~anharmony.series.Series` or the coefficients E_0..E_K (same energy unit
        as ``energies``).
    couplings
        λ values (any order; they are sorted by |λ|).
    energies
        Exact energies E(λ) of the same level at those couplings.
    atol, rtol
        Tolerance atol + rtol·|E|; at least one must be positive.
    pade_orders
        (L, M) of the top Padé approximant; default the near-diagonal L = K − ⌊K/2⌋,
        M = ⌊K/2⌋ (in λ² when the odd orders vanish).
    borel
        Also compute Borel–Padé values.

    Returns
    -------
    Verdict
    """
    from .borel import borel_pade  # imported here: `show` needs only partial_sum_verdict
    from .resum import pade_sum

    values = _values(source)
    lam = np.asarray(couplings, dtype=float)
    e = np.asarray(energies, dtype=float)
    if lam.ndim != 1 or e.shape != lam.shape:
        raise InputError(
            f"couplings and energies must be 1D arrays of the same length; got shapes "
            f"{lam.shape} and {e.shape}"
        )
    if lam.size == 0:
        raise InputError("couplings must hold at least one value; got an empty grid")
    order = np.argsort(np.abs(lam), kind="stable")
    lam, e = lam[order], e[order]
    tol = _tolerances(e, atol, rtol)
    sums = partial_sums(values, lam)
    with np.errstate(invalid="ignore"):
        errors = np.abs(sums - e[None, :])
    within = errors <= tol[None, :]
    max_coupling = np.full(sums.shape[0], math.nan)
    for k in range(sums.shape[0]):
        fails = np.flatnonzero(~within[k])
        last = lam.size - 1 if not fails.size else fails[0] - 1
        if last >= 0:
            max_coupling[k] = lam[last]
    big_k = len(values) - 1
    pade_vals = pade_err = bp_vals = bp_err = None
    pade_unc = bp_unc = pade_ok = bp_ok = None
    if big_k >= 1:
        L, M = pade_orders if pade_orders is not None else (None, None)
        try:
            res = pade_sum(values, lam, L, M)
            pade_vals, pade_unc, pade_ok = res.value, res.uncertainty, res.trusted
        except NumericalError:
            pade_vals, pade_unc = np.full(lam.shape, math.nan), np.full(lam.shape, math.inf)
            pade_ok = np.zeros(lam.shape, dtype=bool)
        pade_err = np.abs(pade_vals - e)
        if borel:
            try:
                res = borel_pade(values, lam)
                bp_vals, bp_unc, bp_ok = res.value, res.uncertainty, res.trusted
            except NumericalError:
                bp_vals, bp_unc = np.full(lam.shape, math.nan), np.full(lam.shape, math.inf)
                bp_ok = np.zeros(lam.shape, dtype=bool)
            bp_err = np.abs(bp_vals - e)
    return Verdict(
        couplings=lam, energies=e, tolerance=tol, partial_sums=sums, errors=errors,
        within=within, max_coupling=max_coupling, pade=pade_vals, pade_errors=pade_err,
        borel_pade=bp_vals, borel_pade_errors=bp_err, pade_uncertainty=pade_unc,
        borel_pade_uncertainty=bp_unc, pade_trusted=pade_ok, borel_pade_trusted=bp_ok,
    )


def lowest_order(
    source: Any, coupling: float, energy: float, *, atol: float = 0.0, rtol: float = 0.0
) -> int | None:
    """Lowest order k with |S_k(λ) − E| ≤ atol + rtol·|E| at one coupling, or ``None``."""
    values = _values(source)
    tol = float(_tolerances(np.array([float(energy)]), atol, rtol)[0])
    sums = partial_sums(values, float(coupling))
    hits = np.flatnonzero(np.abs(sums - float(energy)) <= tol)
    return int(hits[0]) if hits.size else None


def partial_sum_verdict(differences: Sequence[float], allowed: float) -> str:
    """One line on the partial sums S_0..S_K against the exact level, and what it rests on.

    Parameters
    ----------
    differences
        |S_k − E| for k = 0..K (NaN or inf where a sum is not finite).
    allowed
        The tolerance the level is held to.

    Returns
    -------
    str
        ``"order k within X (K orders)"`` for the lowest order within ``allowed``; else, from
        where the best partial sum lies: at the last order (``"still improving at order K,
        the last computed"`` — more orders may well do better, nothing says the series
        fails), inside (``"asymptotic: best order k of K"`` — the terms turn round), or at
        order 0 (``"poor: no order improves on E_0"``), each with how far off it is.
    """
    d = np.asarray(differences, dtype=float)
    d = np.where(np.isfinite(d), d, np.inf)
    big_k = d.size - 1
    ok = np.flatnonzero(d <= allowed)
    if ok.size:
        return f"order {int(ok[0])} within {allowed:.1g} ({big_k} orders)"
    best = int(np.argmin(d))
    off = f"off by {d[best]:.2g}"
    if best == big_k and big_k > 0:
        return f"still improving at order {big_k}, the last computed: {off}; more orders needed"
    if best > 0:
        return f"asymptotic: best order {best} of {big_k}, {off}"
    return f"poor: no order up to {big_k} improves on E_0, {off}"
