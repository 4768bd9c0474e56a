"""Series analysis: partial sums, Padé, Borel–Padé, optimal truncation, large-order fits."""

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from scipy.special import exp1

from anharmony.errors import NumericalError
from anharmony.series import (
    borel_pade,
    large_order,
    optimal_truncation,
    pade,
    pade_approximant,
    partial_sums,
)
from anharmony.series.rs_exact import rs_exact_1d

RTOL_ROUNDING = 1e-13  # sums/ratios of a few O(1) doubles: rounding only
RTOL_RATIONAL_PADE = 1e-12  # a Padé approximant of a rational function is that function
RTOL_QUAD = 1e-10  # scipy quad asked for 1e-12 on a smooth, exponentially damped integrand
RTOL_RATE = 1e-3  # growth rate from 100 exact orders with two 1/k corrections (measured 3e-6)
ATOL_SHIFT = 0.02  # Γ shift b from the same fit (measured 7e-4 at 100 orders)
RTOL_CONSTANT = 0.05  # the constant needs b too, so it is the least accurate (measured 4e-3)


def euler_series(order: int) -> list[int]:
    """Σ (−1)^k k! λ^k, Borel sum ∫ e^{−t}/(1 + λt) dt = e^{1/λ} E₁(1/λ)/λ (Euler; Hardy,
    *Divergent Series* (1949), §2.4)."""
    return [(-1) ** k * math.factorial(k) for k in range(order + 1)]


def euler_sum(lam: float) -> float:
    return math.exp(1 / lam) * exp1(1 / lam) / lam


def test_partial_sums_of_geometric_series():
    # Σ_{i≤k} λ^i = (1 − λ^{k+1})/(1 − λ) (closed form).
    lam = np.array([0.3, -0.7])
    got = partial_sums([1] * 11, lam)
    want = (1 - lam[None, :] ** np.arange(1, 12)[:, None]) / (1 - lam[None, :])
    np.testing.assert_allclose(got, want, rtol=RTOL_ROUNDING)


def test_partial_sums_beyond_double_range_use_extended_precision():
    # c_2 = 10^400 overflows a double and λ² = 1e-600 underflows one, but c_2 λ² = 1e-200 is
    # an ordinary number: the sum must not come out inf·0 = NaN (exact arithmetic).
    got = partial_sums([0, 0, Fraction(10) ** 400], 1e-300)
    assert got[0] == 0.0 and got[1] == 0.0
    assert got[2] == pytest.approx(1e-200, rel=RTOL_ROUNDING)


def test_pade_of_exponential_is_the_textbook_approximant():
    # [1/1] of e^x = (1 + x/2)/(1 − x/2) (Baker & Graves-Morris, Padé Approximants, Table 1.2).
    c = [Fraction(1, math.factorial(k)) for k in range(3)]
    for method in ("scipy", "mpmath"):
        assert pade(c, 1, 1, 0.4, method=method) == pytest.approx(1.2 / 0.8, rel=RTOL_ROUNDING)


def test_scipy_and_mpmath_conventions_agree_for_unequal_degrees():
    # L ≠ M catches swapped argument order (scipy: denominator first; mpmath: numerator first).
    c = [Fraction(1, math.factorial(k)) for k in range(6)]
    a = pade_approximant(c, 3, 2, method="scipy")
    b = pade_approximant(c, 3, 2, method="mpmath")
    assert len(a.numerator) == 4 and len(a.denominator) == 3
    for x, y in zip(a.numerator + a.denominator, b.numerator + b.denominator, strict=True):
        assert float(x) == pytest.approx(float(y), rel=1e-10, abs=1e-14)  # double vs mp solve


