"""Floating-point RS engine: agreement with the exact engine, no overflow, banded = dense."""

from fractions import Fraction

import mpmath
import numpy as np
import pytest

from anharmony.errors import DegenerateLevelError
from anharmony.series.rs_exact import rs_exact_1d, rs_exact_radial
from anharmony.series.rs_numeric import rs_numeric

# The float recursion loses a few ulp per order (measured 3.4e-15 relative at order 300 for
# the quartic); 300 orders × eps ≈ 7e-14, so 1e-13 bounds the accumulated rounding.
RTOL_NUMERIC_VS_EXACT = 1e-13
# First large-order correction at k = 300 is −95/(72k) ≈ −0.0044 (Bender & Wu, Phys. Rev. D 7,
# 1620 (1973), quoted from memory); 0.01 allows for it and fails on any wrong growth.
LARGE_ORDER_RTOL_K300 = 0.01
# Banded and dense products add the same numbers in a different order: rounding only.
RTOL_BANDED_VS_DENSE = 1e-13
# Normalised-basis matrix elements built with numpy square roots carry ~1 ulp each.
RTOL_LOW_ORDER = 1e-14


def position_matrix(size: int) -> np.ndarray:
    """ξ in the normalised Hermite basis: ⟨m|ξ|n⟩ = √(n/2) δ_{m,n−1} + √((n+1)/2) δ_{m,n+1}
    (ladder operators, any textbook)."""
    off = np.sqrt(np.arange(1, size) / 2.0)
    return np.diag(off, 1) + np.diag(off, -1)


def exact_power(q: int, size: int) -> np.ndarray:
    """Exact truncated ξ^q: power of a larger matrix, then cut (PITFALLS §4)."""
    return np.linalg.matrix_power(position_matrix(size + q), q)[:size, :size]


def relative_errors(numeric, exact):
    out = []
    for num, ex in zip(numeric.mp(), exact, strict=True):
        ex_mp = mpmath.mpf(ex.numerator) / ex.denominator
        out.append(0.0 if ex == 0 else float(abs(num / ex_mp - 1)))
    return np.array(out)


def test_quartic_300_orders_without_overflow():
    # |E_300| ~ 1e756 is far outside the double range; the leading large-order formula
    # E_k ~ (−1)^{k+1} √(6/π³) 3^k Γ(k + ½) (Bender & Wu, Phys. Rev. 184, 1231 (1969)) holds
    # there up to its first correction −95/(72k) ≈ −0.0044 (Bender & Wu 1973, from memory).
    order = 300
    size = order * 4 + 1
    res = rs_numeric(np.arange(size) + 0.5, exact_power(4, size), 0, order, bandwidth=4)
    assert np.all(np.isfinite(res.mantissas))
    assert res.log2_abs()[-1] > 2000  # |E_300| > 2^2000: beyond any float
    assert np.isinf(res.floats()[-1])
    k = order
    formula = (-1) ** (k + 1) * mpmath.sqrt(6 / mpmath.pi**3) * mpmath.mpf(3) ** k \
        * mpmath.gamma(k + mpmath.mpf(1) / 2)
    assert abs(res.mp()[k] / formula - 1) < LARGE_ORDER_RTOL_K300


def test_quartic_150_orders_match_exact_engine():
    # Exact engine = independent rational arithmetic (checked against Bender & Wu 1969 in
    # test_series_exact); orders past 150 already leave the double range.
    order = 150
    size = order * 4 + 1
    res = rs_numeric(np.arange(size) + 0.5, exact_power(4, size), 0, order, bandwidth=4)
    err = relative_errors(res, rs_exact_1d({4: 1}, 0, order))
    assert err.max() < RTOL_NUMERIC_VS_EXACT


