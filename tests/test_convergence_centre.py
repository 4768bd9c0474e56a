"""The centre of the 1D basis without symmetry in convergence studies (issue 10).

The Hermite basis of ``converge`` on the line without symmetry is centred on the smallest
phase-space disk that holds the classical orbit of the highest requested level and its
evanescent tails (``anharmony.reference.basis_centre``), no longer at the minimum. Checked
against Morse's exact levels (P. M. Morse, Phys. Rev. 34, 57 (1929)): E_v = ħω(v + ½) −
[ħω(v + ½)]²/(4D), ħω = 2D/λ, λ = sqrt(2mD)/(αħ), bound for v < λ − ½; turning points found
with scipy's brentq on V(x) = E; symmetry points by the symmetry of the well (common practice,
no source: the smallest disk holding a mirror-symmetric set is centred on the mirror).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

import anharmony as ah
from anharmony.convergence import converge
from anharmony.hamiltonian import Channel
from anharmony.reference import basis_centre, reference_oscillator

LINE = Channel(1, None)


def _morse(lam: float, units: str = "oscillator", mass: float | None = None,
           depth: float | None = None) -> tuple[ah.Well, np.ndarray]:
    """Morse well of width α = 1 with the given λ (or depth) and its exact levels."""
    c = ah.units.get_units(units).hbar2_over_2m(mass)
    alpha = 1.0 if depth is None else math.sqrt(depth / c) / lam
    depth = lam**2 * c * alpha**2 if depth is None else depth
    well = ah.Well.from_terms([{"morse": {"depth": depth, "width": alpha}}], units=units,
                              mass=mass)
    hw = 2.0 * depth / lam
    v = np.arange(math.floor(lam - 0.5) + 1)
    return well, hw * (v + 0.5) - (hw * (v + 0.5)) ** 2 / (4.0 * depth)


def _quiet_converge(*args, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # unconverged levels are asserted on, not warned
        return converge(*args, **kw)


def _check_levels(report, exact: np.ndarray) -> None:
    err = np.abs(report.energies - exact)
    # each true error within its estimate (plus the rounding of the exact formula, 1e-14 |E|)
    assert np.all(err <= report.error_estimate + 1e-14 * np.abs(exact)), (err,
                                                                          report.error_estimate)
    assert report.converged.all(), report.error_estimate


@pytest.mark.slow  # about 5 s alone (sizes to 452, the last level bound by 38 cm⁻¹)
def test_all_25_morse_levels_converge_and_each_error_is_within_its_estimate():
    # D = 38000 cm⁻¹, λ = 25.3, μ = 0.96 u (benchmarks/bench_convergence.py morse25)
    well, exact = _morse(25.3, "molecular", 0.96, depth=38000.0)
    assert exact.size == 25
    r = _quiet_converge(well, 1, None, levels=25, units="molecular", mass=0.96,
                        tolerance=1e-4)
    _check_levels(r, exact)
    assert r.center > 1.0  # off the minimum (x = 0), towards the long outer tail


def test_a_shallow_morse_well_converges_to_its_near_threshold_level():
    # λ = 8.3: eight levels, the last bound by ħ²α²(λ − v − ½)²/2m = 0.32, 0.04 ħω
    well, exact = _morse(8.3)
    assert exact.size == 8
    r = _quiet_converge(well, 1, None, levels=8, tolerance=1e-6)
    _check_levels(r, exact)
    assert r.center > 0.5  # the basis moved towards the outer tail
    assert "phase-space disk" in r.center_reason


@pytest.mark.parametrize("terms, point", [
    ([{"gaussian": {"depth": 10.0, "range": 1.0}}], 0.0),
    ([{"poschl_teller": {"depth": 17.875, "range": 1.0, "center": 1.3}}], 1.3),
    # a symmetric double well: the reference sits in one minimum, the basis in the middle
    ([{"polynomial": {"coefficients": {2: -4.0, 4: 1.0}}}], 0.0),
    ([{"polynomial": {"coefficients": {2: 0.5, 4: 0.1}, "center": -0.7}}], -0.7),
])
def test_the_centre_of_a_symmetric_well_is_its_symmetry_point(terms, point):
    well = ah.Well.from_terms(terms)
    ref = reference_oscillator(well, 1, None, None, 6)
    for size in (None, 20, 200):
        x0, why = basis_centre(well, LINE, 6, 1e-8, ref, size)
        assert x0 == point, why  # exactly: the symmetry point is kept, not searched for
    r = _quiet_converge(well, 1, None, levels=4, tolerance=1e-6, max_size=40)
    assert r.center == point


def _turning_points(well: ah.Well, energy: float, x_min: float, lo: float, hi: float
                    ) -> tuple[float, float]:
    f = lambda x: float(well.value(np.array([x]))[0]) - energy  # noqa: E731
    return brentq(f, lo, x_min), brentq(f, x_min, hi)


@pytest.mark.parametrize("case", ["morse", "tilted double well"])
def test_an_asymmetric_well_basis_covers_both_turning_points_of_the_highest_level(case):
    if case == "morse":
        well, exact = _morse(8.3)
        levels, e_top, x_min, lo, hi = 8, float(exact[-1]), 0.0, -5.0, 40.0
    else:  # x⁴ − 4x² + 0.6x: its highest requested level from the study itself
        well = ah.Well.from_terms([{"polynomial": {"coefficients": {1: 0.6, 2: -4.0,
                                                                    4: 1.0}}}])
        levels, e_top, x_min, lo, hi = 8, None, 0.0, -6.0, 6.0
    r = _quiet_converge(well, 1, None, levels=levels, tolerance=1e-6)
    if e_top is None:
        e_top = float(r.energies[-1])
        x_min = float(well.minimum()[0])
        # the level lies above the barrier top V(≈0), so one orbit spans both wells
        assert e_top > float(well.value(np.array([0.0]))[0])
    x_lo, x_hi = _turning_points(well, e_top, x_min, lo, hi)
    b = float(r.best_lengths[-1])
    reach = math.sqrt(2 * r.size + 1) * b  # the classical reach of the basis' highest state
    assert r.center - reach < x_lo and x_hi < r.center + reach
    # and the highest level is within its estimate of the exact one (Morse only)
    if case == "morse":
        assert abs(r.energies[-1] - e_top) <= r.error_estimate[-1] + 1e-14 * e_top


def test_a_well_centred_study_keeps_a_given_centre_and_radial_channels_the_origin():
    well, _ = _morse(8.3)
    r = _quiet_converge(well, 1, None, levels=3, tolerance=1e-6,
                        reference={"frequency": 1.0, "center": 0.25})
    assert r.center == 0.25
    ho = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                             {"power": {"exponent": 4, "strength": 0.1}}])
    assert _quiet_converge(ho, 3, 0, levels=2, tolerance=1e-6).center == 0.0
