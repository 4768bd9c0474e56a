"""Rayleigh–Schrödinger perturbation series: exact and numeric engines, resummation, verdict.

- :mod:`.rs_numeric`: floating-point recursion with per-order binary exponents (any order);
- :mod:`.rs_exact`: rational recursion in unnormalised oscillator bases (polynomial W);
- :mod:`.truncation`: partial sums and optimal truncation;
- :mod:`.resum`: Padé approximants and Padé sums with uncertainties;
- :mod:`.borel`: Borel(–Leroy)–Padé sums with uncertainties;
- :mod:`.growth`: large-order (ratio-test) analysis;
- :mod:`.verdict`: the series against exact energies on a coupling grid;
- :mod:`.front`: :func:`series`, the front end of DESIGN §8, and its :class:`Series` result.

Both engines take a perturbation polynomial in λ, H(λ) = H₀ + Σ_k λ^k W_k (``higher=``), which
is how terms with an ``order`` (:mod:`anharmony.terms.base`) enter the series.
"""

from __future__ import annotations

from .._lazy import lazy_names

# bound here, not lazily: the name is also a submodule, whose import would shadow the function
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

_LAZY = {  # name → submodule, imported on first use (so that `show` stays light)
    "BorelPade": "borel",
    "LargeOrder": "growth",
    "OptimalTruncation": "truncation",
    "PadeApproximant": "resum",
    "Resummed": "resum",
    "ScaledCoefficients": "rs_numeric",
    "Series": "front",
    "borel_pade": "borel",
    "large_order": "growth",
    "leroy_order": "borel",
    "optimal_truncation": "truncation",
    "pade": "resum",
    "pade_approximant": "resum",
    "pade_sum": "resum",
    "partial_sums": "truncation",
    "rs_exact_1d": "rs_exact",
    "rs_exact_banded": "rs_exact",
    "rs_exact_radial": "rs_exact",
    "rs_numeric": "rs_numeric",
    "series": "front",
}


__getattr__, __dir__ = lazy_names(__name__, _LAZY, globals())
