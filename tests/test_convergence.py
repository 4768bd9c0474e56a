"""Convergence of oscillator-basis levels, checked against solvers and values from outside.

References: the independent finite-difference and shooting solvers of tests/refsolvers.py
(scipy only); the quartic eigenvalue credited to Hioe & Montroll, J. Math. Phys. 16, 1945
(1975) (quoted from memory, digits verified in test_exact_solutions.py); exact Pöschl–Teller
and Morse levels; the variational principle.
"""

import math
import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony import ConvergenceWarning
from anharmony.convergence import (
    converge,
    cross_check,
    extrapolate_exponential,
    residual_bounds,
    scan_basis,
)
from refsolvers import richardson_levels, shooting_level

W = ah.Well.from_terms

# Ground and first excited level of p² + x² + x⁴, quoted from memory and credited to Hioe &
# Montroll, J. Math. Phys. 16, 1945 (1975) (the credit is not re-checked against the paper);
# the digits are verified by a 30-digit mpmath diagonalisation in test_exact_solutions.py. In
# the package's oscillator units (ħ = m = 1) that is H = p²/2 + x²/2 + x⁴/2 with E = E0/2.
QUARTIC_E0 = 1.392351641530291855657 / 2
QUARTIC_E1 = 4.648812704212 / 2  # used only as the Kato–Temple gap check

REF_TOL_SHOOT = 1e-10  # shooting_level: DOP853 at rtol 1e-12 on an O(1) MeV level
REF_TOL_FD = 1e-9  # Richardson FD on three grids (its own error estimate is ~1e-11 here)
ATOL_ROUND = 1e-13  # rounding of eigenvalues of order one
FIT_R2 = 0.95  # measured R² of log(E_N − E0) vs N = 3…20 for the quartic: 0.99 (x⁴ couples
#                n to n ± 2 in the even channel, so the errors fall in a mild staircase)
FIT_R2_WINDOW = 0.9  # the same over the 5-point window of the extrapolation: measured 0.94

QUARTIC = [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.5}}]
# A Woods–Saxon neutron well (A = 40, r0 = 1.27 fm, a = 0.67 fm) deepened to 57.7 MeV so that
# its 3s level is bound by only 0.30 MeV: a near-threshold (halo-like) level.
WS_NEAR = [{"woods_saxon": {"depth": 57.7, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}}]
GAUSS = [{"gaussian": {"depth": 12.0, "range": 1.0}}]  # 2nd s level at 3 % of the depth


@pytest.fixture(scope="module")
def ws_report():
    well = W(WS_NEAR, units="nuclear")
    return converge(well, 3, 0, levels=3, units="nuclear", sizes=[14, 20, 28, 40, 57, 80],
                    cross_check=True, warn=False)


@pytest.fixture(scope="module")
def ws_reference():
    well = W(WS_NEAR, units="nuclear")
    c = well.units.hbar2_over_2m()
    return shooting_level(well.value, 0, c, 2, r_max=300.0)  # 3s: two nodes


def test_near_threshold_woods_saxon_level_is_bracketed(ws_report, ws_reference):
    # Independent reference: shooting + matching (tests/refsolvers.py, scipy solve_ivp).
    r = ws_report
    assert r.bound[2] and -0.5 < r.energies[2] < 0.0  # within 0.5 MeV of the threshold
    assert abs(r.extrapolated[2] - ws_reference) <= r.uncertainty[2] + REF_TOL_SHOOT
    assert r.uncertainty[2] < 1e-4  # informative: far below the 0.3 MeV binding
    # the error estimate of the Ritz value covers its true error
    assert r.energies[2] - ws_reference <= r.error_estimate[2] + REF_TOL_SHOOT
    assert r.energies[2] >= ws_reference - REF_TOL_SHOOT  # Ritz value is an upper bound


def test_infrared_extrapolation_applies_and_brackets_near_threshold(ws_report, ws_reference):
    # Furnstahl, Hagen & Papenbrock, PRC 86, 031301 (2012): E(L) = E∞ + a e^{-2k∞L}; the fitted
    # decay must match 2κ∞ of the extrapolated binding energy.
    fit = ws_report.extrapolations[2]["infrared"]
    assert fit.valid, fit.note
    assert abs(fit.consistency - 1.0) < 0.1
    assert abs(fit.value - ws_reference) <= fit.uncertainty + REF_TOL_SHOOT
    assert fit.uncertainty < 1e-4  # informative: measured 7e-6 MeV on a 0.3 MeV binding


