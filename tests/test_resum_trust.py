"""Trusted resummed values hold the true level, or are not trusted and say why.

The rule (never a silent wrong answer): a Padé or Borel–Padé value of a series is either
trusted with an uncertainty that contains the level, or ``trusted`` is False with a reason.
The wells here are ones where the approximants agree with each other but not with the level:
Gaussian wells (λ = 1 on the radius of convergence), the Morse well of the molecular demo and
cubic + quartic wells with a second minimum. The truth is a sinc DVR (Colbert & Miller,
J. Chem. Phys. 96, 1982 (1992)) or the Morse closed form (Morse, Phys. Rev. 34, 57 (1929)).
"""

import functools
import math
import warnings

import numpy as np
import pytest
import scipy.constants as sc
import scipy.linalg as la

import anharmony as ah
from anharmony.series import optimal_truncation

ORDERS = 30  # the reviewer's defaults: ah.series(..., orders=30), then ser.<method>(1.0)
# The DVR boxes and grids below agree with boxes 1.5× as wide and grids 1.8× as fine to
# 1e-10 (measured), far below every uncertainty tested (≥ 1e-5): the truth is exact here.
RTOL_GEOMETRIC = 1e-12  # the tail of a geometric series summed in closed form: rounding


def dvr_levels(potential, half_width: float, points: int, count: int) -> np.ndarray:
    """Lowest levels of p²/2 + V(x) by the sinc DVR of Colbert & Miller (1992)."""
    x = np.linspace(-half_width, half_width, points)
    h = x[1] - x[0]
    d = np.arange(points)[:, None] - np.arange(points)[None, :]
    with np.errstate(divide="ignore"):
        t = np.where(d == 0, np.pi**2 / 3, 2.0 * (-1.0) ** d / np.where(d == 0, 1, d) ** 2)
    return la.eigh(0.5 * t / h**2 + np.diag(potential(x)), eigvals_only=True,
                   subset_by_index=[0, count - 1])


@functools.cache
def gaussian_truth(depth: float) -> np.ndarray:
    return dvr_levels(lambda x: -depth * np.exp(-x * x), 40.0, 1000, 4)


@functools.cache
def cubic_quartic_truth(c3: float, c4: float) -> np.ndarray:
    return dvr_levels(lambda x: 0.5 * x * x + c3 * x**3 + c4 * x**4, 14.0, 800, 2)


@functools.cache
def level_series(kind: str, params: tuple, level: int):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if kind == "gaussian":
            well = ah.Well.from_terms([{"gaussian": {"depth": params[0], "range": 1.0}}])
            return ah.series(well, dimension=1, l=None, level=level, orders=ORDERS)
        if kind == "morse":
            well = ah.Well.from_terms([{"morse": {"depth": MORSE_D, "width": MORSE_A,
                                                  "center": 0.93}}])
            return ah.series(well, dimension=1, l=None, level=level, orders=ORDERS,
                             units="molecular", mass=MORSE_MU)
        c3, c4 = params
        well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                   {"power": {"exponent": 3, "strength": c3}},
                                   {"power": {"exponent": 4, "strength": c4}}])
        return ah.series(well, dimension=1, l=None, level=level, orders=ORDERS)


# The molecular demo's Morse well: D = 38000 cm⁻¹, α = 2.1 Å⁻¹, μ = 0.96 u.
MORSE_D, MORSE_A, MORSE_MU = 38000.0, 2.1, 0.96


def morse_truth(v: int) -> float:
    # E_v = D − (ħ²α²/2μ)(λ_M − v − ½)², λ_M = sqrt(2μD)/(ħα) (Morse 1929), in cm⁻¹ with
    # ħ²/2μ from scipy.constants (CODATA).
    b = sc.hbar**2 / (2 * MORSE_MU * sc.atomic_mass * 1e-20) / (sc.h * sc.c * 100)
    lam = math.sqrt(MORSE_D / b) / MORSE_A
    return MORSE_D - b * MORSE_A**2 * (lam - v - 0.5) ** 2


