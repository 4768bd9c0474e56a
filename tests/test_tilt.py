"""The ``tilt`` term (a uniform force, V = F x): its values and the displaced oscillator."""

from fractions import Fraction

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError, TermError

W = ah.Well.from_terms


def test_tilt_values_and_derivatives_are_those_of_f_times_x():
    # V = F x, V' = F, V'' = 0 (calculus; common practice, no source); exact in floating point
    t = W([{"tilt": {"force": -0.7}}]).terms[0]
    x = np.array([-2.0, 0.0, 1.5])
    assert np.array_equal(t.value(x), -0.7 * x)
    assert np.array_equal(t.d1(x), np.full(3, -0.7))
    assert np.array_equal(t.d2(x), np.zeros(3))
    assert t.limits() == (np.inf, -np.inf)


@pytest.mark.parametrize("units,mass,hw,force", [("oscillator", None, 1.0, 0.3),
                                                  ("molecular", 1.0, 2.0, 0.5)])
def test_harmonic_plus_tilt_is_the_displaced_oscillator(units, mass, hw, force):
    # E_n = (n + 1/2) ħω − F²/(2 m ω²): completing the square, ½k(x + F/k)² − F²/(2k), the
    # textbook displaced oscillator (e.g. J. J. Sakurai, Modern Quantum Mechanics; the exact
    # place there quoted from memory).
    well = W([{"harmonic": {"frequency": hw}}, {"tilt": {"force": force}}], units, mass)
    k = hw**2 / (2.0 * well.units.hbar2_over_2m(mass))  # m ω² from ħω
    spec = ah.solve(well, dimension=1, l=None, size=40, levels=6, units=units, mass=mass)
    expected = (np.arange(6) + 0.5) * hw - force**2 / (2.0 * k)
    # rtol 1e-12: the basis sits at the shifted minimum, so the matrix is diagonal up to rounding
    np.testing.assert_allclose(spec.energies, expected, rtol=1e-12)
    assert spec.bound.all()  # a tilted harmonic well still confines: every level is bound
    # the same levels with the basis left at x = 0: F x enters exactly (a banded matrix)
    off = ah.solve(well, dimension=1, l=None, size=60, levels=6, units=units, mass=mass,
                   reference={"frequency": hw, "center": 0.0})
    # rtol 1e-10: the displaced ground state needs Hermite functions up to n ~ (F²/2kħω)·few
    np.testing.assert_allclose(off.energies, expected, rtol=1e-10)


def test_tilt_series_is_exactly_second_order():
    # W = F x about the unshifted oscillator: E = E_n − λ² F²/(2k) exactly, i.e. E_2 = −F²/2
    # in units of ħω = k = 1, every other correction zero (same textbook result).
    well = W([{"harmonic": {"frequency": 1.0}}, {"tilt": {"force": 0.5}}])
    ser = ah.series(well, dimension=1, l=None, level=2, orders=6,
                    reference={"frequency": 1.0, "center": 0.0})
    assert ser.exact == [Fraction(5, 2), 0, Fraction(-1, 8), 0, 0, 0, 0]


def test_tilt_is_refused_in_central_channels_and_off_the_x_axis():
    # A uniform force has a direction: it is not a function of r alone (common practice).
    well = W([{"harmonic": {"frequency": 1.0}}, {"tilt": {"force": 0.3}}])
    for d in (2, 3):
        with pytest.raises(InputError, match="tilt: the term is not central"):
            ah.solve(well, dimension=d, l=0)
    along_y = W([{"harmonic": {"frequency": 1.0}}, {"tilt": {"force": 0.3, "axis": "y"}}])
    with pytest.raises(InputError, match=r"tilt\.axis"):
        ah.solve(along_y, dimension=1, l=None)
    with pytest.raises(TermError, match=r"tilt\.axis: must be one of x, y, z"):
        W([{"tilt": {"force": 0.3, "axis": "w"}}])
