"""Spin ½ in the axial basis: Ω^π blocks with the spin–orbit term (∇f × p)·s.

References: rotational invariance (a spherical well in the axial basis of N ≤ N_max shells spans
the same space as the central (l, j) channels of 2n + l ≤ N_max, so the levels agree to the
quadrature's precision); the Wigner–Eckart theorem (the first-order splitting of a j multiplet
by a quadrupole deformation is proportional to the Clebsch–Gordan coefficient ⟨j Ω 2 0|j Ω⟩,
computed with sympy.physics.wigner); Kramers degeneracy of ±Ω; finite differences for the
ladder relations of the basis functions.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from sympy import Rational
from sympy.physics.wigner import clebsch_gordan

import anharmony as ah
from anharmony.basis import HermiteBasis, RadialBasis
from anharmony.errors import InputError
from anharmony.geometry import solve_geometry

WS = {"depth": 50.0, "r0": 1.25, "mass_number": 40, "diffuseness": 0.65}
SO = {"strength": 20.0, "r0": 1.25, "mass_number": 40, "diffuseness": 0.65}
B = 2.0  # fm, both axes: the spherical oscillator basis of the central channels
SHELLS = 6
QUADRATURE_TOL = 1e-8  # MeV; the panel rules settle to ~1e-9 of the largest element (~50 MeV)


def _axial(terms, shells=SHELLS, **kw):
    well = ah.Well.from_terms(terms, "nuclear")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        return solve_geometry(well, 3, geometry="axial", shells=shells, lengths=(B, B),
                              units="nuclear", error_estimate=False, **kw)


def _central_levels(shells=SHELLS):
    """Every (n, l, j) level of the central channels in 2n + l ≤ shells, with 2j + 1."""
    well = ah.Well.from_terms([{"woods_saxon": WS}, {"spin_orbit": SO}], "nuclear")
    out = []
    for l in range(shells + 1):
        size = (shells - l) // 2 + 1
        for j in (l - 0.5, l + 0.5):
            if j < 0:
                continue
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ah.ConvergenceWarning)
                s = ah.solve(well, 3, l, j, size=size, length=B, units="nuclear", levels=size)
            out += [(e, l, j) for e in s.energies]
    return sorted(out)


@pytest.mark.parametrize("m", [1, 2, 4])
def test_radial_ladder_relation_matches_finite_differences(m):
    # (d/dρ + m/ρ) R_n^m = [√(n+m) R_n^{m−1} + √(n+1) R_{n+1}^{m−1}]/b (geometry/spin.py)
    b, h = 1.3, 1e-5
    rho = np.linspace(0.05, 6.0, 300)
    basis, lower = RadialBasis(8, b, m, 2), RadialBasis(9, b, m - 1, 2)
    lhs = (basis.functions(rho + h) - basis.functions(rho - h)) / (2 * h) \
        + m / rho * basis.functions(rho)
    n = np.arange(8)[:, None]
    down = lower.functions(rho)
    rhs = (np.sqrt(n + m) * down[:8] + np.sqrt(n + 1.0) * down[1:]) / b
    assert np.max(np.abs(lhs - rhs)) < 1e-8  # central differences, h = 1e-5: error ~ h²


def test_hermite_derivative_relation_matches_finite_differences():
    b, h = 0.8, 1e-5
    z = np.linspace(-4.0, 4.0, 300)
    basis, bigger = HermiteBasis(8, b, 0.2), HermiteBasis(9, b, 0.2)
    lhs = (basis.functions(z + h) - basis.functions(z - h)) / (2 * h)
    f = bigger.functions(z)
    n = np.arange(8)[:, None]
    low = np.vstack([np.zeros((1, len(z))), f[:7]])
    rhs = (np.sqrt(n / 2.0) * low - np.sqrt((n + 1.0) / 2.0) * f[1:]) / b
    assert np.max(np.abs(lhs - rhs)) < 1e-8


def test_spherical_well_with_spin_orbit_gives_the_central_levels_in_omega_blocks():
    central = _central_levels()
    count = sum(int(2 * j + 1) for _, _, j in central)
    g = _axial([{"woods_saxon": WS}, {"spin_orbit": SO}], levels=count)
    # every level of the truncated space, Kramers pairs ±Ω included
    assert len(g.energies) == count
    expected = np.sort(np.concatenate([[e] * int(2 * j + 1) for e, _, j in central]))
    assert np.max(np.abs(g.energies - expected)) < QUADRATURE_TOL
    # the Ω of each central (l, j) level: Ω = ±1/2 … ±j, each once
    lowest = [(lab, key) for lab, key, e in zip(g.labels, g.blocks, g.energies, strict=True)
              if abs(e - central[1][0]) < 1e-6]  # 1p3/2
    assert sorted(k[0] for _, k in lowest) == [-1.5, -0.5, 0.5, 1.5]
    assert all(k[1] == -1 for _, k in lowest)  # p levels have odd parity


def test_deformed_spin_orbit_at_zero_deformation_is_the_spherical_term():
    spherical = _axial([{"woods_saxon": WS}, {"spin_orbit": SO}], levels=20)
    deformed = _axial([{"deformed_woods_saxon": WS}, {"deformed_spin_orbit": SO}], levels=20)
    assert np.max(np.abs(spherical.energies - deformed.energies)) < QUADRATURE_TOL


def test_quadrupole_splitting_of_d5_2_follows_the_clebsch_gordan_coefficient():
    # δE(Ω) ∝ ⟨j Ω 2 0 | j Ω⟩ at first order in β2 (Wigner–Eckart); the symmetric difference
    # of ±β2 removes the second order, leaving a relative error of order β2²
    beta = 2e-3
    j = Rational(5, 2)

    def d52(beta2):
        terms = [{"deformed_woods_saxon": {**WS, "beta2": beta2}},
                 {"deformed_spin_orbit": {**SO, "beta2": beta2}}]
        out = {}
        for om in (0.5, 1.5, 2.5):
            g = _axial(terms, omega=om, parity=1, levels=3)
            # the 1d5/2 member: the level nearest the spherical 1d5/2 (-17.37 MeV at β = 0)
            out[om] = g.energies[np.argmin(np.abs(g.energies + 17.37))]
        return out

    plus, minus = d52(beta), d52(-beta)
    shift = {om: (plus[om] - minus[om]) / 2 for om in plus}
    cg = {om: float(clebsch_gordan(j, 2, j, Rational(int(2 * om), 2), 0,
                                   Rational(int(2 * om), 2))) for om in shift}
    ratio = [shift[om] / cg[om] for om in shift]
    assert abs(shift[2.5]) > 1e-3  # the deformation does split the multiplet (MeV)
    assert np.ptp(ratio) < 1e-3 * np.max(np.abs(ratio))


def test_kramers_pairs_and_parity_blocks_of_a_deformed_well():
    terms = [{"deformed_woods_saxon": {**WS, "beta2": 0.3}},
             {"deformed_spin_orbit": {**SO, "beta2": 0.3}}]
    g = _axial(terms, levels=12)
    pairs = g.energies.reshape(-1, 2)  # each level twice: +Ω and −Ω
    assert np.max(np.abs(pairs[:, 0] - pairs[:, 1])) < 1e-12
    keys = np.array([k[0] for k in g.blocks]).reshape(-1, 2)
    assert np.all(keys[:, 0] == -keys[:, 1])
    assert g.states.shape[1] == 4  # (n_ρ, Λ, n_z, 2Σ)
    assert all(k[1] in (1, -1) for k in g.blocks)  # even in z: parity is conserved


def test_omega_must_be_a_half_integer_with_spin_and_cartesian_refuses_spin():
    terms = [{"woods_saxon": WS}, {"spin_orbit": SO}]
    with pytest.raises(InputError, match="half-integer"):
        _axial(terms, omega=1)
    minus = _axial(terms, omega="-3/2", levels=2)  # the Kramers partner of Ω = 3/2
    plus = _axial(terms, omega=1.5, levels=2)
    np.testing.assert_array_equal(minus.energies, plus.energies)
    assert all(k[0] == -1.5 for k in minus.blocks)
    well = ah.Well.from_terms(terms, "nuclear")
    with pytest.raises(InputError, match="axial geometry"):
        solve_geometry(well, 3, geometry="cartesian", shells=4, units="nuclear")


@pytest.mark.slow
def test_a_deformed_nucleus_takes_its_default_lengths_from_its_spherical_counterpart():
    # a deformed Woods–Saxon surface has no useful curvature at the centre (the Hessian there
    # once gave b_perp = 0.25 fm and levels 40 MeV above the threshold); the default is the
    # reference oscillator of the β = 0 well, and its error bars hold against a larger basis
    beta = {"beta2": 0.2}
    terms = [{"deformed_woods_saxon": {**WS, **beta}}, {"deformed_spin_orbit": {**SO, **beta}}]
    well = ah.Well.from_terms(terms, "nuclear")
    spherical = ah.Well.from_terms([{"woods_saxon": WS}, {"spin_orbit": SO}], "nuclear")
    b0 = ah.reference_oscillator(spherical, 3, 0, levels=5, j=0.5).length
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        small = solve_geometry(well, 3, geometry="axial", shells=8, units="nuclear", levels=8)
        large = solve_geometry(well, 3, geometry="axial", shells=12, units="nuclear", levels=8,
                               lengths=small.lengths, error_estimate=False)
    assert small.lengths == pytest.approx((b0, b0), rel=1e-12)
    assert np.all(small.bound) and small.energies[0] < -30.0  # MeV: the 1s1/2 of A = 40
    assert np.all(np.abs(small.energies - large.energies) <= small.error_estimate)