def test_gaussian_well_level_is_bracketed_by_a_fine_grid_solver():
    # Independent reference: finite differences with Richardson extrapolation (refsolvers).
    well = W(GAUSS)
    r = converge(well, 3, 0, levels=2, sizes=[10, 14, 20, 28, 40], warn=False)
    ref = richardson_levels(well.value, 0, 3, 0.5, r_max=40.0, levels=2,
                            grids=(2000, 4000, 8000))
    for k in range(2):
        tol = r.uncertainty[k] + ref.error[k] + REF_TOL_FD
        assert abs(r.extrapolated[k] - ref.energies[k]) <= tol
        assert r.energies[k] - ref.energies[k] <= r.error_estimate[k] + REF_TOL_FD
    assert r.uncertainty.max() < 1e-6  # informative for a level at 3 % of the depth


def test_quartic_ground_state_converges_exponentially_in_n():
    # Exponential convergence at fixed b: log(E_N − E0) is a straight line in N; fit quality
    # R² ≥ FIT_R2 over N = 3…20 (measured 0.99), against the Hioe–Montroll value.
    scan = scan_basis(W(QUARTIC), 1, 0, sizes=list(range(3, 21)), lengths=[0.7], levels=1)
    n, e = scan.sequence(0, 0)
    err = e - QUARTIC_E0
    assert np.all(np.diff(e) <= ATOL_ROUND)  # nested bases: never rising
    assert np.all(err > -ATOL_ROUND)  # Ritz values are upper bounds
    use = err > ATOL_ROUND  # below that the error is rounding, not basis truncation
    slope, icpt = np.polyfit(n[use], np.log(err[use]), 1)
    z = np.log(err[use])
    r2 = 1.0 - np.sum((z - (slope * n[use] + icpt)) ** 2) / np.sum((z - z.mean()) ** 2)
    assert r2 >= FIT_R2
    assert slope < -1.0  # more than a factor e per added even state
    fit = extrapolate_exponential(n[use][-5:], e[use][-5:], noise=float(scan.noise[-1, 0]))
    assert fit.valid and fit.quality >= FIT_R2_WINDOW
    assert abs(fit.value - QUARTIC_E0) <= fit.uncertainty + ATOL_ROUND


@pytest.mark.parametrize(("l", "size"), [(None, 30), (0, 15)])  # the same even states
def test_weinstein_interval_contains_the_published_quartic_level(l, size):
    # Weinstein (1934): [E − σ, E + σ] contains an eigenvalue; Kato–Temple with the next level
    # as gap gives E − σ²/(β − E) ≤ E0 ≤ E. σ from Hψ beyond the basis, exactly here.
    b = residual_bounds(W(QUARTIC), 1, l, size=size, levels=2)
    assert b.exact
    assert b.weinstein_lower[0] <= QUARTIC_E0 <= b.weinstein_upper[0]
    assert 0.0 < b.sigma[0] < 1e-2  # informative interval
    assert b.energies[0] >= QUARTIC_E0 - ATOL_ROUND  # Ritz value is an upper bound
    assert b.kato_temple_lower[0] <= QUARTIC_E0 + ATOL_ROUND
    assert b.energies[0] - b.kato_temple_lower[0] < b.sigma[0]  # KT is the tighter bound
    assert "upper bound" in b.note and "assumes" in b.assumption
    if l is None:  # next level of the parity-free basis is the odd one
        assert b.gap[0] <= QUARTIC_E1


def test_residual_bounds_of_a_woods_saxon_level_contain_the_reference(ws_reference):
    # Non-polynomial well: σ from the residual on a quadrature grid beyond the basis.
    b = residual_bounds(W(WS_NEAR, units="nuclear"), 3, 0, size=60, length=3.5, levels=3,
                        units="nuclear")
    assert not b.exact
    assert b.weinstein_lower[2] <= ws_reference <= b.weinstein_upper[2]
    assert b.sigma[2] < 0.05  # informative: narrower than the 0.3 MeV binding (σ = 0.012)
    lo = b.kato_temple_lower[2]
    assert math.isnan(lo) or lo <= ws_reference + REF_TOL_SHOOT


def test_tolerance_run_stops_growing_once_converged_and_records_the_size():
    tol = 1e-9
    r = converge(W(QUARTIC), 1, None, levels=2, tolerance=tol, warn=False)
    assert r.tolerance_driven and "converged at size" in r.stopped
    assert r.converged.all()
    assert r.size < r.size_limit
    sizes = [h[0] for h in r.history]
    assert sizes[-1] == r.size
    assert max(r.history[-1][1]) < tol  # the estimate met the tolerance at the final size…
    # …and at no earlier size after the first (a run never stops on a single size)
    assert all(max(h[1]) >= tol for h in r.history[1:-1])
    assert abs(r.energies[0] - QUARTIC_E0) < tol  # and the level really is that close


