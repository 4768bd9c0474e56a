"""Rotation–vibration levels and Dunham constants, against Morse, Pekeris and the oscillator."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.molecular import dunham_fit, rovibrational, spectroscopic_constants
from anharmony.units import get_units

W = ah.Well.from_terms
RTOL_FIT = 1e-9  # exact synthetic data: the fit reproduces them to rounding (cond(X) ~ 1e4)
RTOL_EXACT = 1e-12  # oscillator levels are exact in the basis

# an invented light hydride (as in cases/diatomic-morse.yaml): D = 38000 cm-1, α = 2.1 Å^-1,
# r_e = 0.93 Å, reduced mass 0.96 u
D, ALPHA, RE, MU = 38000.0, 2.1, 0.93, 0.96
HB = get_units("molecular").hbar2_over_2m(MU)  # ħ²/2μ in cm-1 Å²
WE = 2.0 * math.sqrt(D * ALPHA**2 * HB)  # Morse 1929: ωe = α √(2D/μ), here in cm-1
WEXE = WE**2 / (4.0 * D)  # Morse 1929: ωexe = ωe²/(4D)
BE = HB / RE**2  # rigid rotor: Be = ħ²/(2μ r_e²)
DE = 4.0 * BE**3 / WE**2  # Kratzer relation, De = 4Be³/ωe² (Pekeris 1934)
AE = 6.0 * math.sqrt(WEXE * BE**3) / WE - 6.0 * BE**2 / WE  # Pekeris, Phys. Rev. 45, 98 (1934)


def pekeris(v, j):
    """Rotating-Morse term values, Pekeris (1934) to the order he gives them."""
    x = j * (j + 1.0)
    return (WE * (v + 0.5) - WEXE * (v + 0.5) ** 2 + BE * x - DE * x**2
            - AE * (v + 0.5) * x)


def test_dunham_fit_recovers_morse_vibrational_constants_exactly():
    # Morse, Phys. Rev. 34, 57 (1929): G(v) = ωe(v+½) − ωexe(v+½)² exactly; Dunham (1932):
    # Y10 = ωe, Y20 = −ωexe.
    v = np.arange(10)
    fit = dunham_fit(v, np.zeros_like(v), WE * (v + 0.5) - WEXE * (v + 0.5) ** 2)
    c = fit.constants()
    assert c["we"].value == pytest.approx(WE, rel=RTOL_FIT)
    assert c["wexe"].value == pytest.approx(WEXE, rel=RTOL_FIT)
    assert abs(c["weye"].value) < 1e-9 * WE
    assert math.isnan(c["Be"].value) and "distinct J" in c["Be"].note


def test_dunham_fit_recovers_pekeris_rotational_constants():
    # Pekeris (1934) formula as synthetic data: Y01 = Be, Y11 = −αe, Y02 = −De (Dunham 1932).
    vv, jj = np.meshgrid(np.arange(6), np.arange(5))
    c = dunham_fit(vv, jj, pekeris(vv, jj)).constants()
    for name, ref in [("we", WE), ("wexe", WEXE), ("Be", BE), ("alpha_e", AE), ("De", DE)]:
        assert c[name].value == pytest.approx(ref, rel=RTOL_FIT), name
        assert c[name].uncertainty < 1e-6 * abs(ref)


def test_f_test_admits_a_real_higher_term_and_uncertainties_cover_noise():
    # Dunham series with γe = Y21 ≠ 0 plus seeded Gaussian noise σ (common practice, no
    # source: weighted least squares; 4σ bounds fail with probability ~6e-5 per constant).
    rng = np.random.default_rng(7)
    vv, jj = np.meshgrid(np.arange(8), np.arange(6))
    x = jj * (jj + 1.0)
    gamma, sigma = 2e-3, 1e-4
    e = pekeris(vv, jj) + gamma * (vv + 0.5) ** 2 * x + rng.normal(0, sigma, vv.shape)
    fit = dunham_fit(vv, jj, e, sigma=sigma)
    assert (2, 1) in fit.coefficients, fit.history
    y21 = fit.Y(2, 1)
    assert abs(y21.value - gamma) < 4 * y21.uncertainty
    c = fit.constants()
    for name, ref in [("we", WE), ("wexe", WEXE), ("Be", BE), ("alpha_e", AE)]:
        assert abs(c[name].value - ref) < 4 * c[name].uncertainty, name


def test_rovibrational_levels_of_the_3d_oscillator():
    # Textbook: E(v, J) = ħω(2v + J + 3/2) for the 3D oscillator (the radial channel l = J).
    w = W([{"harmonic": {"frequency": 1500.0}}], units="molecular", mass=MU)
    rv = rovibrational(w, J=[0, 1, 2, 3], levels=4, mass=MU, size=12)
    vv, jj = np.meshgrid(rv.v, rv.J)
    np.testing.assert_allclose(rv.energies, 1500.0 * (2 * vv + jj + 1.5), rtol=RTOL_EXACT)
    np.testing.assert_allclose(rv.G("bottom"), 1500.0 * (2 * rv.v + 1.5), rtol=RTOL_EXACT)
    np.testing.assert_allclose(rv.G(), 3000.0 * rv.v, rtol=RTOL_EXACT, atol=1e-9)
    np.testing.assert_allclose(rv.F(), 1500.0 * jj + 0.0 * vv, rtol=RTOL_EXACT, atol=1e-9)


def morse_expression():
    # the Morse well written as a formula in r (accepted in radial channels today)
    return W([{"expression": {"formula": "D*(1 - exp(-a*(r - re)))**2",
                              "parameters": {"D": D, "a": ALPHA, "re": RE}}}],
             units="molecular", mass=MU)


def check_morse_constants(well):
    c = spectroscopic_constants(well, mass=MU, levels=6, J=(0, 1, 2, 3), size=120)
    # the radial Morse problem equals the 1D one up to the wall at r = 0 (V(0) ≈ 36 D, a
    # tunnelling effect of e^{-2·36}) and basis truncation (~1e-6 cm-1 at 120 states)
    assert c["we"].value == pytest.approx(WE, rel=1e-8)
    assert c["wexe"].value == pytest.approx(WEXE, rel=1e-7)
    # Dunham 1932: Y01 = Be + O(Be³/ωe²), Y11 = −αe + O(Be²/ωe · Be/ωe), Y02 = −De(1 + O(Be/ωe))
    # and Pekeris's formulas are first order: relative gaps of a few Be/ωe ≈ 6e-3 at most
    assert c["Be"].value == pytest.approx(BE, rel=1e-4)
    assert c["alpha_e"].value == pytest.approx(AE, rel=1e-3)
    assert c["De"].value == pytest.approx(DE, rel=1e-3)
    assert c["we"].unit == "cm-1"


def test_spectroscopic_constants_of_a_morse_formula_well():
    check_morse_constants(morse_expression())


def test_spectroscopic_constants_of_a_morse_term():
    check_morse_constants(W([{"morse": {"depth": D, "width": ALPHA, "center": RE}}],
                            units="molecular", mass=MU))


def test_bad_rovibrational_input_is_refused():
    w = morse_expression()
    with pytest.raises(InputError, match="J: expected distinct integers"):
        rovibrational(w, J=[0, 0], mass=MU)
    with pytest.raises(InputError, match="cannot determine"):
        dunham_fit([0, 1, 2], [0, 0, 0], [1.0, 2.0, 3.0])
    rv = rovibrational(w, J=[1, 2], levels=2, mass=MU, size=60)
    with pytest.raises(InputError, match="J = 0"):
        rv.G()