CASES = [
    ("gaussian", (10.0,), 3), ("gaussian", (3.0,), 1), ("gaussian", (1.0,), 0),
    ("morse", (), 3), ("morse", (), 8),
    ("cubic_quartic", (0.3, 0.05), 0), ("cubic_quartic", (0.3, 0.05), 1),
    ("cubic_quartic", (0.25, 0.05), 1),
]
IDS = [f"{k}-{'-'.join(f'{p:g}' for p in ps)}-v{v}" for k, ps, v in CASES]


def truth_of(kind: str, params: tuple, level: int) -> float:
    if kind == "gaussian":
        return float(gaussian_truth(*params)[level])
    if kind == "morse":
        return morse_truth(level)
    return float(cubic_quartic_truth(*params)[level])


@pytest.mark.parametrize("method", ["pade", "borel_pade"])
@pytest.mark.parametrize(("kind", "params", "level"), CASES, ids=IDS)
def test_a_trusted_value_holds_the_level(kind, params, level, method):
    res = getattr(level_series(kind, params, level), method)(1.0)
    truth = truth_of(kind, params, level)
    value, unc = float(res.value), float(res.uncertainty)
    if bool(res.trusted):
        assert abs(value - truth) <= unc, (value, unc, truth, res.reason)
    else:
        assert "not trusted" in res.reason[0] or "spread" in res.reason[0] \
            or "no usable" in res.reason[0], res.reason


@pytest.mark.parametrize("depth", [10.0, 3.0])
def test_gaussian_well_at_its_radius_of_convergence_names_it(depth):
    # λ = 1 sits on the radius of convergence (the coupled well opens for λ > 1): the
    # reason names R and λ, and the uncertainty is at least the geometric tail estimate.
    level = {10.0: 3, 3.0: 1}[depth]
    res = level_series("gaussian", (depth,), level).borel_pade(1.0)
    assert not bool(res.trusted)
    assert "radius of convergence R =" in res.reason[0] and "λ = 1" in res.reason[0]
    assert abs(float(res.value) - truth_of("gaussian", (depth,), level)) \
        <= float(res.uncertainty)


def test_morse_well_is_not_trusted_at_unit_coupling_and_says_why():
    res = level_series("morse", (), 8).pade(1.0)
    assert not bool(res.trusted)
    assert "not confining" in res.reason[0]


def test_a_confining_well_with_a_settled_series_stays_trusted():
    # ½x² + 0.2x³ + 0.05x⁴: one minimum, factorial growth settled by order 30; both sums
    # stay trusted and hold the DVR level (the fix does not untrust everything).
    truth = truth_of("cubic_quartic", (0.2, 0.05), 0)
    ser = level_series("cubic_quartic", (0.2, 0.05), 0)
    for res in (ser.pade(1.0), ser.borel_pade(1.0)):
        assert bool(res.trusted), res.reason
        assert abs(float(res.value) - truth) <= float(res.uncertainty)


@pytest.mark.parametrize(("depth", "level"), [(10.0, 3), (3.0, 1), (1.0, 0)])
def test_optimal_truncation_at_the_last_order_bounds_the_slow_tail(depth, level):
    ot = level_series("gaussian", (depth,), level).optimal_truncation(1.0)
    assert ot.reached_end
    assert abs(ot.value - truth_of("gaussian", (depth,), level)) <= ot.error


def test_optimal_truncation_tail_of_a_geometric_series_is_its_remainder():
    # Σ 0.9^k: the terms from k = 29 on sum to 0.9^29/(1 − 0.9) (geometric series).
    ot = optimal_truncation([1] * 30, 0.9)
    assert ot.reached_end and ot.order == 29
    assert ot.error == pytest.approx(0.9**29 / 0.1, rel=RTOL_GEOMETRIC)
    assert abs(ot.value - 10.0) == pytest.approx(ot.error, rel=1e-10)  # exact remainder


@pytest.mark.parametrize("v", [3, 8])
def test_optimal_truncation_where_no_term_decreases_bounds_the_morse_level(v):
    # The Morse series' terms grow from the first correction on (smallest at order 1): the
    # first correction alone was under the true error (883 for 949, 5407 for 5595 cm⁻¹).
    ot = level_series("morse", (), v).optimal_truncation(1.0)
    assert ot.order == 1 and not ot.reached_end
    assert abs(ot.value - morse_truth(v)) <= ot.error