def test_pade_reproduces_a_rational_function_and_its_poles():
    # f = (1 + 2λ)/(1 − 3λ + λ²): its [1/2] approximant is f itself (Padé uniqueness, Baker &
    # Graves-Morris ch. 1); poles at (3 ± √5)/2.
    with mpmath.workdps(50):
        taylor = mpmath.taylor(lambda t: (1 + 2 * t) / (1 - 3 * t + t**2), 0, 6)
    approx = pade_approximant(taylor, 1, 2, method="mpmath")
    for lam in (0.1, -2.0, 5.0):
        want = (1 + 2 * lam) / (1 - 3 * lam + lam**2)
        assert approx(lam) == pytest.approx(want, rel=RTOL_RATIONAL_PADE)
    np.testing.assert_allclose(np.sort(approx.poles.real), [(3 - 5**0.5) / 2, (3 + 5**0.5) / 2],
                               rtol=RTOL_RATIONAL_PADE)


def test_singular_pade_system_is_a_numerical_error():
    # A series in λ² (odd coefficients zero) has no [2/3] approximant: the system is singular.
    with pytest.raises(NumericalError, match="singular"):
        pade_approximant([1, 0, 1, 0, 1, 0], 2, 3, method="mpmath")


def test_pade_value_of_a_singular_system_falls_back_to_the_block_entry():
    # 1 + λ² + λ⁴ + … = 1/(1 − λ²): the Padé table has a block, and its top-left entry is
    # the exact rational function (Baker & Graves-Morris, Padé Approximants, ch. 2).
    assert float(pade([1, 0, 1, 0, 1, 0], 2, 3, 0.5, method="mpmath")) == pytest.approx(
        1 / (1 - 0.25), rel=1e-14)  # an exact rational function: rounding


def test_pade_order_beyond_coefficients_is_rejected():
    with pytest.raises(ValueError, match=r"\[3/3\] needs coefficients up to order"):
        pade([1, 2, 3], 3, 3, 0.1)


def test_borel_pade_sums_the_euler_series():
    # Borel transform of Σ(−1)^k k! λ^k is 1/(1 + s): any [L/M] with M ≥ 1 is exact, so the
    # Laplace integral must give e^{1/λ}E₁(1/λ)/λ (Hardy 1949) to quadrature accuracy.
    c = euler_series(12)
    lam = np.array([0.1, 0.5, 2.0])
    res = borel_pade(c, lam)
    np.testing.assert_allclose(res.value, [euler_sum(x) for x in lam], rtol=RTOL_QUAD)
    assert not res.on_path.any()
    # the Borel singularity at s = −1; 1e-10: a root of a Padé denominator fitted to 12 terms
    assert np.min(np.abs(res.poles + 1)) < 1e-10


def test_borel_pade_reports_a_pole_on_the_path():
    # At λ < 0 the ray s = λt runs into the pole at s = −1: no Borel sum (Hardy 1949).
    res = borel_pade(euler_series(8), -0.5)
    assert bool(res.on_path) and math.isnan(float(res.value))


def test_optimal_truncation_of_a_stieltjes_series_bounds_the_error():
    # For a Stieltjes series the error of a partial sum is below the first omitted term
    # (Bender & Orszag, Advanced Mathematical Methods (1978), §8.6); at λ = 0.09 the terms
    # k! λ^k are smallest at k = 11 (11·0.09 < 1 < 12·0.09).
    res = optimal_truncation(euler_series(30), 0.09)
    assert res.order == 11 and not res.reached_end
    assert abs(res.value - euler_sum(0.09)) <= res.error
    assert res.error == pytest.approx(math.factorial(11) * 0.09**11, rel=RTOL_ROUNDING)


def test_optimal_truncation_of_a_convergent_series_reaches_the_end():
    res = optimal_truncation([1] * 20, 0.5)  # geometric: terms keep decreasing
    assert res.reached_end and res.order == 19
    assert res.value == pytest.approx(2 * (1 - 0.5**19), rel=RTOL_ROUNDING)


