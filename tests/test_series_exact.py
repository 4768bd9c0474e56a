"""Exact (rational) Rayleigh–Schrödinger engine: published coefficients, closed forms, sympy."""

from fractions import Fraction

import mpmath
import pytest
import sympy as sp

from anharmony.errors import DegenerateLevelError
from anharmony.series.rs_exact import (
    hermite_bands,
    radial_bands,
    rs_exact_1d,
    rs_exact_banded,
    rs_exact_radial,
)

# Relative deviation allowed from the leading large-order formula at k = 100: its first
# correction is −95/(72k) ≈ −0.013 there (Bender & Wu, Phys. Rev. D 7, 1620 (1973); the value
# of the correction is quoted from memory), so 0.02 leaves room and still fails on a wrong
# rate, shift or constant.
LARGE_ORDER_RTOL_K100 = 0.02


def bender_wu_recursion(order: int) -> list[Fraction]:
    """Quartic ground-state E_k by the Bender–Wu recursion in powers of x (independent of the
    engine: no oscillator basis at all).

    ψ = e^{−x²/2} Σ_k λ^k φ_k(x), φ_k = Σ_i A_{k,i} x^{2i}, φ_0 = 1, A_{k,0} = 0 (k ≥ 1), for
    H = p²/2 + x²/2 + λx⁴: −½φ_k'' + xφ_k' + x⁴φ_{k−1} = Σ_{j=1}^k E_j φ_{k−j}; the x^0
    coefficient gives E_k = −A_{k,1}. (Bender & Wu, Phys. Rev. D 7, 1620 (1973), §II.)
    """
    a = [{0: Fraction(1)}]
    e = [Fraction(1, 2)]
    for k in range(1, order + 1):
        cur: dict[int, Fraction] = {}
        for i in range(2 * k, 0, -1):  # top-down: x^{2i} coefficient fixes A_{k,i}
            rhs = (i + 1) * (2 * i + 1) * cur.get(i + 1, Fraction(0))
            rhs -= a[k - 1].get(i - 2, Fraction(0))
            rhs += sum((e[j] * a[k - j].get(i, Fraction(0)) for j in range(1, k)), Fraction(0))
            cur[i] = rhs / (2 * i)
        e.append(-cur.get(1, Fraction(0)))
        a.append(cur)
    return e


def test_quartic_ground_state_matches_bender_wu_published_values():
    # Bender & Wu, Phys. Rev. 184, 1231 (1969): H = p²/2 + x²/2 + λx⁴, ground state.
    published = [Fraction(1, 2), Fraction(3, 4), Fraction(-21, 8), Fraction(333, 16),
                 Fraction(-30885, 128)]
    assert rs_exact_1d({4: 1}, 0, 4) == published


def test_quartic_ground_state_30_orders_match_bender_wu_recursion():
    # Independent formulation: the Bender–Wu recursion in powers of x (Phys. Rev. D 7, 1620
    # (1973)), written out in this test.
    assert rs_exact_1d({4: 1}, 0, 30) == bender_wu_recursion(30)


def test_quartic_hermite_and_laguerre_formulations_agree():
    # Two bases: scaled Hermite (1D without symmetry) and the d = 1, l = 0 Laguerre channel
    # (H_{2n}(x) ∝ L_n^{-1/2}(x²), Abramowitz & Stegun 22.5.40); both exact, so equal.
    assert rs_exact_1d({4: 1}, 0, 40) == rs_exact_radial({4: 1}, 0, 40, l=0, dimension=1)
    assert rs_exact_1d({4: 1}, 1, 20) == rs_exact_radial({4: 1}, 0, 20, l=1, dimension=1)


def test_quartic_large_order_formula_ratio_tends_to_one():
    # E_k ~ (−1)^{k+1} √(6/π³) 3^k Γ(k + ½) (Bender & Wu, Phys. Rev. 184, 1231 (1969)).
    e = rs_exact_1d({4: 1}, 0, 100)

    def ratio(k: int) -> mpmath.mpf:
        formula = (-1) ** (k + 1) * mpmath.sqrt(6 / mpmath.pi**3) * mpmath.mpf(3) ** k \
            * mpmath.gamma(k + mpmath.mpf(1) / 2)
        return mpmath.mpf(e[k].numerator) / e[k].denominator / formula

    deviations = [abs(ratio(k) - 1) for k in (25, 50, 100)]
    assert deviations[0] > deviations[1] > deviations[2]
    assert deviations[2] < LARGE_ORDER_RTOL_K100


def test_harmonic_perturbation_is_the_binomial_series():
    # W = g x² only changes the frequency: E(λ) = (n + ½)√(1 + 2gλ) (exactly solvable, any
    # textbook); coefficients (n + ½) C(1/2, k) (2g)^k.
    g = Fraction(3, 10)
    for n in (0, 3):
        got = rs_exact_1d({2: g}, n, 12)
        binom = Fraction(1)
        want = []
        for k in range(13):
            want.append((n + Fraction(1, 2)) * binom * (2 * g) ** k)
            binom = binom * (Fraction(1, 2) - k) / (k + 1)
        assert got == want


def test_linear_perturbation_shifts_the_oscillator():
    # W = x: completing the square gives E = n + ½ − λ²/2 exactly (odd power, no symmetry).
    assert rs_exact_1d({1: 1}, 2, 6) == [Fraction(5, 2), 0, Fraction(-1, 2), 0, 0, 0, 0]


