"""The core scan: the pencil A + s B against independent solve() calls at every value."""

from __future__ import annotations

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.scan import linear_in, scan

RTOL_SAME = 1e-10  # one Hamiltonian assembled two ways (A + sB vs rebuilt): rounding of sums
ATOL_SAME = 1e-12  # energies of order 1-10: a few ulps of the largest matrix entries

# scan and solve are compared on the same small bases, whose levels are not all converged (the
# warning for that is checked in test_error_estimates.py); here only the agreement matters
pytestmark = pytest.mark.filterwarnings("ignore::anharmony.errors.ConvergenceWarning")


def _quartic(g: float, extra: list | None = None) -> ah.Well:
    return ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": g}}, *(extra or [])])


@pytest.mark.parametrize(("dimension", "l", "size"), [(3, 0, 40), (3, 2, 40), (1, None, 40),
                                                      (1, 1, 30), (2, 1, 10)])
def test_strength_scan_equals_a_solve_at_every_value(dimension, l, size):
    values = [0.0, 0.05, 0.3, 1.0]
    res = scan(_quartic(0.3), dimension, l, parameter="well[1].strength", values=values,
               size=size, levels=4, reference={"frequency": 1.0})
    assert res.method == "pencil"
    for k, g in enumerate(values):
        spec = ah.solve(_quartic(g), dimension, l, size=size, levels=4,
                        reference={"frequency": 1.0})
        np.testing.assert_allclose(res.energies[k], spec.energies, rtol=RTOL_SAME,
                                   atol=ATOL_SAME)
        np.testing.assert_array_equal(res.bound[k], spec.bound)
        np.testing.assert_allclose(res.reference_energies[k], spec.reference_energies,
                                   rtol=1e-15)


def test_coupling_scan_is_the_well_between_reference_and_full():
    # the reference of ½x² + g x⁴ is the unit oscillator, so H_ref + λ(H − H_ref) is the well
    # ½x² + λ g x⁴ (DESIGN §2): an independent solve of that well at each λ
    lams = [0.0, 0.25, 0.5, 1.0, 1.5]
    res = scan(_quartic(0.2), 3, 1, parameter="coupling", values=lams, size=40, levels=3,
               reference={"frequency": 1.0})
    for k, lam in enumerate(lams):
        spec = ah.solve(_quartic(0.2 * lam), 3, 1, size=40, levels=3,
                        reference={"frequency": 1.0})
        np.testing.assert_allclose(res.energies[k], spec.energies, rtol=RTOL_SAME,
                                   atol=ATOL_SAME)
    # λ = 0: the 3D oscillator, E = 2n + l + 3/2 (any QM textbook)
    np.testing.assert_allclose(res.energies[0], [2.5, 4.5, 6.5], rtol=1e-13)


def test_one_value_is_solved_as_solve_does():
    res = scan(_quartic(0.1), 1, None, parameter="coupling", values=[1.0], size=30, levels=3)
    spec = ah.solve(_quartic(0.1), 1, None, size=30, levels=3)
    assert res.method == "rebuild"
    np.testing.assert_array_equal(res.energies[0], spec.energies)
    np.testing.assert_allclose(res.spectrum(0).energies, spec.energies, rtol=0)


def test_truncated_block_of_a_polynomial_well_is_the_smaller_basis():
    # polynomial matrix elements are exact, so the leading M×M block is the M-state basis
    res = scan(_quartic(0.5), 3, 0, parameter="well[1].strength", values=[0.1, 0.5],
               size=20, levels=3, reference={"frequency": 1.0}, truncated=15)
    for k, g in enumerate([0.1, 0.5]):
        small = ah.solve(_quartic(g), 3, 0, size=15, levels=3, reference={"frequency": 1.0})
        np.testing.assert_allclose(res.truncated_energies[k], small.energies, rtol=RTOL_SAME)


