"""What verdicts and large-order claims say, and that they say only what the orders support."""

import math

import numpy as np
from scipy.special import exp1, gammaln

import anharmony as ah
from anharmony.plots.series import large_order_curve
from anharmony.series import partial_sum_verdict, series


def euler_terms(order: int) -> list[int]:
    """Σ (−1)^k k! λ^k; Borel sum e^{1/λ} E₁(1/λ)/λ (Hardy, *Divergent Series* (1949), §2.4)."""
    return [(-1) ** k * math.factorial(k) for k in range(order + 1)]


def euler_sum(lam: float) -> float:
    return math.exp(1 / lam) * exp1(1 / lam) / lam


def test_a_series_still_improving_at_its_last_order_is_not_called_poor():
    # Σ 2^{−k} = 2 (geometric series): after 8 orders the sums still approach 2.
    sums = np.cumsum(0.5 ** np.arange(9))
    text = partial_sum_verdict(np.abs(sums - 2.0), 1e-6)
    assert "poor" not in text
    assert text.startswith("still improving at order 8") and "more orders" in text


def test_a_divergent_series_is_asymptotic_with_its_best_order_and_the_orders_used():
    # Euler's series at λ = 0.2: the terms k! 0.2^k are smallest near k = 5 (Bender &
    # Orszag, Advanced Mathematical Methods (1978), §3.8), so the best sum is inside 0..20.
    c = np.array(euler_terms(20), dtype=float)
    sums = np.cumsum(c * 0.2 ** np.arange(21))
    text = partial_sum_verdict(np.abs(sums - euler_sum(0.2)), 1e-9)
    assert text.startswith("asymptotic: best order") and "of 20" in text


def test_poor_only_when_no_order_improves_on_the_first():
    # Euler's series at λ = 2: |S_k − E| grows from k = 0 on (terms k! 2^k grow at once).
    c = np.array(euler_terms(6), dtype=float)
    sums = np.cumsum(c * 2.0 ** np.arange(7))
    text = partial_sum_verdict(np.abs(sums - euler_sum(2.0)), 1e-6)
    assert text.startswith("poor") and "up to 6" in text


def test_within_names_the_order_and_how_many_orders_were_computed():
    sums = np.cumsum(0.5 ** np.arange(30))  # geometric series, closed form 2
    assert partial_sum_verdict(np.abs(sums - 2.0), 1e-6) == "order 20 within 1e-06 (29 orders)"


def test_no_radius_is_claimed_from_eight_orders_of_a_morse_series():
    # The Morse level is ħω(n + ½) − [ħω(n + ½)]²/(4D) (Morse, Phys. Rev. 34, 57 (1929)); the
    # partial sums of its series at λ = 1 oscillate about it within 0.2 % by order 8, so a
    # radius below 1 (0.308 was once printed) contradicts them. Eight orders do not reach
    # the large-order regime: nothing is claimed, and the note says what it rests on.
    well = ah.Well.from_terms([{"morse": {"depth": 38000.0, "width": 2.1, "center": 0.93}}],
                              units="molecular", mass=0.96)
    ser = series(well, dimension=1, l=None, orders=8, units="molecular", mass=0.96)
    hw = ser.reference.frequency
    exact = hw / 2 - (hw / 2) ** 2 / (4 * 38000.0)
    assert abs(ser.partial_sums(1.0)[-1] - exact) < 2e-3 * exact
    lo = ser.large_order()
    assert not lo.supported and math.isnan(lo.radius)
    assert lo.orders == 8 and "0…8" in lo.note and "no radius" in lo.note


def test_fit_formula_uses_the_axis_variable_k():
    # E_k = 3^k Γ(k + ½) (the quartic's growth, Bender & Wu, Phys. Rev. 184, 1231 (1969)):
    # the label must read Γ(k…) in the axis' k, not Γ(1m…).
    k = np.arange(21, dtype=float)
    e = np.exp(k * math.log(3.0) + gammaln(k + 0.5)) * (-1.0) ** k
    _, _, formula = large_order_curve(k, e)
    assert "Γ(k+0.5" in formula and "1m" not in formula and "^m" not in formula
    assert "(20 orders)" in formula
