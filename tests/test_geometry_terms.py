"""The non-central terms in the registry, and a tilt in the Cartesian and axial bases."""

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError, TermError
from anharmony.geometry import solve_geometry, trap_frequencies

RTOL_EXACT = 1e-12  # exact polynomial matrices: rounding only
RTOL_HESSIAN = 1e-7  # Richardson central differences (see test_geometry_beam)


def test_registry_builds_the_new_terms_in_a_unit_system():
    # trap units: ħω_i given in the energy unit; the exact levels Σ ħω_i(n_i + ½) must not
    # depend on the particle mass (textbook oscillator)
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [2.0, 3.0, 5.0]}}],
                              units="trap", mass=87.0)
    spec = solve_geometry(well, 3, shells=4, levels=3, units="trap", mass=87.0)
    np.testing.assert_allclose(spec.energies, [5.0, 7.0, 8.0], rtol=RTOL_EXACT)
    assert "focused_beam" in ah.TERMS and "anisotropic_harmonic" in ah.TERMS


@pytest.mark.parametrize(("params", "field"), [
    ({"frequencies": [1.0]}, "frequencies"),
    ({"frequencies": [1.0, -2.0]}, "frequencies"),
    ({"frequencies": [1.0, 2.0], "centers": [0.0]}, "centers"),
    ({}, "frequencies"),
])
def test_bad_anisotropic_parameters_are_named(params, field):
    with pytest.raises(TermError, match=field):
        ah.Well.from_terms([{"anisotropic_harmonic": params}])


def test_central_solver_refuses_the_non_central_terms():
    for spec in ({"anisotropic_harmonic": {"frequencies": [1.0, 2.0]}},
                 {"focused_beam": {"depth": 1.0, "waist": 1.0, "rayleigh_length": 2.0}}):
        well = ah.Well.from_terms([spec])
        with pytest.raises(InputError, match="not central"):
            ah.solve(well, 3, l=0)


@pytest.mark.parametrize("geometry", ["cartesian", "axial"])
def test_tilted_oscillator_is_the_displaced_oscillator(geometry):
    # ½kr² + F z: minimum at z = −F/k, levels ħω(N + 3/2) − F²/(2k) (textbook, completing the
    # square); the tilt enters exactly through the geometry protocol's axis rule
    force = 0.7
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"tilt": {"force": force, "axis": "z"}}])
    tf = trap_frequencies(well)
    np.testing.assert_allclose(tf.minimum, [0.0, 0.0, -force], atol=1e-8)
    np.testing.assert_allclose(tf.frequencies, [1.0, 1.0, 1.0], rtol=RTOL_HESSIAN)
    spec = solve_geometry(well, 3, geometry=geometry, shells=6, levels=10)
    expected = np.array([1.5] + [2.5] * 3 + [3.5] * 6) - 0.5 * force**2
    np.testing.assert_allclose(spec.energies, expected, rtol=RTOL_EXACT)
    assert spec.threshold == np.inf and np.all(spec.bound)


def test_tilt_along_x_is_not_axial():
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"tilt": {"force": 0.3, "axis": "x"}}])
    with pytest.raises(InputError, match="axis"):
        solve_geometry(well, 3, geometry="axial")
    # Cartesian: the x parity is broken, the others are kept (levels exact as above)
    spec = solve_geometry(well, 3, shells=4, levels=4, parity=(None, 1, 1))
    assert spec.energies[0] == pytest.approx(1.5 - 0.5 * 0.3**2, rel=RTOL_EXACT)
