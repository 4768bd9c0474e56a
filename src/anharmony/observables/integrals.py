"""Matrices between the basis functions of two oscillator bases, by their joint Gauss rule.

The product of a basis function of each basis is a polynomial times one Gaussian, so a Gauss
rule built for that Gaussian integrates every product exactly (the construction is described
in :mod:`.pairs`); :func:`radial_power_matrix` gives ⟨R_m^a| r^k |R_n^b⟩ for any integer
k ≥ 0, and the same rule, grown until it settles, integrates a function. One spectrum's
matrices (:mod:`.levels`) and two spectra's (:mod:`.pairs`) both use it.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from ..basis import HermiteBasis, OrthogonalFamily
from ..errors import NumericalError

__all__ = ["PAIR_RTOL", "radial_power_matrix"]

PAIR_RTOL = 1e-12  # a function's two-basis matrix is accepted once it changes by less than this
_PAIR_MAX_POINTS = 4000  # cap of the adaptive rule (cost N·M per basis)
_MARGIN = 4  # points beyond the exact minimum


def _lam(basis) -> float:
    return float(basis.lam_eff)


def _rule(a, b, points: int, k: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and square roots of the weights of the joint rule of two bases.

    Σ_q w_q g(x_q) ≈ ∫ g dx (1D) or ∫ g r^{k+d−1} dr (radial) for g = φ^a φ^b × smooth.
    """
    if isinstance(a, HermiteBasis):
        inv = 1.0 / a.length**2 + 1.0 / b.length**2
        sigma = math.sqrt(1.0 / inv)
        xc = (a.center / a.length**2 + b.center / b.length**2) / inv
        s = sigma * math.sqrt(2.0)
        fam = OrthogonalFamily("hermite")
        xi = fam.gauss_nodes(points)
        _, _, lognorm = fam.values(xi, 1, norm_terms=points)
        logw = math.log(s) - 2.0 * lognorm + xi * xi
        return xc + s * xi, np.exp(0.5 * logw)
    d = a.dimension
    s = math.sqrt(1.0 / (0.5 / a.length**2 + 0.5 / b.length**2))
    la, lb = _lam(a), _lam(b)
    fam = OrthogonalFamily("laguerre", 0.5 * (la + lb + k + d) - 1.0)
    t = fam.gauss_nodes(points)
    _, _, lognorm = fam.values(t, 1, norm_terms=points)
    logw = (k + d) * math.log(s) - math.log(2.0) - 2.0 * lognorm - 0.5 * (la + lb) * np.log(t) + t
    return s * np.sqrt(t), np.exp(0.5 * logw)


def _pair_matrix(a, b, points: int, k: int = 0, f=None) -> np.ndarray:
    x, sw = _rule(a, b, points, k)
    ua = a.functions(x) * sw[None, :]
    ub = b.functions(x) * sw[None, :]
    if f is not None:
        with np.errstate(over="ignore", invalid="ignore"):
            ub = ub * np.asarray(f(x), dtype=float)[None, :]
    return ua @ ub.T


def _exact_points(a, b, k: int) -> int:
    return (a.size + b.size + k) // 2 + _MARGIN


def radial_power_matrix(a, b, k: int) -> np.ndarray:
    """⟨R_m^a| r^k |R_n^b⟩ (with r^{d−1} dr), exact for any integer k ≥ 0, in length^k."""
    return _pair_matrix(a, b, _exact_points(a, b, k), k)


def _hermite_power_matrix(a, b, k: int) -> np.ndarray:
    return _pair_matrix(a, b, _exact_points(a, b, k), 0, lambda x: x**k)


def _function_matrix(a, b, f: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    m = _exact_points(a, b, 0) + 16
    prev = _pair_matrix(a, b, m, 0, f)
    while True:
        m = int(1.35 * m) + 8
        cur = _pair_matrix(a, b, m, 0, f)
        if not np.all(np.isfinite(cur)):
            raise NumericalError("op: the function is not finite at some quadrature points "
                                 "of the two bases")
        scale = float(np.max(np.abs(cur))) or 1.0
        delta = float(np.max(np.abs(cur - prev)))
        if delta <= PAIR_RTOL * scale:
            return cur
        if m > _PAIR_MAX_POINTS:
            raise NumericalError(
                f"op: the two-well integral did not settle (change {delta / scale:.1e} relative "
                f"at {m} points); the function may have a kink or a singularity — smooth it, "
                "or use a power such as 'x**1'")
        prev = cur
