"""Cartesian and axial bases on wells whose answer is known from outside the project."""

import itertools
import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import ConvergenceWarning, InputError
from anharmony.geometry import AnisotropicHarmonic, CartesianBasis, solve_geometry
from anharmony.geometry.blocks import cartesian_states

RTOL_EXACT = 1e-12  # exact matrices (kinetic + x²) diagonalised by eigh: rounding only
ATOL_QUAD = 1e-9  # verified quadrature settles matrices to 1e-11 of their largest element
ATOL_SAME_SPACE = 1e-8  # same variational space, different quadrature rules (Gaussian, quartic)
ATOL_WS = 1e-6  # MeV: Woods–Saxon has a cusp at r = 0, Gauss–Hermite settles to ~1e-9 relative

# these checks compare levels of deliberately small oscillator spaces (the same space in two
# bases, or against a reference with its own tolerance); the ConvergenceWarning those spaces
# raise is checked in test_geometry_refusals.py
pytestmark = pytest.mark.filterwarnings("ignore::anharmony.errors.ConvergenceWarning")


def _exact_levels(freqs, count):
    """Σ ħω_i (n_i + ½), the lowest ``count`` — any QM textbook; Bohr & Mottelson, Nuclear
    Structure vol. II (1975), eq. (5-10) for the deformed oscillator."""
    ns = itertools.product(range(count), repeat=len(freqs))
    return np.sort([sum(w * (n + 0.5) for w, n in zip(freqs, n3, strict=True)) for n3 in ns])[
        :count]


@pytest.mark.parametrize("freqs", [[1.0, 1.7], [1.0, 1.7, 2.3], [0.6, 0.6, 2.0]])
def test_anisotropic_oscillator_levels_are_exact_in_cartesian_basis(freqs):
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params({"frequencies": freqs})])
    spec = solve_geometry(well, len(freqs), shells=8, levels=12, truncation="energy")
    np.testing.assert_allclose(spec.energies, _exact_levels(freqs, 12), rtol=RTOL_EXACT)


def test_anisotropic_oscillator_in_nuclear_units_with_centres():
    # a displaced oscillator has the same levels (textbook); nuclear units exercise ħ²/2m
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params(
        {"frequencies": [8.0, 10.0, 13.0], "centers": [0.5, -0.3, 0.2]}, units="nuclear")],
        units="nuclear")
    spec = solve_geometry(well, 3, shells=6, levels=10, units="nuclear")
    np.testing.assert_allclose(spec.energies, _exact_levels([8.0, 10.0, 13.0], 10),
                               rtol=RTOL_EXACT)
    np.testing.assert_allclose(spec.centers, [0.5, -0.3, 0.2], atol=1e-9)  # minimum found
    assert spec.labels[0] == "(0,0,0)" and spec.labels[1] == "(1,0,0)"


def test_anisotropic_oscillator_in_axial_basis():
    # E = ħω_⊥(2n_ρ + |Λ| + 1) + ħω_z(n_z + ½) (Bohr & Mottelson vol. II, eq. 5-12)
    hw_perp, hw_z = 1.3, 0.8
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params(
        {"frequencies": [hw_perp, hw_z]})])
    spec = solve_geometry(well, 3, geometry="axial", shells=10, levels=15)
    np.testing.assert_allclose(spec.energies, _exact_levels([hw_perp, hw_perp, hw_z], 15),
                               rtol=RTOL_EXACT)
    assert spec.labels[0] == "0+[000]"
    assert set(spec.labels[1:2]) == {"0-[110]"}  # n_z = 1 lies below Λ = ±1 here


