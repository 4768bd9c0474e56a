"""Conversions shared by the series analysis: any exact or float coefficient to mpmath/float."""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np

from ..errors import InputError

__all__ = ["as_float_array", "check_coefficients", "even_series", "mpf_to_float", "to_mpf"]


def to_mpf(value: Any) -> mpmath.mpf:
    """Convert a float, int, Fraction, gmpy2.mpq or mpf to :class:`mpmath.mpf`."""
    if isinstance(value, mpmath.mpf):
        return value
    if isinstance(value, (int, np.integer)):
        return mpmath.mpf(int(value))
    if isinstance(value, Fraction) or (
        hasattr(value, "numerator") and hasattr(value, "denominator")
        and not isinstance(value, (float, np.floating))
    ):
        return mpmath.mpf(int(value.numerator)) / int(value.denominator)
    return mpmath.mpf(float(value))


def as_float_array(coefficients: Sequence[Any]) -> np.ndarray:
    out = np.empty(len(coefficients))
    for k, c in enumerate(coefficients):
        try:
            out[k] = float(c)
        except OverflowError:
            out[k] = math.copysign(math.inf, float(mpmath.sign(to_mpf(c))))
    return out


def check_coefficients(coefficients: Sequence[Any]) -> None:
    if len(coefficients) == 0:
        raise InputError("coefficients must hold at least c_0; got an empty sequence")


def mpf_to_float(x: mpmath.mpf) -> float:
    try:
        return float(x)
    except OverflowError:  # pragma: no cover - mpmath returns inf itself in current versions
        return math.copysign(math.inf, float(mpmath.sign(x)))


NEGLIGIBLE_RTOL = 1e-10  # an odd coefficient this much below both neighbours is rounding noise


def even_series(coefficients: Sequence[Any]) -> list | None:
    """The coefficients with odd orders set to 0 when every odd one is negligible, else None.

    The numeric engine leaves rounding noise (~1e-15 relative to the neighbours) where an
    order vanishes by symmetry (odd orders of a cubic well); ratio tests, smallest terms and
    Padé systems must see those as the zeros they are. An odd c_k counts as negligible when
    |c_k| ≤ 1e-10 · max(|c_{k−1}|, |c_{k+1}|).
    """
    if len(coefficients) < 3:
        return None
    mags = [abs(to_mpf(c)) for c in coefficients]
    for k in range(1, len(mags), 2):
        neighbour = max(mags[k - 1], mags[k + 1] if k + 1 < len(mags) else 0)
        if mags[k] > NEGLIGIBLE_RTOL * neighbour:
            return None
    return [0 if k % 2 else c for k, c in enumerate(coefficients)]
