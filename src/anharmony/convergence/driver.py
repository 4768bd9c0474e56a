"""Convergence of the levels of one channel: scans, extrapolation, bounds and tolerance runs.

:func:`converge` is the front end. It scans basis sizes × oscillator lengths, extrapolates each
level to the infinite basis by every model that applies (:mod:`.extrapolate`), computes the
residual bounds of the best basis (:mod:`.bounds`), optionally cross-checks with a solver of
another family (:mod:`.mesh`), and — given a tolerance — grows the basis (re-centring the
length grid on the new optimum each time) until every bound level's error estimate is below
it or the size limit is reached.

How ``error_estimate`` is chosen, per level (the reason is stored in the report):

1. Each model is fitted at every length of the grid; per model the valid fit with the smallest
   uncertainty is kept. A fit whose E∞ lies above the level's lowest Ritz value by more than its
   uncertainty contradicts the variational principle and is dropped.
2. The *used* extrapolation is the kept fit with the smallest uncertainty; its uncertainty is
   raised to the disagreement of the other valid models with it, each less its own
   uncertainty (max |E∞,i − E∞| − u_i), when that is larger, and its estimate of the Ritz
   error is (E_Ritz − E∞) + uncertainty.
3. Where the Kato–Temple bound applies (gap assumption met), the Ritz error is at most
   E_Ritz − E_KT. If that is smaller, it is used instead (``kato_temple``).
4. For a level below a finite threshold, an extrapolation-based estimate is never below the
   infrared tail at the level's best length, E_Ritz − E∞ from the last two sizes with
   k = 2κ∞ fixed by the binding energy (:func:`.extrapolate.infrared_tail`); where the
   ultraviolet error dominates this floor is smaller and changes nothing.
5. No estimate is below the rounding scale eps·||H||₁ of the eigenvalue.
6. Without any model or bound, the change of the level over the last size step is used
   (``difference``, a rough estimate), or inf with a single size (``none``).

``converged`` is error_estimate < tolerance for bound levels; levels above the threshold are
discretised-continuum states and are never converged.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from .._checks import flag, integer
from ..errors import ConvergenceWarning, InputError, NumericalError
from ..units import UnitSystem
from ..well import Well
from ._problem import Problem, make_problem, shared_docs, with_covering_centre
from .bounds import (
    KT_ASSUMPTION,
    UPPER_BOUND_NOTE,
    ResidualBounds,
    combine_bounds,
    compute_bounds,
)
from .extrapolate import (
    Extrapolation,
    extrapolate_exponential,
    extrapolate_infrared,
    extrapolate_infrared_binding,
    extrapolate_power,
    infrared_tail,
)
from .mesh import CrossCheck, run_cross_check
from .report import METHODS, MODELS, ConvergenceReport
from .scans import BasisScan, auto_scan, resolve_lengths, run_scan
from .settings import (
    DEFAULT_FIXED_TOP,  # noqa: F401  (re-exported)
    DEFAULT_MAX_SIZE,
    ESTIMATES,  # noqa: F401  (re-exported)
    IR_LENGTHS,  # noqa: F401  (re-exported)
    LADDER_RATIO,  # noqa: F401  (re-exported)
    ConvergenceSettings,
    _ladder,
    size_ladder,
)

__all__ = [
    "DEFAULT_MAX_SIZE",
    "DEFAULT_RTOL",
    "METHODS",
    "MODELS",
    "ConvergenceReport",
    "ConvergenceSettings",
    "converge",
    "size_ladder",
]

DEFAULT_RTOL = 1e-8  # without a tolerance, "converged" means error < DEFAULT_RTOL · ħω_ref
# A tolerance-driven run stops growing after this many successive sizes with no bound level:
# Ritz values only fall as the basis grows, so a level can still become bound, but a basis
# growing by 2x (three √2 steps) without binding any is taken to show a channel with none.
NO_BOUND_STEPS = 3


def _as_tuple(values: Any) -> Any:
    """Lists as tuples (the settings are frozen); anything else as given, for the checks."""
    return tuple(values) if isinstance(values, (list, tuple, np.ndarray)) else values


# --------------------------------------------------------------------------- analysis
@dataclass(frozen=True)
class _LevelEstimate:
    extrapolated: float
    uncertainty: float
    error: float
    method: str
    reason: str
    fits: dict[str, Extrapolation]
    spread: float


def _fits(scan: BasisScan, level: int, ir_length: str) -> dict[str, Extrapolation]:
    """Per model, the valid fit with the smallest uncertainty over the grid lengths."""
    best_ritz = float(scan.best_energies()[level])
    out: dict[str, Extrapolation] = {}
    xs = scan.ir_lengths if ir_length == "eigenvalue" else scan.closed_form_lengths
    for method in METHODS:
        cands = []
        for jb, b in enumerate(scan.lengths):
            e = scan.energies[level, :, jb]
            ok = np.isfinite(e)
            if ok.sum() < 3:
                continue
            sizes, vals = scan.sizes[ok], e[ok]
            noise = float(scan.noise[ok, jb][-1])
            if method == "exponential":
                fit = extrapolate_exponential(sizes, vals, noise, float(b))
            elif method == "power":
                fit = extrapolate_power(sizes, vals, noise, float(b))
            elif method == "infrared":
                fit = extrapolate_infrared(xs[ok, jb], vals, scan.threshold, scan.hbar2_2m,
                                           noise, float(b), sizes)
            else:
                fit = extrapolate_infrared_binding(xs[ok, jb], vals, scan.threshold,
                                                   scan.hbar2_2m, noise, float(b), sizes)
            if fit.valid and fit.value > best_ritz + fit.uncertainty:
                fit = Extrapolation(fit.method, math.nan, math.inf, False, fit.rate,
                                    fit.quality, fit.length, fit.sizes,
                                    f"E-infinity {fit.value:.10g} lies above the variational "
                                    f"bound {best_ritz:.10g}", fit.consistency)
            cands.append(fit)
        if not cands:
            out[method] = Extrapolation(method, math.nan, math.inf, False,
                                        note="fewer than three sizes at every length")
            continue
        valid = [c for c in cands if c.valid]
        if valid:
            out[method] = min(valid, key=lambda c: c.uncertainty)
        else:  # keep the fit at the best length, to say why it failed
            jb = scan.best_length_index(level)
            out[method] = next((c for c in cands if c.length == float(scan.lengths[jb])),
                               cands[-1])
    return out


def _estimate(problem: Problem, scan: BasisScan, level: int, ir_length: str,
              bounds: ResidualBounds | None) -> _LevelEstimate:
    fits = _fits(scan, level, ir_length)
    ritz = float(scan.best_energies()[level])
    valid = {m: f for m, f in fits.items() if f.valid}
    values = [f.value for f in valid.values()]
    spread = float(max(values) - min(values)) if len(values) > 1 else math.nan
    cand: list[tuple[float, str, str, float, float]] = []
    if valid:
        m, f = min(valid.items(), key=lambda mf: mf[1].uncertainty)
        others = ", ".join(x for x in valid if x != m) or "none"
        why = (f"{m} extrapolation at b = {f.length:.4g} over sizes "
               f"{list(f.sizes[-3:])}: smallest uncertainty of the valid models "
               f"(others valid: {others})")
        if m == "infrared":
            why += f"; fitted decay {f.consistency:.3f} x 2 kappa_inf"
        elif m == "exponential" and not problem.smooth:
            why += "; note: the well is not analytic in the basis variable"
        unc = f.uncertainty
        # another valid model contradicts this one only by the part of their difference its
        # own uncertainty does not cover: a fit of uncertainty 175 that differs by 15 (say, at
        # a length whose rounding scale is 130) says nothing against one of ± 5e-4
        conflict = max((abs(g.value - f.value) - g.uncertainty for x, g in valid.items()
                        if x != m), default=0.0)
        if conflict > unc:
            unc = conflict
            why += ("; uncertainty raised to the disagreement of the valid models beyond their "
                    "own uncertainties")
        cand.append((max(ritz - f.value, 0.0) + unc, m, why, f.value, unc))
    if bounds is not None:
        width = float(bounds.kato_temple_width[level])
        if math.isfinite(width) and width >= 0:
            cand.append((width, "kato_temple",
                         f"Kato-Temple bound sigma^2/(beta - E) with sigma = "
                         f"{bounds.sigma[level]:.3g}, gap estimate beta = {bounds.gap[level]:.6g}"
                         f" (assumes the next exact level lies above beta)", math.nan, math.nan))
    noise = float(scan.noise[-1, scan.best_length_index(level)])
    tail = _ir_tail(scan, level, ir_length)
    if cand:
        err, m, why, e_inf, unc = min(cand, key=lambda c: c[0])
        if m == "kato_temple" and len(cand) > 1:
            e_inf, unc = cand[0][3], cand[0][4]
            why += "; tighter than the extrapolations"
        if err < tail and m != "kato_temple":
            err = tail
            if math.isfinite(e_inf):  # let E∞ ± u cover the value the tail implies, too
                unc = max(unc, abs(e_inf - (ritz - tail)))
            why += (f"; raised to the infrared tail {tail:.2e} (two-point estimate with "
                    "k = 2 kappa_inf at the best length)")
        if err < noise:
            err = noise
            why += f"; raised to the rounding scale eps*||H|| = {noise:.2e}"
        return _LevelEstimate(e_inf, unc, err, m, why, fits, spread)
    # fallback: change over the last size step at the best lengths
    if scan.sizes.size >= 2:
        prev = float(scan.best_energies(int(scan.sizes[-2]))[level])
        if math.isfinite(prev):
            err = max(abs(prev - ritz), noise)
            return _LevelEstimate(math.nan, math.inf, err, "difference",
                                  "no model applied: change of the level over the last size "
                                  f"step ({scan.sizes[-2]} -> {scan.sizes[-1]}), a rough "
                                  "estimate", fits, spread)
    return _LevelEstimate(math.nan, math.inf, math.inf, "none",
                          "a single size and no bound: nothing to estimate from", fits, spread)


def _ir_tail(scan: BasisScan, level: int, ir_length: str) -> float:
    """Infrared tail E_Ritz − E∞ at the level's best length, k fixed by its binding energy.

    A floor of the error estimate: where the infrared error dominates it is the error; where
    ultraviolet errors dominate it underestimates them and changes nothing.
    """
    if not math.isfinite(scan.threshold):
        return 0.0
    jb = scan.best_length_index(level)
    e = scan.energies[level, :, jb]
    ok = np.isfinite(e)
    if ok.sum() < 2:
        return 0.0
    xs = (scan.ir_lengths if ir_length == "eigenvalue" else scan.closed_form_lengths)[ok, jb]
    e = e[ok]
    if not e[-1] < scan.threshold or not e[-2] > e[-1]:
        return 0.0
    e_inf, _ = infrared_tail(xs[-2], xs[-1], e[-2], e[-1], scan.threshold, scan.hbar2_2m)
    return float(e[-1] - e_inf) if math.isfinite(e_inf) else 0.0


def _level_bounds(problem: Problem, scan: BasisScan, nlev: int, levels: int) -> ResidualBounds:
    """Bounds of each level at its best grid length (one computation per distinct length)."""
    n = int(scan.sizes[-1])
    by_length: dict[int, ResidualBounds] = {}
    parts: dict[int, ResidualBounds] = {}
    for k in range(levels):
        jb = scan.best_length_index(k)
        if jb not in by_length:
            by_length[jb] = compute_bounds(problem, n, float(scan.lengths[jb]), min(nlev, n))
        parts[k] = by_length[jb]
    return combine_bounds(parts, levels)



@shared_docs
def converge(well: Well, dimension: int = 3, l: int | None = 0, j: float | str | None = None,
             *, sizes: Sequence[int] | None = None,
             lengths: Sequence[float] | Literal["auto"] | None = "auto",
             frequencies: Sequence[float] | None = None,
             units: str | UnitSystem = "oscillator", mass: float | None = None,
             levels: int = 5, reference: str | Mapping[str, float] = "auto",
             tolerance: float | None = None, grow: bool | None = None,
             max_size: int | None = None, cross_check: bool = False, bounds: bool = True,
             ir_length: Literal["eigenvalue", "closed_form"] = "eigenvalue",
             warn: bool = True) -> ConvergenceReport:
    """Convergence study of the lowest levels of one channel.

    Parameters
    ----------
    [channel parameters]
    sizes : sequence of int, optional
        Basis sizes. Default: 10, 14, 20, 28, … (ratio √2) up to 80, or up to ``max_size``
        with a tolerance.
    lengths : sequence of float, "auto" or None
        ``"auto"`` (default; also ``None``): at each size step a grid b_opt · 2^{k/4},
        k = −3 … 3, centred on the previous optimum for the bound levels together (the
        reference length at first) and extended until each level's optimum is inside; or a
        list of lengths (a fixed grid).
    frequencies : sequence of float, optional
        ħω values instead of ``lengths``.
    [units and mass]
    levels : int
        Number of levels, from the lowest of the channel.
    reference : "auto" or mapping
        Reference oscillator, as for :func:`anharmony.solve`.
    tolerance : float, optional
        Target of the error estimate, in the unit system's energy unit. With a tolerance the
        sizes are tried in order and the run stops at the first size (from the second on)
        where every bound level's error estimate is below it; ``converged`` compares with it.
        Only bound levels drive the growth: levels above the threshold are
        discretised-continuum states, reported as unbound (never converged), and a channel
        with no bound level at NO_BOUND_STEPS successive sizes stops growing.
    grow : bool, optional
        Whether a tolerance drives the size (default True when a tolerance is given); with
        ``grow=False`` every size is scanned and the tolerance only sets ``converged``.
        Without one every size is used and ``converged`` means error < DEFAULT_RTOL · ħω_ref.
    max_size : int, optional
        Size limit of the run: sizes beyond the given ones continue the √2 ladder up to it.
    cross_check : bool
        Also run the cross-check solver of another family (:func:`cross_check`).
    bounds : bool
        Compute the residual bounds (needed for the Kato–Temple estimate).
    ir_length : {"eigenvalue", "closed_form"}
        Which infrared length the fits use.
    warn : bool
        Issue a :class:`~anharmony.ConvergenceWarning` per level that is not converged (the
        texts are also in :attr:`ConvergenceReport.messages`).

    Returns
    -------
    ConvergenceReport

    Raises
    ------
    InputError
        A bad argument; the message names it.
    """
    levels = integer("levels", levels, 1)
    flag("warn", warn)
    s = ConvergenceSettings(sizes=_as_tuple(sizes), lengths=_as_tuple(lengths),
                            frequencies=_as_tuple(frequencies), tolerance=tolerance, grow=grow,
                            max_size=max_size, cross_check=cross_check, bounds=bounds,
                            ir_length=ir_length)
    tolerance, max_size, sizes_t = s.tolerance, s.max_size, s.sizes
    grow = s.tolerance is not None if s.grow is None else s.grow
    if grow and tolerance is None:
        raise InputError("grow: growing the basis needs a tolerance")
    problem = base = make_problem(well, dimension, l, j, units, mass, levels, reference)
    explicit = resolve_lengths(problem, lengths, frequencies)
    ladder, limit = _ladder(sizes_t, max_size, tolerance if grow else None, levels)
    if ladder[-1] < levels:
        raise InputError(f"sizes: {levels} levels need a basis of at least that size; "
                         f"the largest size is {ladder[-1]}")
    tol = tolerance if tolerance is not None else DEFAULT_RTOL * problem.reference.frequency
    nlev = levels + 1  # one more level: the gap estimate of the highest requested one
    center = problem.reference.length
    history: list[tuple[int, tuple[float, ...]]] = []
    stopped = ""
    scan = bnd = None
    est: list[_LevelEstimate] = []
    first = 0 if grow else len(ladder) - 1
    unbound_run = 0  # successive sizes at which no requested level was bound
    for k in range(first, len(ladder)):
        now = ladder[: k + 1]
        if now[-1] < levels:
            continue
        # the line without symmetry: the basis centre that this step's largest basis affords
        problem = with_covering_centre(base, levels, tol, int(now[-1]))
        if explicit is None:
            scan = auto_scan(problem, now, nlev, center)
        else:
            scan = run_scan(problem, now, explicit, nlev)
        ritz = scan.best_energies()[:levels]
        bound = ritz < problem.threshold
        count = int(np.count_nonzero(bound)) or levels
        center = scan.optimal_length(None, count=count)
        bnd = _level_bounds(problem, scan, nlev, levels) if bounds else None
        est = [_estimate(problem, scan, i, ir_length, bnd) for i in range(levels)]
        errs = np.array([e.error for e in est])
        history.append((int(now[-1]), tuple(float(x) for x in errs)))
        unbound_run = unbound_run + 1 if not bound.any() else 0
        # grow for bound levels only: continuum states of a finite basis never converge
        if grow and len(history) >= 2 and bound.any() and np.all(errs[bound] < tol):
            stopped = f"converged at size {now[-1]} (tolerance {tol:.3g})"
            break
        if grow and unbound_run >= NO_BOUND_STEPS:
            stopped = (f"no bound level at sizes {[h[0] for h in history[-unbound_run:]]}: "
                       "every requested level lies above the threshold (discretised "
                       "continuum), so the basis does not grow")
            break
    else:
        stopped = (f"size limit {ladder[-1]} reached" if grow
                   else f"fixed sizes up to {ladder[-1]}")
    assert scan is not None  # the ladder always has a size >= levels
    ritz = scan.best_energies()[:levels]
    bound = ritz < problem.threshold
    errs = np.array([e.error for e in est])
    converged = bound & (errs < tol)
    best_idx = [scan.best_length_index(i) for i in range(levels)]
    opt = np.array([scan.optimal_length(i) for i in range(levels)])
    count = int(np.count_nonzero(bound)) or levels
    xcheck = None
    if cross_check:
        try:
            xcheck = run_cross_check(problem, levels, np.where(np.isfinite(ritz), ritz,
                                                               problem.reference.v_min))
        except (ValueError, NumericalError) as exc:  # e.g. a well unbounded on one side
            xcheck = CrossCheck(method="none", energies=np.full(levels, np.nan),
                                uncertainty=np.full(levels, np.inf),
                                bound=np.zeros(levels, dtype=bool), converged=False, points=0,
                                scale=math.nan, extent=(math.nan, math.nan),
                                note=f"cross-check not possible: {exc}")
    messages = _messages(problem, scan, ritz, bound, errs, converged, tol, tolerance, grow,
                         stopped, limit)
    if warn:
        for msg in messages:
            warnings.warn(msg, ConvergenceWarning, stacklevel=2)
    notes = (UPPER_BOUND_NOTE,) + ((KT_ASSUMPTION,) if bounds else ())
    return ConvergenceReport(
        channel=problem.channel, levels=levels, energies=ritz,
        best_lengths=scan.lengths[best_idx], optimal_lengths=opt,
        joint_length=scan.optimal_length(None, count=count), size=int(scan.sizes[-1]),
        bound=bound, extrapolated=np.array([e.extrapolated for e in est]),
        uncertainty=np.array([e.uncertainty for e in est]), error_estimate=errs,
        converged=converged, method=tuple(e.method for e in est),
        reason=tuple(e.reason for e in est), extrapolations=tuple(e.fits for e in est),
        spread=np.array([e.spread for e in est]), scan=scan, bounds=bnd, cross_check=xcheck,
        tolerance=float(tol), tolerance_driven=grow, size_limit=int(limit),
        stopped=stopped, threshold=problem.threshold, units=problem.units,
        reference=problem.reference, history=tuple(history), messages=tuple(messages),
        notes=notes, center_reason=problem.center_reason)


def _messages(problem: Problem, scan: BasisScan, ritz: np.ndarray, bound: np.ndarray,
              errs: np.ndarray, converged: np.ndarray, tol: float, tolerance: float | None,
              grow: bool, stopped: str, limit: int) -> list[str]:
    out = []
    u = problem.units.energy
    ch = problem.channel
    n = int(scan.sizes[-1])
    for k in range(ritz.size):
        if converged[k]:
            continue
        lab = f"level {ch.level_label(k)} (index {k}) of channel {ch.label}"
        if not bound[k]:
            out.append(f"{lab} lies at {ritz[k]:.6g} {u}, above the threshold "
                       f"{problem.threshold:.6g} {u}, at size {n}: a discretised-continuum "
                       "state, not a bound level; request fewer levels (levels.count), or a "
                       "larger convergence.max_size if it should be bound")
        elif tolerance is None:
            out.append(f"{lab}: error estimate {errs[k]:.2e} {u} exceeds the default "
                       f"{tol:.2e} {u} at size {n}; give convergence.tolerance, or more or "
                       "larger convergence.sizes")
        elif grow:
            out.append(f"{lab}: error estimate {errs[k]:.2e} {u} exceeds the tolerance "
                       f"{tol:.2e} {u} ({stopped}); raise convergence.max_size (now {limit}) "
                       "or relax convergence.tolerance")
        else:
            out.append(f"{lab}: error estimate {errs[k]:.2e} {u} exceeds the tolerance "
                       f"{tol:.2e} {u} at size {n}; add larger convergence.sizes, or let the "
                       "basis grow (convergence.grow: true)")
    return out