def test_nonlinear_parameter_rebuilds_per_value():
    well = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "waist": 1.0}}])
    assert not linear_in(well, "well[0].waist") and linear_in(well, "well[0].depth")
    res = scan(well, 3, 0, parameter="well[0].waist", values=[1.0, 1.3], size=30, levels=2)
    assert res.method == "rebuild"
    for k, w in enumerate([1.0, 1.3]):
        spec = ah.solve(ah.Well.from_terms([{"gaussian": {"depth": 10.0, "waist": w}}]), 3, 0,
                        size=30, levels=2)
        np.testing.assert_allclose(res.energies[k], spec.energies, rtol=RTOL_SAME)


def test_wavefunctions_of_the_oscillator_are_hermite_functions():
    res = scan(_quartic(0.0), 1, None, parameter="coupling", values=[1.0], size=10, levels=2,
               vectors=True)
    x = np.linspace(-3, 3, 7)
    psi = res.wavefunctions(0, x)
    # ψ0 = π^{-1/4} e^{-x²/2} (any QM textbook); the sign of an eigenvector is free
    np.testing.assert_allclose(np.abs(psi[0]), np.pi ** -0.25 * np.exp(-x**2 / 2), atol=1e-12)


@pytest.mark.parametrize(("kwargs", "field"), [({"parameter": "well[7].strength"}, "parameter"),
                                               ({"parameter": "depth"}, "parameter"),
                                               ({"values": []}, "values"),
                                               ({"truncated": 40}, "truncated")])
def test_bad_arguments_name_the_argument(kwargs, field):
    args = {"parameter": "coupling", "values": [1.0], "size": 20, "levels": 2, **kwargs}
    with pytest.raises(InputError, match=field):
        scan(_quartic(0.1), 3, 0, **args)


@pytest.mark.parametrize(("dimension", "l", "size", "parameter"),
                         [(3, 0, 16, "well[1].strength"), (3, 2, 14, "well[1].strength"),
                          (1, None, 20, "well[1].strength"), (1, 1, 12, "well[1].strength"),
                          (3, 0, 16, "well[1].exponent")])
def test_every_value_carries_the_error_estimate_of_solve(dimension, l, size, parameter):
    # The same rule on the same matrix up to rounding (common practice, no source): the pencil
    # (banded A + sB, sub-blocks from its band) and the rebuild path ("exponent" is not
    # linear) give solve()'s error_estimate. rtol 1e-6: differences of nearly equal levels
    # keep ~6 digits; atol 1e3 eps*|H|: the two assemblies differ by rounding, which the rule
    # amplifies (factor 12, Aitken ratio) for levels converged to near that floor.
    values = [0.05, 0.3, 1.0] if parameter.endswith("strength") else [4.0, 6.0]
    res = scan(_quartic(0.3), dimension, l, parameter=parameter, values=values, size=size,
               levels=3, length=0.8, reference={"frequency": 1.0})
    assert res.method == ("pencil" if parameter.endswith("strength") else "rebuild")
    large = []
    for k, v in enumerate(values):
        well = (_quartic(v) if parameter.endswith("strength") else ah.Well.from_terms(
            [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": v, "strength": 0.3}}]))
        spec = ah.solve(well, dimension, l, size=size, levels=3, length=0.8)
        large.append(np.max(spec.error_estimate / spec.rounding))
        np.testing.assert_allclose(res.error_estimate[k], spec.error_estimate, rtol=1e-6,
                                   atol=1e3 * spec.rounding)
        np.testing.assert_allclose(res.rounding[k], spec.rounding, rtol=1e-6)
        np.testing.assert_array_equal(res.spectrum(k).error_estimate, res.error_estimate[k])
    assert max(large) > 1e6  # some level far from converged: a real test of the rule
    off = scan(_quartic(0.3), dimension, l, parameter=parameter, values=values, size=size,
               levels=3, length=0.8, reference={"frequency": 1.0}, error_estimate=False)
    assert off.error_estimate is None
    np.testing.assert_array_equal(off.energies, res.energies)