def test_quadrature_reproduces_exact_polynomial_matrices():
    # Gauss–Hermite of order m is exact for polynomials of degree ≤ 2m − 1 (Abramowitz &
    # Stegun 25.4.46): quadrature of x²y² + 0.3 x z³ must equal the Kronecker product
    states = cartesian_states(7, [1, 1, 1])
    basis = CartesianBasis(states, [0.9, 1.1, 1.3], [0.1, -0.2, 0.3])
    idx = np.arange(len(states))
    exact = basis.polynomial({(2, 2, 0): 1.0, (1, 0, 3): 0.3}, idx)
    quad = basis.quadrature(lambda x, y, z: x**2 * y**2 + 0.3 * x * z**3, idx)
    np.testing.assert_allclose(quad, exact, atol=ATOL_QUAD * np.max(np.abs(exact)))


def test_levels_never_rise_as_shells_grow():
    # Rayleigh–Ritz: nested bases give upper bounds that decrease (MacDonald, Phys. Rev. 43,
    # 830 (1933)); a Gaussian well needs the quadrature, so this checks it too
    well = ah.Well.from_terms([{"gaussian": {"depth": 8.0, "range": 1.4}}])
    prev = None
    for n in (4, 6, 8, 10):
        e = solve_geometry(well, 3, shells=n, levels=6, lengths=[0.8, 0.8, 0.8],
                           error_estimate=False).energies
        if prev is not None:
            assert np.all(e <= prev + ATOL_QUAD)
        prev = e


def _central(well, l, shells, b, dimension=3, **kw):
    """The central channel l on the same oscillator space: 2n + l ≤ N_max.

    The small basis is the point (the same variational space), not its convergence, so the
    convergence warning of anharmony.solve is silenced here.
    """
    size = (shells - l) // 2 + 1
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        return ah.solve(well, dimension, l=l, size=size, length=b, levels=min(3, size),
                        **kw).energies


@pytest.mark.parametrize("terms", [
    [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.1}}],
    [{"gaussian": {"depth": 10.0, "range": 1.5}}],
])
@pytest.mark.parametrize("geometry", ["cartesian", "axial"])
def test_spherical_well_reproduces_central_channels(terms, geometry):
    # the oscillator shells 2n + l ≤ N_max span the same space in every basis (Moshinsky,
    # The Harmonic Oscillator in Modern Physics, 1969), so a spherical well gives the central
    # channels' variational levels, each (2l + 1) times (DESIGN §10)
    well = ah.Well.from_terms(terms)
    shells, b = 10, 0.9
    lengths = [b, b] if geometry == "axial" else [b, b, b]
    spec = solve_geometry(well, 3, geometry=geometry, shells=shells, lengths=lengths,
                          levels=25, error_estimate=False)
    got, expected = _same_levels(spec, well, shells, b)
    np.testing.assert_allclose(got, expected, atol=ATOL_SAME_SPACE)


def _same_levels(spec, well, shells, b, **kw):
    """Central levels, each 2l + 1 times, against the geometry's, away from a multiplet cut."""
    expected = []
    for l in range(shells + 1):
        for e in _central(well, l, shells, b, **kw):
            expected += [e] * (2 * l + 1)
    expected = np.sort(expected)[:len(spec.energies)]
    keep = expected < expected[-1] - 1e-6
    return spec.energies[keep], expected[keep]


def test_spherical_woods_saxon_in_both_geometries():
    # same-space argument as above; A = 16 Woods–Saxon well (nuclear units)
    terms = [{"woods_saxon": {"depth": 50.0, "r0": 1.27, "mass_number": 16,
                              "diffuseness": 0.67}}]
    well = ah.Well.from_terms(terms, units="nuclear")
    shells, b = 8, 1.8
    for geometry, lengths in (("cartesian", [b] * 3), ("axial", [b, b])):
        spec = solve_geometry(well, 3, geometry=geometry, shells=shells, lengths=lengths,
                              levels=11, units="nuclear", error_estimate=False)
        got, expected = _same_levels(spec, well, shells, b, units="nuclear")
        np.testing.assert_allclose(got, expected, atol=ATOL_WS)
        assert np.all(spec.bound[:10]) and len(got) == 10  # 1s, 1p, 2s, 1d


