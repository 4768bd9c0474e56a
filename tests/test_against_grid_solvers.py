"""Gaussian and Woods–Saxon levels against independent solvers written with scipy only.

The references live in tests/refsolvers.py: Richardson-extrapolated finite differences and a
shooting solver (solve_ivp + brentq). Neither imports anharmony.
"""

import numpy as np
import pytest

import anharmony as ah
from refsolvers import richardson_levels, shooting_level

W = ah.Well.from_terms

# A neutron in an A = 40 Woods–Saxon well with spin–orbit; parameters typical of the trade
# (V0 ≈ 51 MeV, r0 = 1.27 fm, a = 0.67 fm: common practice, no source).
WS = [{"woods_saxon": {"depth": 51.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}},
      {"spin_orbit": {"strength": 22.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}}]
ATOL_WS = 1e-6  # MeV: the accuracy asked of Woods–Saxon levels; shooting reaches ~1e-11 MeV


@pytest.mark.parametrize(("l", "j", "level"), [(0, 0.5, 0), (0, 0.5, 1), (1, 1.5, 0),
                                               (1, 0.5, 0), (3, 3.5, 0)])
def test_woods_saxon_with_spin_orbit_matches_shooting(l, j, level):
    well = W(WS, units="nuclear")
    spec = ah.solve(well, dimension=3, l=l, j=j, size=120, units="nuclear", levels=level + 1)
    e = spec.energies[level]
    ls = 0.5 * (j * (j + 1) - l * (l + 1) - 0.75)

    def v(r):
        return well.value(r) + (ls * well.spin_orbit_value(r) if ls else 0.0)

    c = ah.get_units("nuclear").hbar2_over_2m()
    ref = shooting_level(v, l, c, level, r_max=30.0)  # found by its node count alone
    assert spec.bound[level]
    assert e == pytest.approx(ref, abs=ATOL_WS)
    # Ritz values are upper bounds (Rayleigh–Ritz); 1e-9 MeV: 100× the shooting error
    assert e >= ref - 1e-9


def test_spin_orbit_lowers_j_equals_l_plus_half():
    # DESIGN §3: V_ls > 0 lowers j = l + 1/2 (the nuclear ordering, common practice).
    well = W(WS, units="nuclear")
    p32 = ah.solve(well, dimension=3, l=1, j="3/2", size=60, units="nuclear", levels=1)
    p12 = ah.solve(well, dimension=3, l=1, j="1/2", size=60, units="nuclear", levels=1)
    assert p32.energies[0] < p12.energies[0]


@pytest.mark.parametrize("l", [0, 1, 2])
def test_gaussian_well_matches_richardson_finite_differences(l):
    well = W([{"gaussian": {"depth": 20.0, "range": 2.0}}])
    spec = ah.solve(well, dimension=3, l=l, size=60, levels=3)
    ref = richardson_levels(well.value, l, 3, 0.5, 25.0, 3, grids=(1000, 2000, 4000))
    # tolerance: 10× the Richardson error estimate (≤ 1e-7 here), + 1e-12 for rounding
    np.testing.assert_allclose(spec.energies, ref.energies, atol=10 * ref.error.max() + 1e-12)
    assert spec.bound.all()


def test_gaussian_well_in_2d_matches_richardson_finite_differences():
    well = W([{"gaussian": {"depth": 8.0, "range": 1.5}}])
    # the second level sits near threshold (infrared-limited): it needs N = 120 at this b
    spec = ah.solve(well, dimension=2, l=1, size=120, levels=2)
    ref = richardson_levels(well.value, 1, 2, 0.5, 20.0, 2, grids=(1000, 2000, 4000))
    # tolerance: 10× the Richardson error estimate, + 1e-12 for rounding of O(1) levels
    np.testing.assert_allclose(spec.energies, ref.energies, atol=10 * ref.error.max() + 1e-12)


def test_continuum_states_of_a_gaussian_are_not_bound():
    well = W([{"gaussian": {"depth": 2.0, "range": 1.0}}])
    # the one s level is bound by 4 % of the depth (an infrared case, PITFALLS §0): at N = 40
    # it is still 1e-7 off, so N = 80 is used to have it converged (error bar < tolerance)
    spec = ah.solve(well, dimension=3, l=0, size=80, levels=5)
    # the independent grid solver finds exactly one negative s level in this well
    ref = richardson_levels(well.value, 0, 3, 0.5, 30.0, 3, grids=(1000, 2000, 4000))
    assert np.count_nonzero(ref.energies < 0) == 1
    assert spec.bound[0] and not spec.bound[1:].any()
    assert np.all(spec.energies[1:] > 0)
