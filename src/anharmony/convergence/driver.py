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
   raised to the spread of the valid models when that is larger, and its estimate of the Ritz
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
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from .._checks import choice, flag, integer, integers, known_keys, positive, positives
from ..errors import ConvergenceWarning, InputError, NumericalError
from ..hamiltonian import Channel
from ..reference import Reference
from ..units import UnitSystem
from ..well import Well
from ._problem import Problem, make_problem, shared_docs
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
from .scans import GRID_HALF_WIDTH, MAX_LENGTHS, BasisScan, auto_scan, resolve_lengths, run_scan

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

METHODS = ("exponential", "power", "infrared", "infrared_binding")
MODELS = METHODS  # the ``model`` axis of :meth:`ConvergenceReport.variables`
DEFAULT_MAX_SIZE = 320  # size limit of tolerance-driven runs without an explicit limit
DEFAULT_FIXED_TOP = 80  # largest size of a scan without tolerance or sizes
DEFAULT_RTOL = 1e-8  # without a tolerance, "converged" means error < DEFAULT_RTOL · ħω_ref
LADDER_RATIO = math.sqrt(2.0)  # successive sizes of the default ladder
# A tolerance-driven run stops growing after this many successive sizes with no bound level:
# Ritz values only fall as the basis grows, so a level can still become bound, but a basis
# growing by 2x (three √2 steps) without binding any is taken to show a channel with none.
NO_BOUND_STEPS = 3
IR_LENGTHS = ("eigenvalue", "closed_form")


def size_ladder(start: int, stop: int, ratio: float = LADDER_RATIO) -> tuple[int, ...]:
    """Sizes start, start·ratio, … (rounded, distinct) up to and including ``stop``."""
    out = []
    x = float(start)
    while round(x) < stop:
        if not out or round(x) > out[-1]:
            out.append(round(x))
        x *= ratio
    out.append(int(stop))
    return tuple(out)


# --------------------------------------------------------------------------- settings
_KEYS = ("sizes", "lengths", "frequencies", "tolerance", "grow", "max_size", "cross_check",
         "bounds", "ir_length", "estimate")
ESTIMATES = ("extrapolate", "smaller_basis", "none")


