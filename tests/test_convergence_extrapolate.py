"""Extrapolation models, infrared lengths and settings of anharmony.convergence.

The sequences here are built from the models themselves (E∞ + A e^{−kx}), so the exact E∞
is known by construction (common practice, no source); the Bessel zeros come from scipy and
Abramowitz & Stegun.
"""

import math

import numpy as np
import pytest
from scipy.special import jn_zeros

from anharmony.basis import HermiteBasis, RadialBasis
from anharmony.convergence import (
    ConvergenceSettings,
    closed_form_length,
    extrapolate_exponential,
    extrapolate_infrared,
    extrapolate_infrared_binding,
    extrapolate_power,
    infrared_length,
    size_ladder,
)
from anharmony.convergence.scans import bessel_zero

ATOL_MODEL = 1e-10  # an exact model sequence is reproduced to rounding (values O(1))
RTOL_ZERO = 1e-12  # brentq polishes Bessel zeros to ~1e-15
RTOL_L2 = 1e-3  # L2 is the large-N form of the eigenvalue L (More et al. 2013): ≤ 1.2e-4 at N = 60
RTOL_FIT = 1e-10  # fitted rates/consistencies of exact model sequences: measured ≤ 1.5e-12


def test_exponential_model_sequence_is_extrapolated_to_its_limit():
    # E(N) = 2 + 3 e^{-0.7 N}: the exact limit is 2 by construction.
    n = np.array([4, 6, 8, 10, 12, 14])
    e = 2.0 + 3.0 * np.exp(-0.7 * n)
    fit = extrapolate_exponential(n, e)
    assert fit.valid
    assert abs(fit.value - 2.0) < ATOL_MODEL
    assert fit.uncertainty < ATOL_MODEL
    assert fit.rate == pytest.approx(0.7, rel=RTOL_FIT)
    assert fit.quality == pytest.approx(1.0, abs=RTOL_FIT)  # log-linear by construction


def test_power_law_model_sequence_is_extrapolated_to_its_limit():
    # E(N) = -1 + 5 N^{-2.5}: limit -1 by construction; an exponential fit must not claim it.
    n = np.array([10, 14, 20, 28, 40, 57])
    e = -1.0 + 5.0 * n**-2.5
    fit = extrapolate_power(n, e)
    assert fit.valid
    assert abs(fit.value + 1.0) < ATOL_MODEL
    assert fit.rate == pytest.approx(2.5, rel=RTOL_FIT)
    exp_fit = extrapolate_exponential(n, e)
    # the exponential model underestimates the slow tail; its uncertainty must say so
    assert not exp_fit.valid or abs(exp_fit.value + 1.0) <= exp_fit.uncertainty


def test_infrared_fit_accepts_the_predicted_decay_and_rejects_another():
    # Threshold 0, ħ²/2m = 1/2, E∞ = -1/8 → κ∞ = 1/2, so the IR tail decays as e^{-2κ∞L} = e^{-L}
    # (Furnstahl, Hagen & Papenbrock, PRC 86, 031301 (2012)).
    big_l = np.array([8.0, 10.0, 12.0, 14.0, 16.0])
    good = -0.125 + 3.0 * np.exp(-1.0 * big_l)
    fit = extrapolate_infrared(big_l, good, threshold=0.0, hbar2_2m=0.5)
    assert fit.valid
    assert abs(fit.value + 0.125) < ATOL_MODEL
    assert fit.consistency == pytest.approx(1.0, abs=RTOL_FIT)
    wrong = -0.125 + 3.0 * np.exp(-0.5 * big_l)  # decays at half the predicted rate
    bad = extrapolate_infrared(big_l, wrong, threshold=0.0, hbar2_2m=0.5)
    assert not bad.valid
    assert "infrared regime" in bad.note
    none = extrapolate_infrared(big_l, good, threshold=math.inf, hbar2_2m=0.5)
    assert not none.valid and "threshold" in none.note