def test_level_that_cannot_converge_within_the_limit_is_flagged():
    well = W(WS_NEAR, units="nuclear")
    with pytest.warns(ConvergenceWarning, match=r"3s \(index 2\).*max_size"):
        r = converge(well, 3, 0, levels=3, units="nuclear", tolerance=1e-6, max_size=28)
    assert "size limit 28" in r.stopped and r.size == 28
    assert r.converged[:2].all() and not r.converged[2]
    assert r.error_estimate[2] > 1e-6  # the tolerance asked for above: missed
    assert len(r.messages) == 1 and "3s" in r.messages[0]


def test_discretised_continuum_levels_are_never_converged():
    well = W([{"gaussian": {"depth": 3.0, "range": 1.0}}])  # one bound s level only
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        r = converge(well, 3, 0, levels=2, sizes=[10, 14, 20])
    assert r.bound[0] and not r.bound[1]
    assert not r.converged[1]
    assert any("above the threshold" in str(w.message) for w in seen)


def test_scan_energies_are_upper_bounds_that_never_rise_with_the_size():
    # Hylleraas–Undheim–MacDonald: every Ritz value is above its exact level; nested bases.
    scan = scan_basis(W(QUARTIC), 1, None, sizes=[6, 10, 16, 24], levels=2)
    assert scan.energies.shape == (2, 4, scan.lengths.size)
    assert np.all(scan.energies[0] >= QUARTIC_E0 - ATOL_ROUND)
    assert np.all(np.diff(scan.energies, axis=1) <= ATOL_ROUND)
    b_opt = scan.optimal_length(0)
    assert scan.lengths[0] < b_opt < scan.lengths[-1]


def test_report_holds_the_scan_and_the_optimal_lengths(ws_report):
    r = ws_report
    assert r.scan_energies.shape == (3, r.sizes.size, r.lengths.size)
    assert r.optimal_lengths.shape == (3,) and np.all(r.optimal_lengths > 0)
    assert r.lengths[0] <= r.joint_length <= r.lengths[-1]
    models = {"exponential", "power", "infrared", "infrared_binding"}
    assert set(r.extrapolations[2]) == models
    assert all(m in models | {"kato_temple", "difference"} for m in r.method)
    assert any("upper bound" in n for n in r.notes)
    e = r.error_of(r.energies + 1e-3)
    # atol 1e-14: adding 1e-3 to levels of up to ~50 MeV rounds by one ulp (7e-15)
    np.testing.assert_allclose(e, r.error_estimate + 1e-3, rtol=0, atol=1e-14)


def test_cross_check_agrees_with_the_basis_result_near_threshold(ws_report, ws_reference):
    x = ws_report.cross_check
    assert x.method == "lagrange_laguerre" and x.converged
    assert abs(x.energies[2] - ws_reference) <= x.uncertainty[2] + REF_TOL_SHOOT
    assert x.uncertainty[2] < 1e-8  # informative: measured 3e-11 MeV
    assert abs(ws_report.cross_check_difference[2]) <= ws_report.error_estimate[2] + \
        x.uncertainty[2]


# Pöschl–Teller well −V0/cosh²(x/a): E_n = −(ħ²/2ma²)(s − n)², s(s+1) = 2mV0a²/ħ²
# (Landau & Lifshitz, Quantum Mechanics, §23, problem 4). V0 = 6, a = 1, ħ = m = 1: s = 3,
# levels −4.5 (n=0, even), −2 (n=1, odd), −0.5 (n=2, even). The 3D s wave takes the odd ones.
POSCHL = [{"poschl_teller": {"depth": 6.0, "range": 1.0}}]
ATOL_MESH = 1e-9  # cross-check meshes settle to ~1e-10 relative on O(1) levels


@pytest.mark.parametrize(("dimension", "l", "exact"), [
    (1, None, [-4.5, -2.0, -0.5]), (1, 0, [-4.5, -0.5]), (1, 1, [-2.0]), (3, 0, [-2.0])])
def test_cross_check_reproduces_poschl_teller_levels(dimension, l, exact):
    x = cross_check(W(POSCHL), dimension, l, levels=len(exact))
    assert x.method == ("lagrange_sinc" if l is None else "lagrange_laguerre")
    np.testing.assert_allclose(x.energies, exact, atol=ATOL_MESH)
    assert x.bound.all()


def test_cross_check_reproduces_morse_levels_on_the_line():
    # Morse, Phys. Rev. 34, 57 (1929): E_n = ħω(n+½) − [ħω(n+½)]²/(4D), ħω = α sqrt(2D/m).
    d, a = 10.0, 1.0
    hw = a * math.sqrt(2.0 * d)
    exact = [hw * (n + 0.5) - (hw * (n + 0.5)) ** 2 / (4.0 * d) for n in range(3)]
    x = cross_check(W([{"morse": {"depth": d, "width": a}}]), 1, None, levels=3)
    np.testing.assert_allclose(x.energies, exact, atol=ATOL_MESH)


