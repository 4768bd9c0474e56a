"""anharmony.solve(..., geometry=...): the Cartesian and axial bases behind the front door."""

import pickle
import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony._defaults import is_unset, unset
from anharmony.errors import ConvergenceWarning, InputError

ATOL_SAME_SPACE = 1e-8  # same variational space, different quadrature rules (Gaussian, quartic)
RTOL_EXACT = 1e-12  # kinetic + x² exact in the product basis, eigh: rounding only
RTOL_HESSIAN = 1e-7  # Richardson central differences, steps 5% of b (see test_geometry_beam)

QUARTIC = [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.1}}]
GAUSSIAN = [{"gaussian": {"depth": 10.0, "range": 1.5}}]

# these checks compare levels of deliberately small oscillator spaces (the same space in two
# bases, or against a reference with its own tolerance); the ConvergenceWarning those spaces
# raise is checked in test_geometry_refusals.py
pytestmark = pytest.mark.filterwarnings("ignore::anharmony.errors.ConvergenceWarning")


def _central_multiplets(well, shells, b):
    """Central channels on the oscillator shells 2n + l ≤ N_max, each level 2l + 1 times."""
    out = []
    with warnings.catch_warnings():  # small bases on purpose: the space is the point
        warnings.simplefilter("ignore", ConvergenceWarning)
        for l in range(shells + 1):
            size = (shells - l) // 2 + 1
            e = ah.solve(well, 3, l, size=size, length=b, levels=min(3, size)).energies
            out += [x for x in e for _ in range(2 * l + 1)]
    return np.sort(out)


@pytest.mark.parametrize("terms", [QUARTIC, GAUSSIAN])
@pytest.mark.parametrize("geometry", ["cartesian", "axial"])
def test_spherical_well_through_solve_equals_central_channels(terms, geometry):
    # the oscillator shells 2n + l ≤ N_max span the same space in every basis (Moshinsky,
    # The Harmonic Oscillator in Modern Physics, 1969): a spherical well gives the central
    # channels' levels, each 2l + 1 times (DESIGN §10)
    well = ah.Well.from_terms(terms)
    shells, b = 10, 0.9
    spec = ah.solve(well, geometry=geometry, shells=shells, length=b, levels=25)
    assert isinstance(spec, ah.GeometrySpectrum) and spec.geometry == geometry
    expected = _central_multiplets(well, shells, b)[:25]
    keep = expected < expected[-1] - 1e-6  # away from a multiplet cut by levels=25
    np.testing.assert_allclose(spec.energies[keep], expected[keep], atol=ATOL_SAME_SPACE)


def test_isotropic_oscillator_degeneracies_through_solve():
    # ħω(N + 3/2), degeneracy (N + 1)(N + 2)/2 (any QM textbook, e.g. Sakurai ch. 3)
    well = ah.Well.from_terms([{"harmonic": {"frequency": 2.0}}])
    spec = ah.solve(well, geometry="cartesian", shells=4, levels=10)
    expected = 2.0 * (np.array([0] + [1] * 3 + [2] * 6) + 1.5)
    np.testing.assert_allclose(spec.energies, expected, rtol=RTOL_EXACT)


def test_central_stays_the_default():
    # l = 0 ground state of the oscillator is 3/2 ħω (textbook); the default path and the
    # explicit central call are one and the same computation
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}}])
    a = ah.solve(well)
    b = ah.solve(well, 3, 0, size=60, geometry="central", tolerance=1e-8)
    assert isinstance(a, ah.Spectrum)
    assert a.energies[0] == pytest.approx(1.5, rel=1e-12)
    np.testing.assert_array_equal(a.energies, b.energies)
    assert type(a.channel.l) is int  # the marked default is not passed on


@pytest.mark.parametrize(("kwargs", "name"), [
    ({"geometry": "cartesian", "l": 1}, "l"),
    ({"geometry": "cartesian", "l": 0}, "l"),  # written, even if it equals the default
    ({"geometry": "axial", "j": 0.5}, "j"),
    ({"geometry": "cartesian", "omega": 1}, "omega"),
    ({"geometry": "cartesian", "size": 40}, "size"),
    ({"geometry": "axial", "size": 60}, "size"),
    ({"geometry": "axial", "tolerance": 1e-8}, "tolerance"),
    ({"geometry": "axial", "reference": {"frequency": 1.0}}, "reference"),
    ({"geometry": "cartesian", "length": "wide"}, "length"),
    ({"geometry": "cartesian", "length": 0.0}, "length"),
    ({"geometry": "cartesian", "dimension": 1}, "dimension"),
    ({"geometry": "axial", "dimension": 2}, "dimension"),
    ({"geometry": "cartesian", "shells": -1}, "shells"),
    ({"geometry": "cartesian", "truncation": "count"}, "truncation"),
    ({"geometry": "axial", "parity": 2}, "parity"),
    ({"geometry": "spherical"}, "geometry"),
    ({"geometry": None}, "geometry"),
    ({"omega": 0}, "omega"),  # central with a geometry argument
    ({"parity": (1, 1, 1)}, "parity"),
    ({"shells": 8}, "shells"),
    ({"truncation": "energy"}, "truncation"),
])
def test_bad_combinations_are_refused_naming_the_argument(kwargs, name):
    # STYLE.md item 5: every error names the argument; common practice, no source
    well = ah.Well.from_terms(QUARTIC)
    with pytest.raises(InputError) as err:
        ah.solve(well, **kwargs)
    assert str(err.value).startswith(f"{name}:"), str(err.value)


def test_one_length_is_used_on_every_axis():
    well = ah.Well.from_terms(QUARTIC)
    spec = ah.solve(well, geometry="axial", shells=4, length=0.7, levels=2)
    assert spec.lengths == (0.7, 0.7)


def test_trap_frequencies_is_exported():
    # ω_⊥ = sqrt(4U₀/(m w₀²)), ω_z = sqrt(2U₀/(m z_R²)): Grimm, Weidemüller & Ovchinnikov,
    # Adv. At. Mol. Opt. Phys. 42, 95 (2000)
    beam = ah.Well.from_terms([{"focused_beam": {"depth": 50.0, "waist": 1.0,
                                                 "rayleigh_length": 4.0}}])
    tf = ah.trap_frequencies(beam)
    np.testing.assert_allclose(tf.frequencies, [np.sqrt(2 * 50 / 16)] + [np.sqrt(4 * 50)] * 2,
                               rtol=RTOL_HESSIAN)
    assert ah.solve_geometry is ah.geometry.solve_geometry


def test_marked_defaults_compute_and_pickle_as_plain_values():
    # the mark only tells a written value from a default (common practice, no source)
    size = unset(60)
    assert size == 60 and hash(size) == hash(60) and repr(size) == "60"
    assert is_unset(size) and not is_unset(60)
    copy = pickle.loads(pickle.dumps(size))
    assert type(copy) is int and copy == 60
    with pytest.raises(TypeError):
        unset("60")