def test_large_order_of_euler_series():
    # k! = Γ(k + 1): rate 1, power 1, shift 1, constant 1, alternating (definition).
    lo = large_order(euler_series(40))
    assert (lo.kind, lo.power, lo.sign) == ("factorial", 1, "alternating")
    assert lo.rate == pytest.approx(1.0, rel=RTOL_RATE)
    assert lo.shift == pytest.approx(1.0, abs=ATOL_SHIFT)
    assert lo.constant == pytest.approx(1.0, rel=RTOL_CONSTANT)


def test_large_order_of_quartic_oscillator_matches_bender_wu():
    # E_k ~ (−1)^{k+1} √(6/π³) 3^k Γ(k + ½) (Bender & Wu, Phys. Rev. 184, 1231 (1969)).
    lo = large_order(rs_exact_1d({4: 1}, 0, 100))
    assert (lo.kind, lo.power, lo.sign, lo.step) == ("factorial", 1, "alternating", 1)
    assert lo.rate == pytest.approx(3.0, rel=RTOL_RATE)
    assert lo.shift == pytest.approx(0.5, abs=ATOL_SHIFT)
    assert lo.constant == pytest.approx(math.sqrt(6 / math.pi**3), rel=RTOL_CONSTANT)


def test_large_order_of_convergent_series_gives_the_radius():
    # ½√(1 + 2λ): binomial series, radius 1/2, |c_k| ~ k^{−3/2} 2^k/(4√π) (Stirling).
    c, binom = [], Fraction(1)
    for k in range(41):
        c.append(binom * 2**k / 2)
        binom = binom * (Fraction(1, 2) - k) / (k + 1)
    lo = large_order(c)
    assert lo.kind == "geometric" and lo.supported  # 40 smooth orders: a radius is claimed
    assert lo.radius == pytest.approx(0.5, rel=RTOL_RATE)
    assert lo.shift == pytest.approx(-1.5, abs=ATOL_SHIFT)
    assert lo.constant == pytest.approx(1 / (4 * math.sqrt(math.pi)), rel=RTOL_CONSTANT)


def test_large_order_detects_a_series_in_lambda_squared():
    # Odd orders of the cubic oscillator vanish by x → −x symmetry (common practice).
    lo = large_order(rs_exact_1d({3: 1}, 0, 40))
    assert lo.step == 2 and lo.kind == "factorial" and lo.sign == "fixed"


def test_rounding_noise_in_vanishing_orders_is_treated_as_zero():
    # Odd orders of the cubic vanish by symmetry (common practice); noise of 1e-15 relative
    # (what the float engine leaves) must not change the analysis of the exact series.
    exact = rs_exact_1d({3: 1}, 0, 30)
    noisy = [float(c) if k % 2 == 0 else 1e-15 * float(exact[k - 1]) for k, c in
             enumerate(exact)]
    a, b = large_order(exact), large_order(noisy)
    # rel 1e-12: noise of 1e-15 in the odd orders, dropped, leaves the even-order fit at rounding
    assert b.step == 2 and b.rate == pytest.approx(a.rate, rel=1e-12)
    assert optimal_truncation(noisy, 0.05).order == optimal_truncation(exact, 0.05).order


@pytest.mark.parametrize("c0", [1.5, -2.25, 3.5])
def test_resummations_of_a_series_without_corrections_return_its_first_term(c0):
    # A series c0 + 0λ + 0λ² + … is the constant c0; every Padé [L/M] and its Borel sum are
    # exactly c0 (Baker & Graves-Morris, Padé Approximants, ch. 1: the Padé table of a
    # polynomial). Regression: [0/0] once evaluated to 1, and [5/5] raised on the singular
    # system.
    coeffs = [c0] + [0.0] * 10
    # rel 1e-14: exact rational arithmetic on doubles; 1e-12 for the Laplace quadrature
    assert float(pade(coeffs, 5, 5, 1.0)) == pytest.approx(c0, rel=1e-14)
    assert float(borel_pade(coeffs, 1.0).value) == pytest.approx(c0, rel=1e-12)
    assert float(pade(coeffs, 0, 0, 0.7)) == pytest.approx(c0, rel=1e-14)
