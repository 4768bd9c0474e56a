"""Matrix elements, wavefunctions, overlaps and multipoles, against textbook closed forms."""

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import eval_genlaguerre, eval_hermite, gammaln

import anharmony as ah
from anharmony import observables as ob
from anharmony.errors import ConvergenceWarning, InputError

W = ah.Well.from_terms
RTOL_EXACT = 1e-12  # exact banded / Gauss rules: rounding of sums of ~N terms of size ~N
RTOL_QUAD = 1e-9  # scipy.integrate.quad on smooth integrands reaches ~1e-10 relative
ATOL_ZERO = 1e-12  # elements that vanish exactly, relative to elements of size ~1


def oscillator(hw=1.0, center=0.0):
    return W([{"harmonic": {"frequency": hw, "center": center}}])


def hermite_function(n, x, b=1.0, x0=0.0):
    """Standard-phase Hermite function (textbook; positive for large x)."""
    xi = (x - x0) / b
    norm = math.exp(-0.5 * (n * math.log(2.0) + gammaln(n + 1) + 0.5 * math.log(math.pi)))
    return norm * eval_hermite(n, xi) * np.exp(-0.5 * xi**2) / math.sqrt(b)


def radial_oscillator(n, l, r, b=1.0):
    """3D oscillator R_nl, L_n(0) > 0 phase, ∫R² r² dr = 1 (textbook; e.g. Messiah App. B)."""
    lognorm = 0.5 * (math.log(2.0) + gammaln(n + 1) - gammaln(n + l + 1.5) - 3 * math.log(b))
    rho = r / b
    return math.exp(lognorm) * rho**l * np.exp(-0.5 * rho**2) * eval_genlaguerre(n, l + 0.5,
                                                                                 rho**2)


# --- one spectrum ------------------------------------------------------------------------

@pytest.mark.parametrize(("hw", "center"), [(1.0, 0.0), (1.7, 0.6)])
def test_oscillator_dipole_elements_are_b_sqrt_n_plus_1_over_2(hw, center):
    # Textbook: ⟨n+1|x − x₀|n⟩ = b √((n+1)/2) for standard-phase Hermite functions (Sakurai,
    # Modern Quantum Mechanics §2.3). Our phase makes ψ_n positive at the left, ψ_n = (−1)^n
    # ψ_n^std, so the element comes out −b √((n+1)/2); ⟨n|x|n⟩ = x₀.
    s = ah.solve(oscillator(hw, center), dimension=1, l=None, size=20, levels=8)
    b = s.basis.length
    m = ob.operator_matrix(s, "x")
    n = np.arange(7)
    np.testing.assert_allclose(np.diag(m, 1), -b * np.sqrt((n + 1) / 2), rtol=RTOL_EXACT)
    np.testing.assert_allclose(np.diag(m), center, atol=ATOL_ZERO)
    assert ob.matrix_element(s, "x", 3, 5) == pytest.approx(0.0, abs=ATOL_ZERO)


@pytest.mark.parametrize(("dimension", "l"), [(3, 0), (3, 2), (2, 1), (1, 0), (1, 1)])
def test_oscillator_mean_square_radius_is_b2_2n_l_d_over_2(dimension, l):
    # Virial theorem for the oscillator: ⟨r²⟩ = b²(2n + l + d/2) (e.g. Messiah, Quantum
    # Mechanics, ch. XII; 3D: b²(2n + l + 3/2)).
    s = ah.solve(oscillator(2.3), dimension=dimension, l=l, size=20, levels=6)
    b = s.basis.length
    n = np.arange(6)
    op = "x**2" if dimension == 1 else "r**2"
    np.testing.assert_allclose(ob.expectation(s, op), b**2 * (2 * n + l + dimension / 2),
                               rtol=RTOL_EXACT)
    np.testing.assert_allclose(ob.rms_radius(s), b * np.sqrt(2 * n + l + dimension / 2),
                               rtol=RTOL_EXACT)