@dataclass(frozen=True)
class ConvergenceSettings:
    """The ``convergence:`` block of a case, validated.

    Attributes
    ----------
    sizes : tuple of int or None
        Basis sizes; None: the default ladder 10, 14, 20, 28, 40, … (ratio √2).
    lengths : tuple of float or None
        Oscillator lengths; None means ``auto`` (a grid re-centred on the optimum).
    frequencies : tuple of float or None
        ħω values instead of lengths.
    tolerance : float or None
        Target of the error estimate; with it the basis grows until every bound level meets it.
    grow : bool or None
        Grow the basis towards the tolerance (default: whenever a tolerance is given); False
        scans every size and only flags ``converged``.
    max_size : int or None
        Size limit of a tolerance-driven run (default: the largest of ``sizes``, or 320).
    cross_check : bool
        Also run the cross-check solver of another family.
    bounds : bool
        Compute the residual bounds (variance, Weinstein, Kato–Temple).
    ir_length : str
        ``"eigenvalue"`` (Wendt et al. 2015) or ``"closed_form"`` (L₂ of More et al. 2013).
    estimate : str
        How a runner fills ``error_estimate``: ``"extrapolate"`` (this module's
        :func:`converge`), ``"smaller_basis"`` (the change from a smaller basis, computed by the
        runner) or ``"none"``. Not used by :func:`converge` itself.
    """

    sizes: tuple[int, ...] | None = None
    lengths: tuple[float, ...] | None = None
    frequencies: tuple[float, ...] | None = None
    tolerance: float | None = None
    grow: bool | None = None
    max_size: int | None = None
    cross_check: bool = False
    bounds: bool = True
    ir_length: str = "eigenvalue"
    estimate: str = "extrapolate"

    def __post_init__(self) -> None:
        # the study's own argument checks (case files are checked by their schema first)
        fix = object.__setattr__
        if self.sizes is not None:
            fix(self, "sizes", integers("sizes", self.sizes, 1, what="basis sizes",
                                        noun="sizes"))
        if isinstance(self.lengths, str) and self.lengths == "auto":
            fix(self, "lengths", None)
        if self.lengths is not None:
            fix(self, "lengths", positives("lengths", self.lengths, noun="lengths",
                                           what="oscillator lengths (or 'auto')"))
        if self.frequencies is not None:
            if self.lengths is not None:
                raise InputError("frequencies: give lengths or frequencies, not both")
            fix(self, "frequencies", positives("frequencies", self.frequencies,
                                               noun="frequencies", what="hbar*omega values"))
        if self.tolerance is not None:
            fix(self, "tolerance", positive("tolerance", self.tolerance))
        if self.grow is not None:
            flag("grow", self.grow)
        if self.max_size is not None:
            fix(self, "max_size", integer("max_size", self.max_size, 2))
        flag("cross_check", self.cross_check)
        flag("bounds", self.bounds)
        choice("ir_length", self.ir_length, IR_LENGTHS)
        choice("estimate", self.estimate, ESTIMATES)

    @classmethod
    def from_mapping(cls, block: Mapping[str, Any] | None, path: str = "convergence"
                     ) -> ConvergenceSettings:
        """Settings from a mapping of the keys above; errors name ``path.key``.

        A convenience for Python users: case files are validated by their schema
        (:class:`anharmony.cases.Convergence`), which builds the settings directly.
        """
        if block is None:
            return cls()
        known_keys(path, block, _KEYS)
        given = {k: v for k, v in block.items() if not (k == "grow" and v is None)}
        try:
            return cls(**given)
        except InputError as exc:
            raise InputError(f"{path}.{exc}") from None

    def size_axis(self, levels: int) -> tuple[int, ...]:
        """Every basis size a run with these settings can use (the ``basis_size`` axis)."""
        grow = self.grow if self.grow is not None else self.tolerance is not None
        return _ladder(self.sizes, self.max_size, self.tolerance if grow else None,
                       integer("levels", levels, 1))[0]

    def length_slots(self) -> int:
        """Most lengths a run can hold (the ``basis_length`` axis of the result file)."""
        if self.lengths is not None:
            return len(self.lengths)
        if self.frequencies is not None:
            return len(self.frequencies)
        return MAX_LENGTHS

    def work(self, levels: int, lengths: int | None = None
             ) -> tuple[tuple[int, int, int], ...]:
        """The work of one :func:`converge` run: ``(size, diagonalisations, builds)`` per size.

        A growing run rescans every size so far at each step (one Hamiltonian per length at
        the step's largest size); the count is that of a run that reaches its size limit, an
        upper bound. ``lengths`` is the number of lengths per step (default: the given grid,
        or the automatic grid of 2·GRID_HALF_WIDTH + 1 lengths, which may widen to
        MAX_LENGTHS).
        """
        grow = self.grow if self.grow is not None else self.tolerance is not None
        axis = [n for n in self.size_axis(levels) if n >= levels]
        nl = lengths if lengths is not None else (
            len(self.lengths) if self.lengths is not None else
            len(self.frequencies) if self.frequencies is not None else 2 * GRID_HALF_WIDTH + 1)
        solves = dict.fromkeys(axis, 0)
        builds = dict.fromkeys(axis, 0)
        for k in range(len(axis)) if grow else [len(axis) - 1]:
            for n in axis[: k + 1]:
                solves[n] += nl
            extra = 1 if self.bounds else 0  # the residual bounds: one more at the step's size
            solves[axis[k]] += extra
            builds[axis[k]] += nl + extra
        return tuple((n, solves[n], builds[n]) for n in axis if solves[n])

    def keywords(self) -> dict[str, Any]:
        """Keyword arguments of :func:`converge`."""
        return {"sizes": self.sizes, "lengths": self.lengths or "auto",
                "frequencies": self.frequencies, "tolerance": self.tolerance,
                "grow": self.grow, "max_size": self.max_size, "cross_check": self.cross_check,
                "bounds": self.bounds, "ir_length": self.ir_length}