def test_2d_cartesian_matches_2d_central_channels():
    # 2D: the channel m has degeneracy 2 for m ≠ 0 (Moshinsky 1969, same-space argument)
    well = ah.Well.from_terms([{"gaussian": {"depth": 6.0, "range": 1.2}}])
    shells, b = 12, 0.8
    spec = solve_geometry(well, 2, shells=shells, lengths=[b, b], levels=6,
                          error_estimate=False)
    e0 = _central(well, 0, shells, b, dimension=2)
    e1 = _central(well, 1, shells, b, dimension=2)
    e2 = _central(well, 2, shells, b, dimension=2)
    expected = np.sort([*e0[:2], *[e1[0]] * 2, *[e2[0]] * 2])
    np.testing.assert_allclose(spec.energies, expected, atol=ATOL_SAME_SPACE)


def test_parity_argument_selects_blocks():
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params({"frequencies": [1, 1.5, 2]})])
    spec = solve_geometry(well, 3, shells=6, levels=4, parity=(-1, None, 1))
    for lab in spec.labels:
        nx, _, nz = (int(v) for v in lab.strip("()").split(","))
        assert nx % 2 == 1 and nz % 2 == 0
    # (1,0,0): ħω(3/2 + 1/2·1.5 + 1/2·2) — textbook oscillator
    assert spec.energies[0] == pytest.approx(1.5 + 0.75 + 1.0, rel=RTOL_EXACT)


def test_error_estimate_is_the_change_against_two_fewer_shells():
    well = ah.Well.from_terms([{"gaussian": {"depth": 8.0, "range": 1.4}}])
    a = solve_geometry(well, 3, shells=8, levels=3, lengths=[0.8] * 3)
    b = solve_geometry(well, 3, shells=6, levels=3, lengths=[0.8] * 3, error_estimate=False)
    # the ground state is alone in its block: the estimate is exactly the difference
    assert a.error_estimate[0] == pytest.approx(b.energies[0] - a.energies[0], rel=1e-9)


@pytest.mark.parametrize(("kwargs", "word"), [
    ({"geometry": "spherical"}, "geometry"),
    ({"dimension": 4}, "dimension"),
    ({"shells": -1}, "shells"),
    ({"levels": 0}, "levels"),
    ({"omega": 1}, "omega"),
    ({"parity": (1, 1)}, "parity"),
    ({"lengths": [1.0, -1.0, 1.0]}, "lengths"),
    ({"geometry": "axial", "dimension": 2}, "dimension"),
])
def test_bad_arguments_are_refused_by_name(kwargs, word):
    well = ah.Well.from_terms([{"gaussian": {"depth": 8.0, "range": 1.4}}])
    args = {"dimension": 3, **kwargs}
    with pytest.raises(InputError, match=word):
        solve_geometry(well, **args)


def test_parity_along_an_uneven_axis_is_refused():
    well = ah.Well.from_terms([AnisotropicHarmonic.from_params(
        {"frequencies": [1, 1, 1], "centers": [0.0, 0.0, 0.4]})])
    with pytest.raises(InputError, match=r"parity\[2\]"):
        solve_geometry(well, 3, parity=(None, None, 1), lengths=[1, 1, 1], centers=[0, 0, 0])


def test_non_axial_term_and_spin_orbit_are_refused():
    tri = ah.Well.from_terms([AnisotropicHarmonic.from_params({"frequencies": [1, 2, 3]})])
    with pytest.raises(InputError, match="z axis"):
        solve_geometry(tri, 3, geometry="axial")
    so = ah.Well.from_terms([{"woods_saxon": {"depth": 50.0, "radius": 3.0,
                                              "diffuseness": 0.6}},
                             {"spin_orbit": {"strength": 20.0, "radius": 3.0,
                                             "diffuseness": 0.6}}], units="nuclear")
    with pytest.raises(InputError, match="spin-orbit"):
        solve_geometry(so, 3, units="nuclear")