def test_infrared_binding_fit_recovers_the_limit_with_the_theoretical_decay():
    # Same tail as above, but with k = 2κ∞ tied to E∞ (More et al., PRC 87, 044326 (2013)):
    # two points give E∞, the third checks the ratio of the changes.
    big_l = np.array([8.0, 10.0, 12.0, 14.0])
    good = -0.125 + 3.0 * np.exp(-1.0 * big_l)
    fit = extrapolate_infrared_binding(big_l, good, threshold=0.0, hbar2_2m=0.5)
    assert fit.valid
    assert abs(fit.value + 0.125) < ATOL_MODEL
    assert fit.rate == pytest.approx(1.0, rel=RTOL_FIT)
    assert fit.consistency == pytest.approx(1.0, rel=RTOL_FIT)
    wrong = -0.125 + 3.0 * np.exp(-0.4 * big_l)
    assert not extrapolate_infrared_binding(big_l, wrong, threshold=0.0, hbar2_2m=0.5).valid


def test_rising_sequence_is_not_extrapolated():
    n = np.array([10, 20, 30, 40])
    fit = extrapolate_exponential(n, np.array([1.0, 0.9, 0.95, 0.97]))
    assert not fit.valid
    assert math.isnan(fit.value) and fit.uncertainty == math.inf


def test_three_sizes_give_the_last_change_or_the_whole_correction_as_uncertainty():
    # no fourth point tests the rate: the uncertainty is the larger of the correction
    # E_last − E∞ and the last change (common practice, no source)
    n = np.array([4, 6, 8])
    e = 1.0 + np.exp(-n)
    fit = extrapolate_exponential(n, e)
    assert fit.valid
    assert fit.uncertainty == pytest.approx(max(e[-1] - fit.value, e[-2] - e[-1]),
                                            rel=RTOL_FIT)
    assert fit.uncertainty >= e[-1] - 1.0  # the exact remainder e^{-8}


@pytest.mark.parametrize("nu", [0.0, 1.0, 2.0, 5.0])
def test_bessel_zero_matches_scipy_for_integer_order(nu):
    # scipy.special.jn_zeros: zeros of J_n for integer n.
    assert bessel_zero(nu) == pytest.approx(jn_zeros(int(nu), 1)[0], rel=RTOL_ZERO)


def test_bessel_zero_for_half_integer_order_is_the_spherical_bessel_zero():
    # J_{1/2} ∝ sin x / sqrt(x): zero π; J_{3/2}: tan x = x, first root 4.493409457909064
    # (Abramowitz & Stegun, Table 10.6).
    assert bessel_zero(0.5) == pytest.approx(math.pi, rel=RTOL_ZERO)
    assert bessel_zero(1.5) == pytest.approx(4.493409457909064, rel=RTOL_ZERO)
    assert bessel_zero(-0.5) == pytest.approx(math.pi / 2, rel=RTOL_ZERO)


@pytest.mark.parametrize(("l", "dimension"), [(0, 3), (2, 3), (1, 2), (0, 1)])
def test_infrared_length_approaches_the_closed_form_at_large_size(l, dimension):
    # More et al., PRC 87, 044326 (2013): L2 = sqrt(2(N + 3/2 + 2)) b is the large-N limit of
    # the box radius that the truncated basis imitates (d = 3; d/2 in place of 3/2 here).
    basis = RadialBasis(60, 1.7, l, dimension)
    assert infrared_length(basis) == pytest.approx(closed_form_length(basis), rel=RTOL_L2)


def test_infrared_length_grows_with_size_and_scales_with_b():
    # L ∝ b at fixed size (dimensional analysis), and the box grows with the basis.
    a, b = RadialBasis(20, 1.0, 0, 3), RadialBasis(20, 2.5, 0, 3)
    assert infrared_length(b) == pytest.approx(2.5 * infrared_length(a), rel=1e-12)  # rounding
    assert infrared_length(RadialBasis(40, 1.0, 0, 3)) > infrared_length(a)
    h = HermiteBasis(30, 1.0)
    # 1D, N = 30 is not yet large: the closed form is 1.6 % off the eigenvalue form (measured)
    assert infrared_length(h) == pytest.approx(closed_form_length(h), rel=0.03)