def test_cubic_plus_quartic_excited_level_matches_exact():
    # Odd and even powers mixed, level 2, no symmetry.
    order, n = 40, 2
    size = n + order * 4 + 1
    w = exact_power(3, size) / 3 - exact_power(4, size) / 7 + 0.4 * exact_power(1, size)
    res = rs_numeric(np.arange(size) + 0.5, w, n, order, bandwidth=4)
    exact = rs_exact_1d({3: Fraction(1, 3), 4: Fraction(-1, 7), 1: Fraction(2, 5)}, n, order)
    num = res.mp()
    scale = [max(abs(float(exact[k])), 1e-300) for k in range(order + 1)]
    # odd powers make some coefficients tiny by cancellation: compare relative to the size
    # of the neighbouring coefficients
    for k in range(1, order + 1):
        ref = max(scale[k], np.sqrt(scale[k - 1] * scale[min(k + 1, order)]))
        assert abs(float(num[k]) - float(exact[k])) <= RTOL_NUMERIC_VS_EXACT * ref


def test_banded_and_dense_products_agree():
    order, size = 30, 30 * 4 + 1
    d = np.arange(size) + 0.5
    w = exact_power(4, size)
    banded = rs_numeric(d, w, 0, order, bandwidth=4).floats()
    dense = rs_numeric(d, w, 0, order).floats()
    np.testing.assert_allclose(banded, dense, rtol=RTOL_BANDED_VS_DENSE)


def test_first_and_second_order_are_textbook_sums_over_states():
    # E_1 = W_nn, E_2 = Σ_m |W_mn|²/(E_n − E_m) (Sakurai §5.1), evaluated directly.
    rng = np.random.default_rng(7)
    size = 12
    a = rng.normal(size=(size, size))
    w = a + a.T
    d = np.sort(rng.uniform(0, 10, size))
    n = 4
    res = rs_numeric(d, w, n, 2).floats()
    second = sum(w[m, n] ** 2 / (d[n] - d[m]) for m in range(size) if m != n)
    np.testing.assert_allclose(res, [d[n], w[n, n], second], rtol=RTOL_LOW_ORDER)


def test_radial_3d_quartic_normalised_basis_matches_exact():
    # Normalised radial oscillator basis, l = 0, d = 3: t = r²/b² has the Jacobi matrix
    # diagonal 2n + α + 1, off-diagonal −√((n+1)(n+α+1)) (A&S 22.7.12, normalised).
    order, alpha = 60, 0.5
    size = order * 2 + 1
    big = size + 2
    n = np.arange(big)
    t = np.diag(2 * n + alpha + 1.0) - np.diag(np.sqrt((n[:-1] + 1) * (n[:-1] + alpha + 1)), 1) \
        - np.diag(np.sqrt((n[:-1] + 1) * (n[:-1] + alpha + 1)), -1)
    r4 = (t @ t)[:size, :size]
    res = rs_numeric(2.0 * np.arange(size) + 1.5, r4, 0, order, bandwidth=2)
    err = relative_errors(res, rs_exact_radial({4: 1}, 0, order, l=0, dimension=3))
    assert err.max() < RTOL_NUMERIC_VS_EXACT


def test_wavefunction_corrections_solve_the_order_equations():
    # (H_ref − E_0) ψ_k = −W ψ_{k−1} + Σ_{j=1}^k E_j ψ_{k−j} (definition of RS theory), with
    # ⟨n|ψ_k⟩ = 0 for k ≥ 1 (intermediate normalisation).
    order, size = 6, 6 * 4 + 1
    d = np.arange(size) + 0.5
    w = exact_power(4, size)
    res = rs_numeric(d, w, 0, order, bandwidth=4, vectors=True)
    psi = [np.ldexp(v, int(e)) for v, e in zip(res.vectors, res.vector_exponents, strict=True)]
    e = res.floats()
    for k in range(1, order + 1):
        lhs = (d - d[0]) * psi[k]
        rhs = -w @ psi[k - 1] + sum(e[j] * psi[k - j] for j in range(1, k + 1))
        scale = np.max(np.abs(w @ psi[k - 1]))
        assert np.max(np.abs(lhs - rhs)) < RTOL_LOW_ORDER * 100 * scale  # 100: sums of ~K·N terms
        assert psi[k][0] == 0.0


def test_degenerate_reference_level_is_reported():
    d = np.array([0.5, 1.5, 1.5, 2.5])
    with pytest.raises(DegenerateLevelError) as info:
        rs_numeric(d, np.ones((4, 4)), 2, 3)
    assert info.value.levels == (2, 1)