@pytest.mark.parametrize(("dimension", "l"), [(3, 2), (2, 0), (2, 3)])
def test_cross_check_reproduces_oscillator_levels(dimension, l):
    # Textbook: E = ħω(2n + l + d/2).
    x = cross_check(W([{"harmonic": {"frequency": 1.0}}]), dimension, l, levels=3)
    np.testing.assert_allclose(x.energies, 2 * np.arange(3) + l + dimension / 2, atol=ATOL_MESH)


def test_arguments_are_validated_with_the_parameter_named():
    well = W(QUARTIC)
    with pytest.raises(ValueError, match="levels: must be an integer >= 1; got 0"):
        converge(well, 1, None, levels=0)
    with pytest.raises(ValueError, match="tolerance: must be a positive number"):
        converge(well, 1, None, tolerance=0.0)
    with pytest.raises(ValueError, match=r"lengths\[0\]: must be a positive number"):
        scan_basis(well, 1, None, lengths=[-1.0])
    with pytest.raises(ValueError, match="ir_length"):
        converge(well, 1, None, ir_length="box")
    with pytest.raises(TypeError, match=r"well: expected an anharmony\.Well"):
        converge("x", 1, None)


def test_report_variables_pad_onto_shared_axes(ws_report):
    # The store stacks cells of different channels: sizes on a shared axis, lengths by index.
    r = ws_report
    sizes = [10, *r.sizes.tolist()]
    v = r.variables(basis_sizes=sizes, length_slots=r.lengths.size + 2)
    dims, grid, attrs = v["convergence_energy"]
    assert dims == ("level", "basis_size", "basis_length")
    assert grid.shape == (3, len(sizes), r.lengths.size + 2)
    assert np.isnan(grid[:, 0]).all() and np.isnan(grid[:, :, -2:]).all()
    np.testing.assert_array_equal(grid[:, 1:, : r.lengths.size], r.scan_energies)
    assert attrs["units"] == "MeV"
    assert v["converged"][1].dtype == np.int8
    assert v["model_energy"][1].shape == (3, 4)
    assert v["error_method"][1].tolist() == list(r.method)
    np.testing.assert_array_equal(v["cross_check_difference"][1], r.cross_check_difference)
    with pytest.raises(ValueError, match="length_slots"):
        r.variables(length_slots=1)


def test_case_block_drives_a_run():
    from anharmony.convergence import ConvergenceSettings

    s = ConvergenceSettings.from_mapping({"sizes": [10, 20, 40, 80], "tolerance": 1e-9})
    r = converge(W(QUARTIC), 1, 0, levels=2, warn=False, **s.keywords())
    assert r.converged.all() and r.size in (20, 40, 80)
    assert abs(r.energies[0] - QUARTIC_E0) < 1e-9  # the block's tolerance: what the flag promises


def test_without_growth_a_tolerance_only_sets_the_flags():
    r = converge(W(QUARTIC), 1, 0, levels=2, sizes=[6, 8, 10, 12], tolerance=1e-9, grow=False,
                 warn=False)
    assert not r.tolerance_driven and r.size == 12 and "fixed sizes" in r.stopped
    np.testing.assert_array_equal(r.converged, r.error_estimate < 1e-9)  # the run's tolerance
    with pytest.raises(ValueError, match="grow: growing the basis needs a tolerance"):
        converge(W(QUARTIC), 1, 0, grow=True)


def test_scan_accepts_frequencies_in_place_of_lengths():
    # b = sqrt(ħ/(mω)) = 1/sqrt(ħω) with ħ = m = 1 (definition of the oscillator length).
    scan = scan_basis(W(QUARTIC), 1, None, sizes=[6, 8, 10], frequencies=[1.0, 4.0], levels=1)
    # rtol 1e-14: one square root and one division, a few ulp
    np.testing.assert_allclose(scan.lengths, [0.5, 1.0], rtol=1e-14)
    np.testing.assert_allclose(scan.frequencies, [4.0, 1.0], rtol=1e-14)


def test_cross_check_of_an_unconfined_well_is_reported_not_raised():
    # V = x²/2 − x³/10 falls to −∞ on the right: its local levels are resonances.
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": -0.1}}])
    r = converge(well, 1, None, levels=1, sizes=[6, 8, 10], cross_check=True, warn=False)
    assert r.cross_check.method == "none" and "not possible" in r.cross_check.note
    assert not r.bound[0] and not r.converged[0]


def test_settings_give_the_axes_every_run_fits_on():
    from anharmony.convergence import ConvergenceSettings

    s = ConvergenceSettings.from_mapping({"tolerance": 1e-9, "max_size": 60})
    axis = s.size_axis(levels=2)
    assert axis[-1] == 60
    r = converge(W(QUARTIC), 1, None, levels=2, warn=False, **s.keywords())
    assert set(r.sizes.tolist()) <= set(axis)
    assert r.lengths.size <= s.length_slots()