def test_size_ladder_is_geometric_and_ends_at_the_limit():
    ladder = size_ladder(10, 100)
    assert ladder[0] == 10 and ladder[-1] == 100
    assert list(ladder) == sorted(set(ladder))
    ratios = np.array(ladder[1:-1]) / np.array(ladder[:-2])
    # sizes are integers: rounding moves a ratio by ≤ 0.5/10 = 5 % at the bottom (measured 1 %)
    assert np.allclose(ratios, math.sqrt(2.0), rtol=0.06)


def test_settings_from_a_case_block_and_back_to_keywords():
    s = ConvergenceSettings.from_mapping({"sizes": [40, 10, 20], "tolerance": 1e-9,
                                          "cross_check": True, "lengths": "auto"})
    assert s.sizes == (10, 20, 40)
    kw = s.keywords()
    assert kw["tolerance"] == 1e-9 and kw["lengths"] == "auto" and kw["cross_check"] is True


@pytest.mark.parametrize(("block", "fragment"), [
    ({"tolerence": 1e-6}, "convergence.tolerence: unknown key (did you mean 'tolerance'?)"),
    ({"sizes": [10, "x"]}, "convergence.sizes[1]"),
    ({"sizes": [10, 10]}, "convergence.sizes: sizes must be distinct"),
    ({"tolerance": -1.0}, "convergence.tolerance: must be a positive number; got -1.0"),
    ({"lengths": [1.0, 0.0]}, "convergence.lengths[1]"),
    ({"lengths": [1.0], "frequencies": [2.0]}, "not both"),
    ({"cross_check": "yes"}, "convergence.cross_check: must be true or false"),
    ({"max_size": 1}, "convergence.max_size: must be an integer >= 2"),
    ({"ir_length": "box"}, "convergence.ir_length: must be one of eigenvalue, closed_form"),
    ({"estimate": "guess"}, "convergence.estimate: must be one of extrapolate, smaller_basis"),
    ({"grow": 1}, "convergence.grow: must be true or false"),
])
def test_settings_errors_name_the_field_and_the_value(block, fragment):
    with pytest.raises(ValueError) as info:
        ConvergenceSettings.from_mapping(block)
    assert fragment in str(info.value)


@pytest.mark.parametrize("last", [-0.4, 0.0, 0.3])  # the last change in units of the noise
def test_a_rounding_level_last_change_after_shrinking_ones_is_converged_not_refused(last):
    # E(N) = 2 + 3 e^{-0.9 N} down to rounding: the last step is at the noise level (here
    # slightly up, zero or down). No three-point model passes through a non-positive last
    # change, but the sequence has converged: the limit 2 (by construction) must lie within the
    # uncertainty, which must stay at the noise scale.
    noise = 1e-9
    n = np.array([8, 12, 17, 25, 35, 49])
    e = 2.0 + 3.0 * np.exp(-0.9 * n)
    e[-1] = e[-2] - last * noise
    fit = extrapolate_exponential(n, e, noise=noise)
    assert fit.valid
    assert abs(fit.value - 2.0) <= fit.uncertainty
    assert fit.uncertainty <= 3.0 * noise


def test_a_plateau_after_one_large_step_is_still_refused():
    # a single large drop and then a flat step (a level still entering the basis) is not
    # evidence of convergence: the changes must have been shrinking before the flat one
    noise = 1e-9
    e = np.array([5.0, 4.0, 3.9, 3.0, 3.0])
    fit = extrapolate_exponential(np.array([8, 12, 17, 25, 35]), e, noise=noise)
    assert not fit.valid
