"""Extrapolation of Ritz values to the infinite basis.

All three models have the same form, E(x) = E∞ + A e^{−k x}, in a different variable:

========== ================================= ==================================================
method     variable x                        regime
========== ================================= ==================================================
exponential N (basis size) at fixed b        ultraviolet convergence of wells analytic in the
                                             basis variable (polynomials, Gaussians)
power      ln N at fixed b (E∞ + A N^{−p})   wells that are not smooth in r² at the origin
                                             (Woods–Saxon, spin–orbit, Coulomb: PITFALLS §0)
infrared   the infrared length L of (N, b)   levels near threshold, where the error is that of
                                             a hard-wall box of radius L: E(L) = E∞ +
                                             a e^{−2k∞L} (R. J. Furnstahl, G. Hagen and
                                             T. Papenbrock, Phys. Rev. C 86, 031301(R) (2012);
                                             S. N. More et al., Phys. Rev. C 87, 044326 (2013))
========== ================================= ==================================================

A fourth variant, ``infrared_binding``, fixes the decay constant by the theory instead of
fitting it: k = 2κ∞ with κ∞ = sqrt(2m(V_thr − E∞))/ħ, solved self-consistently with E∞ from
the last two sizes, E∞ = E₂ − (E₁ − E₂)/(e^{k(L₂−L₁)} − 1). It is valid when the last two
changes fall in the ratio the infrared formula predicts (within a factor ``IR_RATIO``); its
uncertainty is its change from the previous pair of sizes. It needs one point fewer than the
free fit and is the robust estimate of the infrared tail.

Each fit uses the last points of a sequence at one length b. The value is the exact
three-point solution through the last three points (for equal spacing in x it is Aitken's Δ²);
the uncertainty is the larger of (a) its change from the three-point solution one point earlier
and (b) its difference from a least-squares fit of log(E − E∞) against x over up to
``WINDOW`` points, and never less than the rounding noise of the last eigenvalue. With only
three points the last change, or the whole correction E_last − E∞ where larger, is the
uncertainty (no fourth point tests the rate). The least-squares fit also
gives the fit quality (R² of the log-linear fit). For the infrared model the fitted decay
constant is compared with 2κ∞ = 2 sqrt(2m(V_thr − E∞))/ħ, which the theory predicts; the fit
is valid only when the two agree within ``IR_CONSISTENCY``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from ..errors import InputError

__all__ = [
    "IR_CONSISTENCY",
    "WINDOW",
    "Extrapolation",
    "extrapolate_exponential",
    "extrapolate_infrared",
    "extrapolate_infrared_binding",
    "extrapolate_power",
    "fit_decay",
]

WINDOW = 5  # points of the least-squares window (the asymptotic tail, not the early sizes)
IR_CONSISTENCY = 0.10  # |k_fit / 2κ∞ − 1| allowed for the infrared regime (measured: ≤ 0.03
#                        on the IR side of the optimum, 0.3–0.9 where UV errors mix in)
IR_RATIO = 2.0  # infrared_binding: observed/predicted ratio of the last two changes within
#                 a factor IR_RATIO (1/IR_RATIO … IR_RATIO) for the infrared regime


@dataclass(frozen=True)
class Extrapolation:
    """One extrapolation of one level to the infinite basis.

    Attributes
    ----------
    method : str
        ``"exponential"``, ``"power"`` or ``"infrared"``.
    value : float
        E∞ (NaN when the fit is not valid).
    uncertainty : float
        Estimated uncertainty of ``value`` (see the module notes); inf when not valid.
    valid : bool
        Whether the model applies to this sequence.
    rate : float
        k of e^{−kN} (exponential), p of N^{−p} (power), or the fitted 2k∞ (infrared, 1/length).
    quality : float
        R² of the least-squares log-linear fit over the window (NaN with fewer than 4 points).
    length : float
        Oscillator length b of the sequence.
    sizes : tuple of int
        Basis sizes used.
    note : str
        Why the fit is (not) valid, in words.
    consistency : float
        Infrared only: k_fit / (2κ∞); NaN otherwise.
    """

    method: str
    value: float
    uncertainty: float
    valid: bool
    rate: float = math.nan
    quality: float = math.nan
    length: float = math.nan
    sizes: tuple[int, ...] = ()
    note: str = ""
    consistency: float = math.nan


@dataclass(frozen=True)
class _Decay:
    value: float
    uncertainty: float
    rate: float
    quality: float
    note: str
    ok: bool


def _three_point(x: np.ndarray, y: np.ndarray) -> tuple[float, float] | None:
    """Exact E∞ + A e^{−kx} through three points with y decreasing; (E∞, k) or None."""
    d1, d2 = y[0] - y[1], y[1] - y[2]
    if not (d1 > 0 and d2 > 0):
        return None
    rho = d2 / d1
    s1, s2 = x[1] - x[0], x[2] - x[1]
    if not rho < s2 / s1:
        return None  # slower than any decaying exponential in x

    def g(k: float) -> float:
        return math.exp(-k * s1) * (-math.expm1(-k * s2)) / (-math.expm1(-k * s1)) - rho

    lo = 1e-12 / max(s1, s2)
    hi = max(1.0, -2.0 * math.log(rho) / s1 + 1.0) / min(s1, s2)
    while g(hi) > 0:
        hi *= 2.0
        if hi > 1e12:  # pragma: no cover - g < 0 long before
            return None
    if g(lo) <= 0:
        return None
    k = brentq(g, lo, hi, xtol=1e-15, rtol=1e-14)
    return y[2] - d2 / math.expm1(k * s2), k


def _log_linear(x: np.ndarray, y: np.ndarray, noise: float) -> tuple[float, float, float] | None:
    """Least-squares E∞ with log(y − E∞) linear in x; (E∞, k, R²) or None.

    E∞ = y_last − s is chosen to maximise R² of the straight line (the residual sum itself
    would favour s → ∞, where log(y − E∞) flattens out).
    """
    span = y[0] - y[-1]
    if not span > 0:
        return None
    floor = max(noise, 1e-300)

    xc = x - x.mean()
    sxx = float(np.sum(xc * xc))

    def fit(t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        # closed-form straight line z = a0 + a1 x for every shift t at once:
        # a1 = Σ xc z / Σ xc², R² = (Σ xc z)² / (Σ xc² · Σ (z − z̄)²)
        z = np.log(y[None, :] - y[-1] + np.exp(np.atleast_1d(t))[:, None])
        sxz = z @ xc
        zc = z - z.mean(axis=1, keepdims=True)
        szz = np.sum(zc * zc, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            r2 = np.where(szz > 0, sxz * sxz / (sxx * szz), 1.0)
        return r2, -sxz / sxx

    lo, hi = math.log(floor), math.log(1e4 * span)
    if not hi > lo:
        return None
    grid = np.linspace(lo, hi, 81)
    i = int(np.argmax(fit(grid)[0]))
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    t = float(minimize_scalar(lambda s: -float(fit(s)[0][0]), bounds=(a, b), method="bounded",
                              options={"xatol": 1e-6}).x)
    r2, k = (float(v[0]) for v in fit(t))
    if not k > 0:
        return None
    return y[-1] - math.exp(t), k, r2


def fit_decay(x: Sequence[float], y: Sequence[float], noise: float = 0.0) -> _Decay:
    """Fit E∞ + A e^{−k x} to the tail of a non-increasing sequence (see the module notes)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    noise = float(noise)
    n = x.size
    if n < 3:
        return _Decay(math.nan, math.inf, math.nan, math.nan, "fewer than three sizes", False)
    d = -np.diff(y)
    if np.any(d[-3:] < -max(noise, 1e-300) * 10):
        return _Decay(math.nan, math.inf, math.nan, math.nan,
                      "the level rises with the basis size (rounding or quadrature noise)", False)
    if d[-1] <= noise and d[-2] <= noise:
        return _Decay(float(y[-1]), noise + max(float(d[-1]), 0.0), math.nan, math.nan,
                      "converged to rounding: the last two changes are below the noise", True)
    last = _three_point(x[-3:], y[-3:])
    if last is None and abs(d[-1]) <= noise and n >= 4 and d[-3] > d[-2] > noise:
        # no three-point model through a rounding-level (here negative or zero) last change,
        # but that step is already within rounding after steadily shrinking ones: a decaying
        # tail from here is below |d[-1]|·r/(1 − r) with r ≤ noise/d[-2] ≪ 1
        return _Decay(float(y[-1]), noise + max(float(d[-1]), 0.0), math.nan, math.nan,
                      "converged to rounding at the last size: its change is below the noise "
                      "after shrinking ones", True)
    if last is None:
        return _Decay(math.nan, math.inf, math.nan, math.nan,
                      "the last three values do not decay like the model", False)
    value, rate = last
    spread = []
    if n >= 4:
        prev = _three_point(x[-4:-1], y[-4:-1])
        spread.append(abs(value - prev[0]) if prev is not None else abs(y[-1] - value))
    quality = math.nan
    m = min(WINDOW, n)
    if m >= 4:
        ls = _log_linear(x[-m:], y[-m:], noise)
        if ls is not None:
            spread.append(abs(value - ls[0]))
            quality = ls[2]
    # with only three points nothing tests the fitted rate: a sequence that drops fast and
    # then slows (measured: a cubic+quartic level at N = 12, 17, 24, changes 0.16 and 5.8e-5,
    # still 1.8e-8 off after a predicted remainder of 1e-9) fools the exact solution, so the
    # uncertainty is the last change as well, which bounds the remainder whenever the later
    # changes at least halve from one size to the next (common practice, no source)
    unc = max(spread) if spread else max(abs(y[-1] - value), float(d[-1]))
    unc = max(unc, noise)
    note = "three-point fit" + ("" if spread else " through the only three sizes; "
                                "the last change is the uncertainty")
    return _Decay(float(value), float(unc), float(rate), float(quality), note, True)


