"""Terms of a well: values, derivatives, limits, polynomial forms; unit systems."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.units import convert_energy, convert_length, get_units

W = ah.Well.from_terms

TERMS = [
    {"harmonic": {"stiffness": 2.0, "center": 0.3}},
    {"power": {"exponent": 3, "strength": -0.2, "center": 0.1}},
    {"power": {"exponent": 2.5, "strength": 0.7}},
    {"polynomial": {"coefficients": {2: 0.5, 3: -0.1, 4: 0.02}, "center": -0.2}},
    {"gaussian": {"depth": 3.0, "waist": 2.0}},
    {"woods_saxon": {"depth": 50.0, "r0": 1.25, "mass_number": 27, "diffuseness": 0.6}},
    {"spin_orbit": {"strength": 20.0, "radius": 3.0, "diffuseness": 0.6}},
    {"coulomb": {"charge": 8, "radius": 3.2}},
    {"morse": {"depth": 4.0, "width": 1.3, "center": 1.0}},
    {"poschl_teller": {"depth": 2.0, "range": 0.7}},
    {"expression": {"formula": "a*x**2 + exp(-x**2)", "parameters": {"a": 0.3}}},
]


@pytest.mark.parametrize("spec", TERMS, ids=lambda s: next(iter(s)))
def test_term_derivatives_match_central_differences(spec):
    # Central differences, step 1e-5: truncation ~h² V''' ≲ 1e-9, rounding ~1e-16/h ≈ 1e-11
    # for V'; the second difference rounds like ~1e-16/h² ≈ 1e-6, hence its looser bounds.
    t = W([spec]).terms[0]
    x = np.array([0.45, 1.7, 2.9, 4.1])
    h = 1e-5
    d1 = (t.value(x + h) - t.value(x - h)) / (2 * h)
    d2 = (t.value(x + h) - 2 * t.value(x) + t.value(x - h)) / h**2
    scale = np.abs(t.value(x)).max() + 1.0
    np.testing.assert_allclose(t.d1(x), d1, rtol=1e-7, atol=1e-8 * scale)
    np.testing.assert_allclose(t.d2(x), d2, rtol=2e-4, atol=1e-4 * scale)


def test_gaussian_waist_form_is_exp_minus_2r2_over_w2():
    # DESIGN §3: the waist form of an optical trap is −V₀ e^{−2r²/w²} (common practice).
    t = W([{"gaussian": {"depth": 3.0, "waist": 2.0}}]).terms[0]
    r = np.linspace(0, 4, 9)
    # rtol 1e-14: a = w/√2 is rounded once
    np.testing.assert_allclose(t.value(r), -3.0 * np.exp(-2 * r**2 / 4.0), rtol=1e-14)


def test_woods_saxon_radius_is_r0_a_one_third():
    t = W([{"woods_saxon": {"depth": 50.0, "r0": 1.25, "mass_number": 27,
                            "diffuseness": 0.6}}]).terms[0]
    assert t.radius == pytest.approx(1.25 * 3.0, rel=1e-14)  # 27^(1/3) = 3 to rounding
    # by definition of the Woods–Saxon form, V(R) = −V₀/2 (common practice, no source)
    assert t.value(np.array([3.75]))[0] == pytest.approx(-25.0, rel=1e-14)  # rounding of exp


def test_coulomb_is_continuous_at_the_sphere_radius_and_uses_e2_of_the_units():
    # e²/(4πε₀) = α ħc = 1.439964548 MeV fm (CODATA 2018, quoted from memory).
    w = W([{"coulomb": {"charge": 1, "radius": 3.0}}], units="nuclear")
    t = w.terms[0]
    inside, outside = t.value(np.array([3.0 - 1e-12, 3.0 + 1e-12]))
    assert inside == pytest.approx(outside, rel=1e-10)  # 1e-12 apart: the slope × 2e-12
    # rel 1e-8: the memorised constant has 10 digits
    assert t.value(np.array([10.0]))[0] * 10 == pytest.approx(1.439964548, rel=1e-8)
    assert t.value(np.array([0.0]))[0] == pytest.approx(1.5 * 1.439964548 / 3.0, rel=1e-8)


def test_thresholds():
    # Limits at infinity of the closed forms (calculus; common practice, no source).
    assert W([{"morse": {"depth": 4.0, "width": 1.0}}]).threshold(1) == 4.0
    assert W([{"gaussian": {"depth": 4.0, "range": 1.0}}]).threshold(3) == 0.0
    assert W([{"harmonic": {"frequency": 1.0}}]).threshold(1) == math.inf
    cubic = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.1}}])
    assert cubic.threshold(1) == -math.inf  # unbounded below on one side
    quartic = W([{"power": {"exponent": 3, "strength": -5.0}},
                 {"power": {"exponent": 4, "strength": 0.1}}])
    assert quartic.threshold(1) == math.inf  # competing infinities: the quartic wins


def test_polynomial_of_the_well_about_a_new_center():
    w = W([{"harmonic": {"stiffness": 2.0, "center": 1.0}},
           {"power": {"exponent": 3, "strength": 0.5}}])
    poly = w.polynomial(center=0.5)
    x = np.linspace(-2, 2, 7)
    ref = sum(c * (x - 0.5) ** p for p, c in poly.items())
    # binomial re-expansion about a new centre: rounding of a few terms of size ~10
    np.testing.assert_allclose(w.value(x), ref, rtol=1e-13, atol=1e-13)
    assert W([{"gaussian": {"depth": 1.0, "range": 1.0}}]).polynomial() is None


def test_minimum_of_an_unbounded_cubic_is_the_local_one_at_the_center():
    # DESIGN §2: the local minimum nearest the centre of the terms.
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.05}}])
    x0, v0, v2 = w.minimum()
    # the minimiser is polished by Newton steps on V': converged to rounding
    assert abs(x0) < 1e-12 and v0 == pytest.approx(0.0, abs=1e-14)
    assert v2 == pytest.approx(1.0, rel=1e-12)


def test_minimum_of_a_shifted_morse_well():
    w = W([{"morse": {"depth": 4.0, "width": 1.3, "center": 1.7}}])
    x0, _, v2 = w.minimum()
    assert x0 == pytest.approx(1.7, abs=1e-10)  # Newton-polished minimum: rounding level
    assert v2 == pytest.approx(2 * 4.0 * 1.3**2, rel=1e-9)  # V'' at a minimum known to 1e-10


def test_kinetic_prefactors_against_handbook_constants():
    # ħc = 197.3269804 MeV fm, m_n c² = 939.56542 MeV, m_p c² = 938.27209 MeV (CODATA 2018,
    # quoted from memory): ħ²/2m for the mean nucleon mass.
    hbarc, mn, mp = 197.3269804, 939.56542, 938.27209
    # rel 1e-7: the memorised masses have 8 significant digits
    assert get_units("nuclear").hbar2_over_2m() == pytest.approx(hbarc**2 / (mn + mp), rel=1e-7)
    # Rotational constant B = h/(8π² c μ r²) = 16.8576 cm⁻¹ Å² u / (μ r²) (handbook value,
    # e.g. Herzberg's tables; quoted from memory).
    assert get_units("molecular").hbar2_over_2m(1.0) == pytest.approx(16.8576, rel=1e-5)  # 6 digits
    assert get_units("atomic").hbar2_over_2m(2.0) == 0.25
    assert get_units("oscillator").hbar2_over_2m() == 0.5


def test_unit_conversions_against_handbook_values():
    # 1 hartree = 219474.6313 cm⁻¹ = 27.211386 eV; 1 bohr = 0.529177211 Å (CODATA, from memory).
    # each rel is one unit in the last memorised digit (10, 8 and 9 significant digits)
    assert convert_energy(1.0, "atomic", "molecular") == pytest.approx(219474.6313, rel=1e-9)
    assert convert_energy(1.0, "atomic", "nuclear") == pytest.approx(27.211386e-6, rel=1e-7)
    assert convert_length(1.0, "atomic", "molecular") == pytest.approx(0.529177211, rel=1e-8)
    with pytest.raises(ValueError, match="oscillator units"):
        convert_energy(1.0, "oscillator", "nuclear")


def test_harmonic_frequency_form_gives_that_frequency_in_any_units():
    for units in ("nuclear", "molecular", "trap", "atomic"):
        w = W([{"harmonic": {"frequency": 3.0}}], units=units, mass=2.0)
        s = ah.solve(w, dimension=3, l=0, size=4, levels=2, units=units, mass=2.0)
        # exact in the basis: eigh rounding only
        np.testing.assert_allclose(s.energies, [4.5, 10.5], rtol=1e-12)


def test_dot_units_kinetic_prefactor_against_handbook_value():
    # ħ²/2mₑ = 38.09982 meV nm² (CODATA-derived handbook value, quoted from memory); GaAs
    # effective mass 0.067 mₑ (common practice).
    u = get_units("dot")
    assert u.hbar2_over_2m(1.0) == pytest.approx(38.09982, rel=1e-6)  # 7 memorised digits
    assert u.length_from_frequency(3.0, 0.067) == pytest.approx(19.47, rel=1e-3)  # 4 digits