@pytest.mark.parametrize("l", [0, 1, 3])
def test_odd_radial_power_matches_scipy_quad(l):
    # Independent reference: scipy.integrate.quad over the textbook R_nl (scipy.special
    # Laguerre polynomials); ⟨r⟩ and ⟨r³⟩ are odd powers, not exact in the banded matrices.
    s = ah.solve(oscillator(), dimension=3, l=l, size=12, levels=4)
    for k in (1, 3):
        got = ob.expectation(s, f"r**{k}")
        ref = [quad(lambda r, n=n, k=k: radial_oscillator(n, l, r) ** 2 * r ** (k + 2), 0, np.inf,
                    epsabs=0, epsrel=1e-12)[0] for n in range(4)]
        np.testing.assert_allclose(got, ref, rtol=RTOL_QUAD)


def test_function_and_power_operators_agree_on_an_anharmonic_well():
    # Consistency of the two paths (exact banded power vs quadrature of the same function).
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.2}}])
    s = ah.solve(w, dimension=1, l=None, size=40, levels=6)
    np.testing.assert_allclose(ob.operator_matrix(s, lambda x: x**3),
                               ob.operator_matrix(s, "x**3"), atol=1e-11)


def test_wavefunctions_are_normalised_and_match_the_textbook_oscillator():
    # Messiah App. B radial functions (L_n(0) > 0, positive near the origin = our phase).
    s = ah.solve(oscillator(1.4), dimension=3, l=2, size=16, levels=4)
    b = s.basis.length
    r = np.linspace(0.0, 8.0 * b, 801)
    for n in range(4):
        np.testing.assert_allclose(ob.wavefunction(s, n, r), radial_oscillator(n, 2, r, b),
                                   atol=1e-12)
        norm = quad(lambda x, n=n: ob.wavefunction(s, n, np.array([x]))[0] ** 2 * x**2, 0,
                    np.inf)[0]
        assert norm == pytest.approx(1.0, rel=RTOL_QUAD)
    np.testing.assert_allclose(ob.wavefunction(s, 1, r, reduced=True),
                               r * radial_oscillator(1, 2, r, b), atol=1e-12)


def test_1d_wavefunction_phase_is_positive_at_the_left():
    # Our convention against the textbook Hermite functions: ψ_n = (−1)^n ψ_n^std.
    s = ah.solve(oscillator(0.9, 0.4), dimension=1, l=None, size=20, levels=6)
    b = s.basis.length
    x = np.linspace(-6, 6, 301)
    for n in range(6):
        np.testing.assert_allclose(ob.wavefunction(s, n, x),
                                   (-1) ** n * hermite_function(n, x, b, 0.4), atol=1e-12)


@pytest.mark.parametrize("well", [
    [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.15}},
     {"power": {"exponent": 4, "strength": 0.05}}],
    [{"morse": {"depth": 40.0, "width": 0.5, "center": 1.0}}],
])
def test_off_diagonal_signs_do_not_depend_on_the_basis(well):
    # Invariant: the phase convention fixes each eigenvector's sign, so ⟨i|x|j⟩ of converged
    # levels keeps its sign (and value) when the basis size or length changes.
    w = W(well)
    a = ah.solve(w, dimension=1, l=None, size=50, levels=5)
    b = ah.solve(w, dimension=1, l=None, size=70, levels=5, length=0.9 * a.basis.length)
    np.testing.assert_allclose(ob.operator_matrix(a, "x"), ob.operator_matrix(b, "x"),
                               atol=1e-7)  # levels converged to ~1e-9 at these sizes
    np.testing.assert_allclose(ob.overlaps(a, b), np.eye(5), atol=1e-7)


def test_fix_phases_is_idempotent_and_keeps_energies():
    # Invariant of a sign convention.
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.3}}])
    s = ah.solve(w, dimension=3, l=1, size=30, levels=5)
    f = ob.fix_phases(s)
    assert np.all(ob.phase_signs(f) == 1.0)
    assert ob.fix_phases(f) is f
    np.testing.assert_array_equal(f.energies, s.energies)
    np.testing.assert_allclose(np.abs(f.vectors), np.abs(s.vectors), rtol=0, atol=0)


def test_matrix_element_of_a_continuum_level_warns():
    # DESIGN §2: levels above the threshold are discretised continuum, flagged.
    w = W([{"gaussian": {"depth": 2.0, "range": 1.0}}])
    s = ah.solve(w, dimension=1, l=0, size=40, levels=4)  # 40: the bound level converged
    assert not s.bound.all()
    k = int(np.flatnonzero(~s.bound)[0])
    with pytest.warns(ConvergenceWarning, match="above the threshold"):
        ob.matrix_element(s, "x**2", 0, k)