def _result(method: str, fit: _Decay, length: float, sizes: Sequence[int],
            consistency: float = math.nan, valid: bool | None = None, note: str | None = None
            ) -> Extrapolation:
    ok = fit.ok if valid is None else valid
    return Extrapolation(method=method, value=fit.value if ok else math.nan,
                         uncertainty=fit.uncertainty if ok else math.inf, valid=ok,
                         rate=fit.rate, quality=fit.quality, length=float(length),
                         sizes=tuple(int(s) for s in sizes),
                         note=fit.note if note is None else note, consistency=consistency)


def _check(sizes: Sequence[float], energies: Sequence[float]) -> tuple[np.ndarray, np.ndarray]:
    x = np.asarray(sizes, dtype=float)
    y = np.asarray(energies, dtype=float)
    if x.shape != y.shape or x.ndim != 1:
        raise InputError(f"energies: need one energy per size; got {y.shape} for {x.shape}")
    if np.any(np.diff(x) <= 0):
        raise InputError("sizes: must be strictly increasing")
    if not np.all(np.isfinite(y)):
        raise InputError("energies: must be finite")
    return x, y


def extrapolate_exponential(sizes: Sequence[int], energies: Sequence[float], noise: float = 0.0,
                            length: float = math.nan) -> Extrapolation:
    """E(N) = E∞ + A e^{−kN} at fixed b, fitted to the last sizes.

    Parameters
    ----------
    sizes
        Basis sizes, increasing.
    energies
        Ritz values of one level at those sizes and one length.
    noise
        Rounding scale of the energies (the uncertainty is never below it).
    length
        The oscillator length, recorded in the result.
    """
    x, y = _check(sizes, energies)
    return _result("exponential", fit_decay(x, y, noise), length, sizes)