def test_3d_harmonic_perturbation_is_the_binomial_series():
    # 3D: E = (2n + l + 3/2) √(1 + 2gλ) (exactly solvable); W = g r².
    g = Fraction(1, 4)
    got = rs_exact_radial({2: g}, 1, 8, l=2, dimension=3)
    binom, want = Fraction(1), []
    for k in range(9):
        want.append((2 * 1 + 2 + Fraction(3, 2)) * binom * (2 * g) ** k)
        binom = binom * (Fraction(1, 2) - k) / (k + 1)
    assert got == want


def _hermite_function(n: int, x: sp.Symbol) -> sp.Expr:
    return sp.hermite(n, x) * sp.exp(-x**2 / 2) / sp.sqrt(2**n * sp.factorial(n) * sp.sqrt(sp.pi))


@pytest.mark.parametrize("level", [0, 1])
def test_cubic_low_orders_match_sympy_sum_over_states(level):
    # First order ⟨n|x³|n⟩ and second order Σ_m |⟨m|x³|n⟩|²/(E_n − E_m), integrals of Hermite
    # functions done by sympy (textbook RS formulas, e.g. Sakurai §5.1); odd orders vanish by
    # x → −x symmetry (common practice, no source).
    x = sp.symbols("x", real=True)
    psi = {m: _hermite_function(m, x) for m in range(max(0, level - 3), level + 4)}

    def w(m: int) -> sp.Expr:
        return sp.integrate(psi[m] * x**3 * psi[level], (x, -sp.oo, sp.oo))

    first = w(level)
    second = sum(w(m) ** 2 / (level - m) for m in psi if m != level)
    got = rs_exact_1d({3: 1}, level, 5)
    assert got[1] == Fraction(str(sp.nsimplify(first)))
    assert got[2] == Fraction(str(sp.nsimplify(second)))
    assert got[3] == 0 and got[5] == 0


@pytest.mark.parametrize(("dimension", "l", "level"), [(3, 0, 0), (3, 1, 1), (2, 0, 0), (2, 3, 1)])
def test_radial_quartic_low_orders_match_sympy_sum_over_states(dimension, l, level):
    # ⟨r⁴⟩ and Σ_m |⟨m|r⁴|n⟩|²/(2(n − m)) with normalised radial oscillator functions
    # R_nl ∝ r^l e^{−r²/2} L_n^{l+d/2−1}(r²), measure r^{d−1} dr, by sympy (textbook RS).
    r = sp.symbols("r", positive=True)
    alpha = l + sp.Rational(dimension, 2) - 1

    def radial(n: int) -> sp.Expr:
        f = r**l * sp.exp(-r**2 / 2) * sp.assoc_laguerre(n, alpha, r**2)
        return f / sp.sqrt(sp.integrate(f**2 * r ** (dimension - 1), (r, 0, sp.oo)))

    states = {m: radial(m) for m in range(max(0, level - 2), level + 3)}

    def w(m: int) -> sp.Expr:
        return sp.integrate(states[m] * r**4 * states[level] * r ** (dimension - 1), (r, 0, sp.oo))

    first = sp.nsimplify(sp.simplify(w(level)))
    second = sp.nsimplify(sp.simplify(sum(w(m) ** 2 / (2 * (level - m))
                                          for m in states if m != level)))
    got = rs_exact_radial({4: 1}, level, 2, l=l, dimension=dimension)
    assert got[0] == 2 * level + l + Fraction(dimension, 2)
    assert got[1] == Fraction(str(first))
    assert got[2] == Fraction(str(second))


def test_gmpy2_and_fraction_fields_agree():
    # The number type must not change the exact result (both are exact rationals).
    pytest.importorskip("gmpy2")
    w = {3: Fraction(1, 3), 4: Fraction(-1, 7), 1: Fraction(2, 5)}
    assert rs_exact_1d(w, 1, 12, field="gmpy2") == rs_exact_1d(w, 1, 12, field="fraction")


def test_scaled_hermite_bands_reproduce_x_squared_recurrence():
    # ξ² on H_n: x² H_n = H_{n+2}/4 + (n + ½) H_n + n(n−1) H_{n−2} (from A&S 22.7.13 twice);
    # in the scaled basis |n} = H_n/(2^n ⌊n/2⌋!) the diagonal is the same, n + ½.
    bands = hermite_bands({2: 1}, 8)
    assert bands[0] == [Fraction(2 * n + 1, 2) for n in range(8)]
    assert set(bands) == {-2, 0, 2}


def test_radial_bands_diagonal_of_t_is_laguerre_recurrence():
    # t L_n^α: diagonal 2n + α + 1 (A&S 22.7.12), the mean of r²/b² in state n.
    alpha = Fraction(1, 2)
    bands = radial_bands({1: 1}, 5, alpha=alpha)
    assert bands[0] == [2 * n + alpha + 1 for n in range(5)]


def test_degenerate_reference_level_is_reported():
    # Non-degenerate RS divides by E_0 − E_m; an equal level must be an error.
    diagonal = [Fraction(1, 2), Fraction(3, 2), Fraction(3, 2), Fraction(5, 2)]
    bands = {0: [Fraction(1)] * 4, 1: [Fraction(1)] * 4, -1: [Fraction(1)] * 4}
    with pytest.raises(DegenerateLevelError) as info:
        rs_exact_banded(diagonal, bands, 1, 3)
    assert info.value.levels == (1, 2)


def test_radial_odd_powers_are_rejected_with_the_power_named():
    with pytest.raises(ValueError, match=r"odd power\(s\) \[3\]"):
        rs_exact_radial({3: 1, 4: 1}, 0, 4, l=0, dimension=3)


def test_non_rational_coefficient_is_rejected():
    with pytest.raises(TypeError, match=r"coefficients\[4\]"):
        rs_exact_1d({4: 0.1}, 0, 4)
