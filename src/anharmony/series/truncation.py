"""Partial sums and optimal truncation of a power series Σ_k c_k λ^k.

Coefficients may be floats, integers, Fractions or mpmath numbers; exact ones keep their
precision (sums of terms beyond the double range are formed in extended precision).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np

from ..errors import InputError
from ._values import as_float_array, check_coefficients, even_series, mpf_to_float, to_mpf

__all__ = ["OptimalTruncation", "optimal_truncation", "partial_sums"]


def partial_sums(coefficients: Sequence[Any], lam: Any) -> np.ndarray:
    """Partial sums S_k(λ) = Σ_{i≤k} c_i λ^i for k = 0..K.

    Parameters
    ----------
    coefficients
        c_0..c_K.
    lam
        Coupling λ, scalar or array.

    Returns
    -------
    ndarray, shape (K+1,) + shape(lam)
        Floats; ±inf where a sum leaves the double range.
    """
    check_coefficients(coefficients)
    lam_arr = np.asarray(lam, dtype=float)
    c = as_float_array(coefficients)
    if np.all(np.isfinite(c)):
        with np.errstate(over="ignore", invalid="ignore"):
            powers = lam_arr[None, ...] ** np.arange(len(c)).reshape((-1,) + (1,) * lam_arr.ndim)
            terms = c.reshape((-1,) + (1,) * lam_arr.ndim) * powers
            terms = np.where(c.reshape((-1,) + (1,) * lam_arr.ndim) == 0.0, 0.0, terms)
            return np.cumsum(terms, axis=0)
    mp_c = [to_mpf(x) for x in coefficients]
    flat = lam_arr.reshape(-1)
    out = np.empty((len(mp_c), flat.size))
    for j, x in enumerate(flat):
        total = mpmath.mpf(0)
        xm = mpmath.mpf(float(x))
        for k, ck in enumerate(mp_c):
            total += ck * xm**k
            out[k, j] = mpf_to_float(total)
    return out.reshape((len(mp_c), *lam_arr.shape))


@dataclass(frozen=True)
class OptimalTruncation:
    """Series summed up to (not including) its smallest term.

    Attributes
    ----------
    value : float
        Σ_{k < order} c_k λ^k.
    error : float
        |c_order λ^order|, the usual estimate of the error of ``value``; where the terms
        still decrease at the last order (``reached_end``) the whole geometric tail
        |c_N λ^N|/(1 − ρ) instead, ρ the larger of the last term ratios and (|λ|/R)^step from
        a settled geometric growth (:func:`~.growth.large_order`); inf for ρ ≥ 1. Where
        no term decreases (the smallest is the first nonzero correction), the larger of the
        first two corrections.
    order : int
        Order of the smallest nonzero term (k ≥ 1).
    reached_end : bool
        The smallest term is the last one available: the terms were still decreasing, so
        more orders would do better (and the series may well converge there).
    """

    value: float
    error: float
    order: int
    reached_end: bool


def optimal_truncation(coefficients: Sequence[Any], lam: float) -> OptimalTruncation:
    """Optimal truncation at λ: stop before the smallest term; error ≈ that term.

    Zero terms (orders that vanish by symmetry, also when the numeric engine leaves rounding
    noise there: see :func:`~anharmony.series._values.even_series`) are skipped when looking
    for the smallest.
    The smallest term is the global minimum of |c_k λ^k| over the nonzero terms with k ≥ 1
    (for an asymptotic series it is the point where the terms turn round). Common practice,
    e.g. Bender & Orszag, *Advanced Mathematical Methods for Scientists and Engineers* (1978),
    §3.8.
    """
    check_coefficients(coefficients)
    x = float(lam)
    if len(coefficients) < 2:
        raise InputError("optimal truncation needs coefficients up to order >= 1")
    with mpmath.workdps(30):
        even = even_series(coefficients)
        used = coefficients if even is None else even
        terms = [to_mpf(c) * mpmath.mpf(x) ** k for k, c in enumerate(used)]
        nonzero = [k for k in range(1, len(terms)) if terms[k] != 0]
        if not nonzero:
            return OptimalTruncation(mpf_to_float(terms[0]), 0.0, len(terms) - 1, True)
        k_star = min(nonzero, key=lambda k: abs(terms[k]))
        value = mpmath.fsum(terms[:k_star])
        end = k_star == nonzero[-1]
        error = mpf_to_float(abs(terms[k_star]))
        if end:
            error = _tail(coefficients, x, [abs(terms[k]) for k in nonzero], error)
        elif k_star == nonzero[0]:
            # no term decreases: the value is E_0 and the first correction says nothing of
            # the error (Morse v = 3, 8: 883 and 5407 cm⁻¹ for true 949 and 5595); take the
            # larger of the first two corrections
            error = max(error, mpf_to_float(abs(terms[nonzero[1]])))
        return OptimalTruncation(
            value=mpf_to_float(value), error=error, order=int(k_star), reached_end=end,
        )


TAIL_RATIOS = 3  # the last term ratios that bound the rate of a tail still decreasing


def _tail(coefficients: Sequence[Any], x: float, mags: list, last: float) -> float:
    """|t_N|/(1 − ρ): the terms from the last one on, summed as a geometric series.

    ρ is the largest of the last :data:`TAIL_RATIOS` ratios of consecutive nonzero terms
    and, where the growth is settled and geometric, (|λ|/R)^step (the ratio the terms tend
    to); the last term alone under-states a slowly converging tail (at ρ = 0.95, 20×).
    """
    from .growth import large_order

    ratios = [float(mags[i] / mags[i - 1]) for i in range(max(1, len(mags) - TAIL_RATIOS),
                                                           len(mags))]
    rho = max(ratios, default=0.0)
    try:
        lo = large_order(coefficients)
    except InputError:
        lo = None
    if lo is not None and lo.supported and lo.kind == "geometric" and lo.radius > 0:
        rho = max(rho, (abs(x) / lo.radius) ** lo.step)
    return last / (1.0 - rho) if rho < 1.0 else math.inf