def extrapolate_power(sizes: Sequence[int], energies: Sequence[float], noise: float = 0.0,
                      length: float = math.nan) -> Extrapolation:
    """E(N) = E∞ + A N^{−p} at fixed b (an exponential in ln N), fitted to the last sizes."""
    x, y = _check(sizes, energies)
    if np.any(x <= 0):
        raise InputError("sizes: must be positive")
    fit = fit_decay(np.log(x), y, noise)
    return _result("power", fit, length, sizes)


def extrapolate_infrared(ir_lengths: Sequence[float], energies: Sequence[float], threshold: float,
                         hbar2_2m: float, noise: float = 0.0, length: float = math.nan,
                         sizes: Sequence[int] = ()) -> Extrapolation:
    """E(L) = E∞ + a e^{−2k∞L} in the infrared length L, with the k∞ consistency check.

    Parameters
    ----------
    ir_lengths
        Infrared lengths L of the bases (increasing), e.g. :func:`infrared_length`.
    energies
        Ritz values of one level in those bases.
    threshold
        Threshold of the continuum; the test needs it finite.
    hbar2_2m
        ħ²/2m, for κ∞ = sqrt((threshold − E∞)/(ħ²/2m)).
    """
    x, y = _check(ir_lengths, energies)
    if not math.isfinite(threshold):
        return Extrapolation("infrared", math.nan, math.inf, False, length=float(length),
                             sizes=tuple(int(s) for s in sizes),
                             note="no finite threshold: the level is not bound by a finite "
                                  "separation energy, so there is no infrared tail")
    fit = fit_decay(x, y, noise)
    if not fit.ok or not math.isfinite(fit.rate):
        return _result("infrared", fit, length, sizes)
    if not fit.value < threshold:
        return _result("infrared", fit, length, sizes, valid=False,
                       note="the extrapolated level lies above the threshold")
    kappa = math.sqrt((threshold - fit.value) / hbar2_2m)
    q = fit.rate / (2.0 * kappa)
    if abs(q - 1.0) > IR_CONSISTENCY:
        return _result("infrared", fit, length, sizes, consistency=q, valid=False,
                       note=f"fitted decay 2k = {fit.rate:.4g} is {q:.3g} × 2κ∞: not the "
                            "infrared regime at this length")
    return _result("infrared", fit, length, sizes, consistency=q,
                   note=f"{fit.note}; fitted decay {q:.4f} × 2κ∞ confirms the infrared regime")