@pytest.mark.parametrize(("args", "match"), [
    (("y**2", 0, 0), "op: expected a power"),
    (("r**2", 0, 0), "coordinate x"),
    (("x**2", 0, 9), "j: must be a level index"),
    (("x**2", -1, 0), "i: must be a level index"),
])
def test_bad_matrix_element_arguments_are_refused(args, match):
    s = ah.solve(oscillator(), dimension=1, l=None, size=10, levels=3)
    with pytest.raises(InputError, match=match):
        ob.matrix_element(s, *args)


def test_central_channel_refuses_cartesian_x():
    s = ah.solve(oscillator(), dimension=3, l=0, size=10, levels=3)
    with pytest.raises(InputError, match="radial coordinate r"):
        ob.expectation(s, "x**2")


# --- two wells ---------------------------------------------------------------------------

@pytest.mark.parametrize("shift", [0.7, 1.5])
def test_displaced_oscillators_give_poisson_franck_condon_factors(shift):
    # Huang & Rhys, Proc. R. Soc. A 204 (1950) 406: equal frequencies, displacement Δ:
    # |⟨v|0⟩|² = e^{−S} S^v / v!, S = (Δ/b)²/2.
    lower = ah.solve(oscillator(1.0), dimension=1, l=None, size=30, levels=12)
    upper = ah.solve(oscillator(1.0, shift), dimension=1, l=None, size=30, levels=12)
    fc = ob.franck_condon(upper, lower)
    b = lower.basis.length
    big_s = 0.5 * (shift / b) ** 2
    v = np.arange(12)
    poisson = np.exp(-big_s - gammaln(v + 1) + v * np.log(big_s))
    np.testing.assert_allclose(fc.factors[:, 0], poisson, rtol=1e-10, atol=1e-15)
    # the 12 upper levels hold all but the Poisson tail beyond v = 11
    assert fc.sums[0] == pytest.approx(poisson.sum(), rel=1e-12)


def test_overlap_of_ground_states_of_different_oscillators_is_the_gaussian_integral():
    # Gaussian integral (common practice, no source): ⟨0_a|0_b⟩ =
    # √(2 b_a b_b/(b_a² + b_b²)) exp(−Δ²/(2(b_a² + b_b²))).
    a = ah.solve(oscillator(1.0, -0.3), dimension=1, l=None, size=20, levels=3)
    b = ah.solve(oscillator(2.5, 0.9), dimension=1, l=None, size=25, levels=3)
    ba, bb = a.basis.length, b.basis.length
    ref = math.sqrt(2 * ba * bb / (ba**2 + bb**2)) * math.exp(-(1.2**2) / (2 * (ba**2 + bb**2)))
    assert ob.overlaps(a, b)[0, 0] == pytest.approx(ref, rel=RTOL_EXACT)
    # transposition: ⟨b|a⟩ = ⟨a|b⟩ᵀ for real functions
    np.testing.assert_allclose(ob.overlaps(b, a), ob.overlaps(a, b).T, atol=ATOL_ZERO)


def test_dipole_function_transition_matrix_matches_scipy_quad():
    # Independent reference: quad over textbook Hermite functions (our phase (−1)^n).
    a = ah.solve(oscillator(1.0), dimension=1, l=None, size=20, levels=3)
    b = ah.solve(oscillator(1.6, 0.8), dimension=1, l=None, size=20, levels=3)

    def mu(x):
        return np.tanh(x) + 0.2 * x

    got = ob.transition_matrix(a, b, mu)
    for i in range(3):
        for j in range(3):
            ref = quad(lambda x, i=i, j=j: (-1) ** (i + j)
                       * hermite_function(i, x, a.basis.length)
                       * mu(x) * hermite_function(j, x, b.basis.length, 0.8), -np.inf, np.inf,
                       epsabs=1e-13)[0]
            assert got[i, j] == pytest.approx(ref, abs=1e-10)


def test_overlaps_refuse_different_channels():
    a = ah.solve(oscillator(), dimension=3, l=0, size=10, levels=2)
    b = ah.solve(oscillator(), dimension=3, l=1, size=10, levels=2)
    with pytest.raises(InputError, match="one channel"):
        ob.overlaps(a, b)


# --- multipoles --------------------------------------------------------------------------