def _as_tuple(values: Any) -> Any:
    """Lists as tuples (the settings are frozen); anything else as given, for the checks."""
    return tuple(values) if isinstance(values, (list, tuple, np.ndarray)) else values


# --------------------------------------------------------------------------- report
@dataclass(frozen=True)
class ConvergenceReport:
    """Convergence of the lowest levels of one channel.

    Attributes
    ----------
    channel : Channel
    levels : int
    energies : ndarray, shape (levels,)
        Lowest Ritz value of each level at the final size (over the length grid); each an
        upper bound on its exact level.
    best_lengths : ndarray, shape (levels,)
        Grid length giving each level's Ritz value.
    optimal_lengths : ndarray, shape (levels,)
        Each level's optimal length at the final size (parabola-refined).
    joint_length : float
        Length minimising the sum of the bound levels at the final size.
    size : int
        Final (largest) basis size.
    bound : ndarray of bool
        Below the threshold.
    extrapolated, uncertainty : ndarray
        E∞ of the used extrapolation and its uncertainty (NaN/inf when none applied).
    error_estimate : ndarray
        Estimated |E − E_exact| of :attr:`energies`.
    converged : ndarray of bool
        error_estimate < tolerance, bound levels only.
    method : tuple of str
        What error_estimate uses per level: ``exponential``, ``power``, ``infrared``,
        ``kato_temple``, ``difference`` or ``none``.
    reason : tuple of str
        Why, per level.
    extrapolations : tuple of dict
        Per level, the kept fit of every model (valid or not), by method name.
    spread : ndarray
        Largest difference between the E∞ of the valid models (NaN with fewer than two).
    scan : BasisScan
        The final scan: energy(level, size, length) (:attr:`scan_energies`).
    bounds : ResidualBounds or None
        Variance-based bounds of each level at its best basis.
    cross_check : CrossCheck or None
    tolerance : float
        The tolerance used for ``converged`` (the default DEFAULT_RTOL · ħω_ref without one).
    tolerance_driven : bool
    size_limit : int
    stopped : str
        Why the basis stopped growing.
    history : tuple
        (size, error_estimate per level) after each size step.
    messages : tuple of str
        The texts of the warnings about non-converged levels.
    notes : tuple of str
        Statements that go with the numbers (upper bounds, Kato–Temple assumption).
    """

    channel: Channel
    levels: int
    energies: np.ndarray
    best_lengths: np.ndarray
    optimal_lengths: np.ndarray
    joint_length: float
    size: int
    bound: np.ndarray
    extrapolated: np.ndarray
    uncertainty: np.ndarray
    error_estimate: np.ndarray
    converged: np.ndarray
    method: tuple[str, ...]
    reason: tuple[str, ...]
    extrapolations: tuple[dict[str, Extrapolation], ...]
    spread: np.ndarray
    scan: BasisScan
    bounds: ResidualBounds | None
    cross_check: CrossCheck | None
    tolerance: float
    tolerance_driven: bool
    size_limit: int
    stopped: str
    threshold: float
    units: UnitSystem
    reference: Reference
    history: tuple[tuple[int, tuple[float, ...]], ...] = ()
    messages: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())

    @property
    def sizes(self) -> np.ndarray:
        return self.scan.sizes

    @property
    def lengths(self) -> np.ndarray:
        return self.scan.lengths

    @property
    def scan_energies(self) -> np.ndarray:
        """energy(level, size, length) of the final scan, shape (levels, S, B)."""
        return self.scan.energies[: self.levels]

    @property
    def cross_check_difference(self) -> np.ndarray:
        """:attr:`energies` − cross-check levels (NaN without a cross-check)."""
        if self.cross_check is None:
            return np.full(self.levels, np.nan)
        return self.cross_check.difference(self.energies)

    def error_of(self, energies: Sequence[float]) -> np.ndarray:
        """Error estimate of other values of the same levels: |E − energies_k| + error_k.

        Use it for the energies of another basis of the same channel (e.g. the case's
        ``basis:`` block), by the triangle inequality.
        """
        e = np.asarray(energies, dtype=float)
        k = min(e.size, self.levels)
        out = np.full(e.size, np.nan)
        out[:k] = np.abs(e[:k] - self.energies[:k]) + self.error_estimate[:k]
        return out

    def variables(self, basis_sizes: Sequence[int] | None = None,
                  length_slots: int | None = None) -> dict[str, tuple[tuple[str, ...],
                                                                   np.ndarray, dict[str, str]]]:
        """The report as result-file variables of one (scan point, channel) cell.

        Parameters
        ----------
        basis_sizes
            The ``basis_size`` axis shared by all cells (e.g. the union of every channel's
            sizes); entries this report lacks are NaN. Default: this report's sizes.
        length_slots
            Length of the ``basis_length`` axis (an index: each channel has its own grid,
            given by ``convergence_length``); default: this report's grid size.

        Returns
        -------
        dict
            ``name → (dims, values, attrs)`` with dims drawn from ``level``, ``basis_size``,
            ``basis_length`` and ``model``; ``attrs`` hold ``units`` and ``long_name``.
            Stack the cells along (scan, channel) in front of these dims.
        """
        sizes = np.asarray(self.sizes if basis_sizes is None else basis_sizes, dtype=int)
        nb = self.lengths.size if length_slots is None else int(length_slots)
        if nb < self.lengths.size:
            raise InputError(f"length_slots: {nb} is fewer than the {self.lengths.size} "
                             "lengths of this report")
        e_unit, l_unit = self.units.energy, self.units.length
        lev = self.levels
        grid = np.full((lev, sizes.size, nb), np.nan)
        irl = np.full((sizes.size, nb), np.nan)
        for i, n in enumerate(sizes):
            hit = np.flatnonzero(self.sizes == n)
            if hit.size:
                grid[:, i, : self.lengths.size] = self.scan_energies[:, hit[0], :]
                irl[i, : self.lengths.size] = self.scan.ir_lengths[hit[0], :]
        pad = np.full(nb, np.nan)
        b = pad.copy()
        b[: self.lengths.size] = self.lengths
        hw = pad.copy()
        hw[: self.lengths.size] = self.scan.frequencies
        fits = [[self.extrapolations[k].get(m) for m in METHODS] for k in range(lev)]
        model_e = np.array([[f.value if f is not None else np.nan for f in row] for row in fits])
        model_u = np.array([[f.uncertainty if f is not None else np.inf for f in row]
                            for row in fits])
        model_ok = np.array([[int(f is not None and f.valid) for f in row] for row in fits],
                            dtype=np.int8)
        bnd = self.bounds
        nan = np.full(lev, np.nan)
        xc = self.cross_check

        def e(name: str) -> dict[str, str]:
            return {"units": e_unit, "long_name": name}

        def ln(name: str) -> dict[str, str]:
            return {"units": l_unit, "long_name": name}

        return {
            "convergence_energy": (("level", "basis_size", "basis_length"), grid,
                                   e("Ritz value in the basis (size, length); an upper bound "
                                     "on the exact level")),
            "convergence_length": (("basis_length",), b, ln("oscillator length of the scan")),
            "convergence_frequency": (("basis_length",), hw,
                                      e("hbar*omega of the scan's oscillator lengths")),
            "convergence_infrared_length": (("basis_size", "basis_length"), irl,
                                            ln("infrared length L of the basis (Wendt et al. "
                                               "2015)")),
            "convergence_size": ((), np.array(self.size), {"units": "1", "long_name":
                                                          "largest basis size of the run"}),
            "optimal_length": (("level",), self.optimal_lengths,
                               ln("length minimising the level at the largest size")),
            "joint_length": ((), np.array(self.joint_length),
                             ln("length minimising the sum of the bound levels")),
            "extrapolated_energy": (("level",), self.extrapolated,
                                    e("level extrapolated to the infinite basis")),
            "extrapolation_uncertainty": (("level",), self.uncertainty,
                                          e("uncertainty of extrapolated_energy")),
            "extrapolation_spread": (("level",), self.spread,
                                     e("spread of the valid extrapolation models")),
            "model_energy": (("level", "model"), model_e, e("extrapolation of each model")),
            "model_uncertainty": (("level", "model"), model_u,
                                  e("uncertainty of each model's extrapolation")),
            "model_valid": (("level", "model"), model_ok,
                            {"units": "1", "long_name": "1 where the model applies"}),
            "error_estimate": (("level",), self.error_estimate,
                               e("estimated |E - E_exact| of the Ritz value")),
            "converged": (("level",), self.converged.astype(np.int8),
                          {"units": "1", "long_name": "1 where error_estimate < tolerance "
                                                      "for a bound level"}),
            "error_method": (("level",), np.array(self.method, dtype=str),
                             {"long_name": "what error_estimate is based on"}),
            "error_reason": (("level",), np.array(self.reason, dtype=str),
                             {"long_name": "why error_estimate uses error_method"}),
            "variance_sigma": (("level",), bnd.sigma if bnd is not None else nan,
                               e("sqrt(<H^2> - <H>^2) of the Ritz vector")),
            "weinstein_lower": (("level",), bnd.weinstein_lower if bnd is not None else nan,
                                e("E - sigma: [E - sigma, E + sigma] holds an eigenvalue")),
            "weinstein_upper": (("level",), bnd.weinstein_upper if bnd is not None else nan,
                                e("E + sigma")),
            "kato_temple_lower": (("level",), bnd.kato_temple_lower if bnd is not None else nan,
                                  {**e("Kato-Temple lower bound"),
                                   "comment": bnd.assumption if bnd is not None else ""}),
            "cross_check_energy": (("level",), xc.energies if xc is not None else nan,
                                   {**e("level from the cross-check solver"),
                                    "comment": xc.method if xc is not None else ""}),
            "cross_check_uncertainty": (("level",), xc.uncertainty if xc is not None else nan,
                                        e("change of the cross-check over its last mesh")),
            "cross_check_difference": (("level",), self.cross_check_difference,
                                       e("Ritz value minus cross-check level")),
            "convergence_stopped": ((), np.array(self.stopped),
                                    {"long_name": "why the basis stopped growing"}),
        }

    def summary(self) -> str:
        """A plain-text table of the levels (for logs; the library itself prints nothing)."""
        u = self.units.energy
        lines = [f"channel {self.channel.label}: size {self.size}, {self.stopped}"]
        for k in range(self.levels):
            lab = self.channel.level_label(k)
            lines.append(
                f"  {lab:>8} E = {self.energies[k]:.12g} {u}  error <= {self.error_estimate[k]:.2e}"
                f" ({self.method[k]})  {'converged' if self.converged[k] else 'NOT converged'}"
                f"{'' if self.bound[k] else '  [above threshold]'}")
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


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
        if math.isfinite(spread) and spread > unc:
            unc = spread
            why += "; uncertainty raised to the spread of the valid models"
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


def _ladder(sizes: tuple[int, ...] | None, max_size: int | None, tolerance: float | None,
            levels: int) -> tuple[tuple[int, ...], int]:
    start = max(10, levels + 4)
    if sizes is None:
        top = max_size if max_size is not None else (
            DEFAULT_MAX_SIZE if tolerance is not None else DEFAULT_FIXED_TOP)
        if top < start:
            start = max(top // 4, levels + 1, 1)
        ladder = size_ladder(start, top)
        return ladder, top
    if max_size is None or max_size <= sizes[-1] or tolerance is None:
        if max_size is not None and max_size <= sizes[-1]:
            sizes = tuple(s for s in sizes if s <= max_size) or (max_size,)
        return sizes, sizes[-1]
    more = size_ladder(sizes[-1], max_size)[1:]
    return sizes + more, max_size


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
    problem = make_problem(well, dimension, l, j, units, mass, levels, reference)
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
        notes=notes)


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