def infrared_tail(l1: float, l2: float, e1: float, e2: float, threshold: float,
                  hbar2_2m: float) -> tuple[float, float]:
    """E∞ and k = 2κ∞ from two bases, with k fixed self-consistently by E∞ (see the notes)."""
    delta = e1 - e2
    e_inf = e2
    k = math.nan
    for _ in range(60):
        if not e_inf < threshold:
            return math.nan, math.nan
        k = 2.0 * math.sqrt((threshold - e_inf) / hbar2_2m)
        new = e2 - delta / math.expm1(k * (l2 - l1))
        if abs(new - e_inf) <= 1e-15 * max(1.0, abs(new)):
            e_inf = new
            break
        e_inf = new
    return e_inf, k


def extrapolate_infrared_binding(ir_lengths: Sequence[float], energies: Sequence[float],
                                 threshold: float, hbar2_2m: float, noise: float = 0.0,
                                 length: float = math.nan, sizes: Sequence[int] = ()
                                 ) -> Extrapolation:
    """E(L) = E∞ + a e^{−2κ∞L} with κ∞ = sqrt((V_thr − E∞)/(ħ²/2m)) fixed by E∞ itself.

    Uses the last two bases for the value, the last three for the regime test, and the
    previous pair for the uncertainty (see the module notes).
    """
    x, y = _check(ir_lengths, energies)
    method = "infrared_binding"
    sz = tuple(int(s) for s in sizes)

    def fail(note: str, q: float = math.nan) -> Extrapolation:
        return Extrapolation(method, math.nan, math.inf, False, length=float(length), sizes=sz,
                             note=note, consistency=q)

    if not math.isfinite(threshold):
        return fail("no finite threshold: no infrared tail")
    if x.size < 3:
        return fail("fewer than three sizes")
    d1, d2 = y[-3] - y[-2], y[-2] - y[-1]
    if d2 <= noise and d1 <= noise:
        return Extrapolation(method, float(y[-1]), noise + max(float(d2), 0.0), True,
                             length=float(length), sizes=sz,
                             note="converged to rounding: the last two changes are below the "
                                  "noise")
    if not (d1 > 0 and d2 > 0):
        return fail("the level does not decrease steadily with the basis size")
    value, k = infrared_tail(x[-2], x[-1], y[-2], y[-1], threshold, hbar2_2m)
    if not math.isfinite(value):
        return fail("the extrapolated level lies above the threshold")
    s1, s2 = x[-2] - x[-3], x[-1] - x[-2]
    predicted = math.exp(-k * s1) * (-math.expm1(-k * s2)) / (-math.expm1(-k * s1))
    q = (d2 / d1) / predicted
    if not (1.0 / IR_RATIO <= q <= IR_RATIO):
        return fail(f"the last two changes are in the ratio {q:.3g} × the infrared "
                    "prediction: not the infrared regime at this length", q)
    prev, _ = infrared_tail(x[-3], x[-2], y[-3], y[-2], threshold, hbar2_2m)
    unc = abs(value - prev) if math.isfinite(prev) else abs(y[-1] - value)
    return Extrapolation(method, float(value), float(max(unc, noise)), True, rate=float(k),
                         length=float(length), sizes=sz, consistency=float(q),
                         note=f"two-point infrared tail with k = 2 kappa_inf = {k:.4g}; the "
                              f"last changes are {q:.3f} × the predicted ratio")