@pytest.mark.parametrize("l", [0, 1, 2])
def test_oscillator_radial_e1_e2_integrals_match_closed_forms(l):
    # Closed forms of the 3D oscillator (L_n(0) > 0 phase; quoted from memory, e.g. Moshinsky,
    # The Harmonic Oscillator in Modern Physics, 1969):
    # ⟨n, l+1|r|n, l⟩ = b√(n + l + 3/2), ⟨n−1, l+1|r|n, l⟩ = −b√n,
    # ⟨n, l+2|r²|n, l⟩ = b²√((n+l+3/2)(n+l+5/2)), ⟨n−1, l+2|r²|n, l⟩ = −2b²√(n(n+l+3/2)),
    # ⟨n−2, l+2|r²|n, l⟩ = b²√(n(n−1)).
    w = oscillator(1.3)
    s0, s1, s2 = (ah.solve(w, dimension=3, l=l + d, size=15, levels=5) for d in range(3))
    b = s0.basis.length
    m1 = ob.transition_matrix(s1, s0, "r")
    m2 = ob.transition_matrix(s2, s0, "r**2")
    for n in range(5):
        assert m1[n, n] == pytest.approx(b * math.sqrt(n + l + 1.5), rel=RTOL_EXACT)
        assert m2[n, n] == pytest.approx(b**2 * math.sqrt((n + l + 1.5) * (n + l + 2.5)),
                                         rel=RTOL_EXACT)
        if n >= 1:
            assert m1[n - 1, n] == pytest.approx(-b * math.sqrt(n), rel=RTOL_EXACT)
            assert m2[n - 1, n] == pytest.approx(-2 * b**2 * math.sqrt(n * (n + l + 1.5)),
                                                 rel=RTOL_EXACT)
        if n >= 2:
            assert m2[n - 2, n] == pytest.approx(b**2 * math.sqrt(n * (n - 1)), rel=RTOL_EXACT)
        # E1 only connects shells N ± 1: ⟨n+1, l+1|r|n, l⟩ = 0
        if n + 1 < 5:
            assert m1[n + 1, n] == pytest.approx(0.0, abs=ATOL_ZERO)


def _wigner_eckart_check(l, j, k, lp, jp, reduced):
    """Full ⟨(l½)j m|Y_kq|(l′½)j′ m′⟩ by Clebsch–Gordan sums of Gaunt integrals (sympy)."""
    from sympy import Rational, S
    from sympy.physics.wigner import clebsch_gordan, gaunt, wigner_3j

    half = Rational(1, 2)
    jj, jjp = Rational(int(2 * j), 2), Rational(int(2 * jp), 2)
    for m2 in range(-int(2 * j), int(2 * j) + 1, 2):
        m = Rational(m2, 2)
        for q in range(-k, k + 1):
            mp = m - q
            if abs(mp) > jjp:
                continue
            full = S(0)
            for ms in (half, -half):
                ml, mlp = m - ms, mp - ms
                if abs(ml) > l or abs(mlp) > lp:
                    continue
                # ∫ Y*_{l ml} Y_{kq} Y_{l′ml′} dΩ = (−1)^{ml} gaunt(l, k, l′, −ml, q, ml′)
                full += (clebsch_gordan(l, half, jj, ml, ms, m)
                         * clebsch_gordan(lp, half, jjp, mlp, ms, mp)
                         * (-1) ** ml * gaunt(l, k, lp, -ml, q, mlp))
            we = (-1) ** (jj - m) * wigner_3j(jj, k, jjp, -m, q, mp) * reduced
            assert float(full) == pytest.approx(float(we), abs=1e-12)


@pytest.mark.parametrize(("l", "j", "k", "lp", "jp"), [
    (2, 2.5, 2, 0, 0.5), (1, 1.5, 1, 0, 0.5), (1, 0.5, 1, 2, 1.5), (3, 3.5, 2, 1, 1.5),
    (2, 1.5, 2, 2, 2.5),
])
def test_coupled_reduced_elements_satisfy_wigner_eckart_with_gaunt_integrals(l, j, k, lp, jp):
    # Edmonds, Angular Momentum in Quantum Mechanics (1957), eqs. (5.4.1), (7.1.7): the reduced
    # element reproduces every m-resolved element built from sympy's Gaunt integrals and
    # Clebsch–Gordan coefficients (an independent route through sympy.physics.wigner).
    _wigner_eckart_check(l, j, k, lp, jp, ob.coupled_reduced_y(l, j, k, lp, jp))


