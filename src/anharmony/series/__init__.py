"""Rayleigh–Schrödinger perturbation series: exact and numeric engines, resummation, verdict.

- :mod:`.rs_numeric`: floating-point recursion with per-order binary exponents (any order);
- :mod:`.rs_exact`: rational recursion in unnormalised oscillator bases (polynomial W);
- :mod:`.truncation`: partial sums and optimal truncation;
- :mod:`.resum`: Padé approximants and Padé sums with uncertainties;
- :mod:`.borel`: Borel(–Leroy)–Padé sums with uncertainties;
- :mod:`.growth`: large-order (ratio-test) analysis;
- :mod:`.verdict`: the series against exact energies on a coupling grid;
- :mod:`.front`: :func:`series`, the front end of DESIGN §8, and its :class:`Series` result.
"""

from __future__ import annotations

from .borel import BorelPade, borel_pade, leroy_order
from .front import Series, series
from .growth import LargeOrder, large_order
from .resum import PadeApproximant, Resummed, pade, pade_approximant, pade_sum
from .rs_exact import rs_exact_1d, rs_exact_banded, rs_exact_radial
from .rs_numeric import ScaledCoefficients, rs_numeric
from .truncation import OptimalTruncation, optimal_truncation, partial_sums
from .verdict import Verdict, lowest_order, partial_sum_verdict, verdict

__all__ = [
    "BorelPade",
    "LargeOrder",
    "OptimalTruncation",
    "PadeApproximant",
    "Resummed",
    "ScaledCoefficients",
    "Series",
    "Verdict",
    "borel_pade",
    "large_order",
    "leroy_order",
    "lowest_order",
    "optimal_truncation",
    "pade",
    "pade_approximant",
    "pade_sum",
    "partial_sum_verdict",
    "partial_sums",
    "rs_exact_1d",
    "rs_exact_banded",
    "rs_exact_radial",
    "rs_numeric",
    "series",
    "verdict",
]