def test_oscillator_e2_strength_d5_2_to_s1_2():
    # B(E2; 1d5/2 → 1s1/2) of the 3D oscillator assembled by hand: radial ⟨0s|r²|0d⟩ =
    # b²√(15/4) (closed form above, n = 0, l = 0) times Edmonds' (7.1.7) angular factor with
    # sympy's 3j/6j, B = e_eff² |⟨f‖r²Y_2‖i⟩|²/(2j_i + 1) (Bohr & Mottelson vol. I, App. 3C).
    from sympy.physics.wigner import wigner_3j, wigner_6j

    w = W([{"harmonic": {"frequency": 10.0}}])
    d52 = ah.solve(w, dimension=3, l=2, j=2.5, size=10, levels=2, units="nuclear")
    s12 = ah.solve(w, dimension=3, l=0, j=0.5, size=10, levels=2, units="nuclear")
    b = s12.basis.length
    orb = math.sqrt(5 * 5 * 1 / (4 * math.pi)) * float(wigner_3j(0, 2, 2, 0, 0, 0))
    six = float(wigner_6j(0, 0.5, 0.5, 2.5, 2, 2))
    red = (-1) ** round(0 + 0.5 + 2.5 + 2) * math.sqrt(2 * 6) * six * orb * b**2 * math.sqrt(3.75)
    got = ob.transition_strength(d52, s12, multipole=2, charge=0.5)
    assert got == pytest.approx(0.25 * red**2 / 6, rel=RTOL_EXACT)
    assert ob.reduced_multipole(s12, d52, 2) == pytest.approx(red, rel=RTOL_EXACT)


def test_parity_forbidden_multipole_is_zero():
    # Selection rule: l_f + λ + l_i odd ⇒ (l_f λ l_i; 0 0 0) = 0 (Edmonds §3.7).
    w = oscillator()
    s0 = ah.solve(w, dimension=3, l=0, size=10, levels=2)
    s1 = ah.solve(w, dimension=3, l=1, size=10, levels=2)
    assert ob.reduced_multipole(s1, s0, 2) == 0.0
    assert ob.reduced_multipole(s1, s0, 1) != 0.0


def test_parity_channel_dipole_matches_the_channel_without_symmetry():
    # Invariant: the 1D parity channels of a symmetric well are the levels of the basis without
    # symmetry; ⟨even|x|odd⟩ on the whole line is the same element (up to the phase convention,
    # which differs for odd levels: positive near 0⁺ versus positive at the far left).
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.3}}])
    even = ah.solve(w, dimension=1, l=0, size=30, levels=3)
    odd = ah.solve(w, dimension=1, l=1, size=30, levels=3)
    full = ah.solve(w, dimension=1, l=None, size=60, levels=6)
    x_full = ob.operator_matrix(full, "x")
    x_par = ob.transition_matrix(even, odd, "x")
    np.testing.assert_allclose(np.abs(x_par), np.abs(x_full[0::2, 1::2]), atol=1e-10)
    np.testing.assert_allclose(ob.transition_matrix(even, even, "x"), 0.0, atol=ATOL_ZERO)


def test_oscillator_e1_reduced_element_1s_to_1p_closed_form():
    # By hand: radial ⟨0p|r|0s⟩ = b√(3/2) (closed form above, n = l = 0) and
    # ⟨1‖Y_1‖0⟩ = (−1)¹ √(3·3·1/4π) (1 1 0; 0 0 0) = √(3/4π), with (1 1 0; 0 0 0) = −1/√3
    # (Edmonds eq. (5.4.5) and his 3j table; quoted from memory): ⟨1p‖rY_1‖1s⟩ = 3b/√(8π),
    # B(E1; 1s → 1p) = 9b²/(8π) for 2l_i + 1 = 1.
    w = oscillator(0.7)
    s = ah.solve(w, dimension=3, l=0, size=8, levels=2)
    p = ah.solve(w, dimension=3, l=1, size=8, levels=2)
    b = s.basis.length
    assert ob.reduced_multipole(p, s, 1) == pytest.approx(3 * b / math.sqrt(8 * math.pi),
                                                         rel=RTOL_EXACT)
    assert ob.transition_strength(s, p, 1) == pytest.approx(9 * b**2 / (8 * math.pi),
                                                           rel=RTOL_EXACT)
