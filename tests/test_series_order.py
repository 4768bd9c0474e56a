"""Terms with a perturbation order: H(λ) = H_ref + λW₁ + λ²W₂ + … (the generic ``order`` key).

Outside references: the exact Morse levels (P. M. Morse, Phys. Rev. 34, 57 (1929); e.g.
Herzberg, *Spectra of Diatomic Molecules*, ch. III); the second-order levels of the
cubic + quartic oscillator (Landau & Lifshitz, *Quantum Mechanics*, §38 problem 3, quoted from
memory, and re-derived in the comment beside the test); Dunham's Y₂₀ (J. L. Dunham, Phys. Rev.
41, 721 (1932), quoted from memory); the shifted and rescaled oscillator in closed form; the
Bender–Wu quartic coefficients (Phys. Rev. 184, 1231 (1969)); sympy (the root of the
characteristic polynomial expanded in λ, and sums over states); finite differences of the
diagonaliser in λ.
"""

from __future__ import annotations

import math
from fractions import Fraction as F

import numpy as np
import pytest
import sympy as sp

import anharmony as ah
from anharmony.errors import InputError, TermError
from anharmony.series.rs_exact import hermite_bands, reach, rs_exact_banded
from anharmony.series.rs_numeric import rs_numeric

# a 5-point central stencil in λ with step H_FD: truncation ~ H_FD⁴ |E⁽⁵⁾| / 30 ≈ 1e-9 and
# rounding ~ 1e-15 / H_FD² ≈ 1e-11 for these levels (measured: 3e-13 on E_1, 1e-10 on E_2),
# so 1e-8 leaves room and fails on a wrong coefficient (the E_k here are 1e-3 … 1e-1)
H_FD = 1e-2
ATOL_FD = 1e-8
# the dense numeric series settles its coefficients to 1e-10 (front.DENSE_RTOL), the
# diagonaliser's levels are converged to ~1e-13 at these sizes: 1e-9 on levels of order 1
ATOL_DENSE = 1e-9
# the engines agree with exact rationals to rounding: a few ulp times the matrix norms (≤ 10)
RTOL_FLOAT = 1e-13

MORSE_REF = {"frequency": 1.0, "center": 0.0}


def morse_taylor(a: F, *, quartic_order: int = 2) -> list[dict]:
    """D (1 − e^{−a x})² to fourth order about x = 0, with D a² = ½ so that ħω = 1 (m = ħ = 1):
    D a²x² − D a³x³ + (7/12) D a⁴x⁴ (common practice, no source: the Taylor series)."""
    d = F(1, 2) / a**2
    return [{"harmonic": {"stiffness": float(2 * d * a**2)}},
            {"power": {"exponent": 3, "strength": float(-d * a**3)}},
            {"power": {"exponent": 4, "strength": float(F(7, 12) * d * a**4),
                       "order": quartic_order}}]


# --------------------------------------------------------------------------- the key
@pytest.mark.parametrize("spec", [
    {"harmonic": {"frequency": 1.0}},
    {"power": {"exponent": 4, "strength": 0.1}},
    {"polynomial": {"coefficients": {3: 0.1}}},
    {"gaussian": {"depth": 1.0, "range": 2.0}},
    {"morse": {"depth": 10.0, "width": 0.3}},
    {"expression": {"formula": "0.1*x**4"}},
])
def test_every_term_kind_takes_the_order_key(spec):
    # our contract (terms/base.py): `order` is generic, read once in Term.from_params
    (kind, params), = spec.items()
    plain = ah.Well.from_terms([spec])
    given = ah.Well.from_terms([{kind: {**params, "order": 3}}])
    assert plain.orders == (1,) and given.orders == (3,)
    x = np.linspace(-1.0, 1.0, 7)
    np.testing.assert_array_equal(plain.value(x), given.value(x))  # the well is the same


@pytest.mark.parametrize("bad", [0, -1, 1.5, True, "2", 101])
def test_a_bad_order_is_refused_naming_the_field(bad):
    with pytest.raises(TermError, match=r"well\[1\]\.power\.order: must be an integer"):
        ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                            {"power": {"exponent": 4, "strength": 0.1, "order": bad}}])


def test_a_near_miss_of_order_is_suggested():
    with pytest.raises(TermError, match="did you mean 'order'"):
        ah.Well.from_terms([{"power": {"exponent": 4, "strength": 0.1, "ordre": 2}}])


def test_a_case_file_passes_the_order_and_refuses_a_bad_one_at_its_line(tmp_path):
    from anharmony.cases import CaseError, load_case

    text = ("schema: 1\nspace: {dimension: 1, l: 0}\nwell:\n  - harmonic: {frequency: 1.0}\n"
            "  - power: {exponent: 4, strength: 0.1, order: 2}\n")
    p = tmp_path / "ordered.yaml"
    p.write_text(text)
    case = load_case(p)
    assert case.well_at(None).orders == (1, 2)
    p.write_text(text.replace("order: 2", "order: 0"))
    with pytest.raises(CaseError, match=r"ordered\.yaml:5:\d+: well\[1\]\.order: must be"):
        load_case(p)


def test_by_order_splits_the_well_and_the_parts_add_up():
    well = ah.Well.from_terms(morse_taylor(F(1, 10)))
    parts = well.by_order()
    assert list(parts) == [1, 2] and [len(p.terms) for p in parts.values()] == [2, 1]
    x = np.linspace(-2.0, 2.0, 9)
    np.testing.assert_allclose(parts[1].value(x) + parts[2].value(x), well.value(x),
                               rtol=1e-15, atol=1e-15)


# --------------------------------------------------------------------------- defaults unchanged
@pytest.mark.parametrize("exact", [True, False])
def test_order_one_written_out_gives_the_same_series_bit_for_bit(exact):
    # our contract: the default (every term at first order) is the series as it was
    plain = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                {"power": {"exponent": 4, "strength": 0.3}}])
    ones = ah.Well.from_terms([{"harmonic": {"frequency": 1.0, "order": 1}},
                               {"power": {"exponent": 4, "strength": 0.3, "order": 1}}])
    a = ah.series(plain, 1, 0, orders=12, exact=exact)
    b = ah.series(ones, 1, 0, orders=12, exact=exact)
    np.testing.assert_array_equal(a.coefficients, b.coefficients)
    assert a.exact == b.exact and a.term_orders == (1, 1)


def test_the_quartic_at_second_order_is_bender_wu_in_lambda_squared():
    # with H_ref the harmonic term itself, W₁ = 0 and W₂ = x⁴: E(λ) = E_BW(λ²); Bender & Wu,
    # Phys. Rev. 184, 1231 (1969), H = p²/2 + x²/2 + g x⁴
    published = [F(1, 2), F(3, 4), F(-21, 8), F(333, 16), F(-30885, 128)]
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 1.0, "order": 2}}])
    ser = ah.series(well, 1, 0, orders=8, reference={"frequency": 1.0}, exact=True)
    assert ser.exact[0::2] == published
    assert ser.exact[1::2] == [0, 0, 0, 0]
    assert ser.term_orders == (1, 2)


def test_radial_quartic_at_second_order_is_the_first_order_series_in_lambda_squared():
    # exact identity (common practice, no source): W₁ = 0, W₂ = g r⁴ makes E(λ) = E_g(λ²);
    # the plain series of the same 3D channel is the reference, itself checked in
    # test_series_exact against Bender–Wu and sympy
    ordered = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                  {"power": {"exponent": 4, "strength": 0.2, "order": 2}}])
    plain = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                {"power": {"exponent": 4, "strength": 0.2}}])
    a = ah.series(ordered, 3, 1, level=1, orders=8, reference={"frequency": 1.0}, exact=True)
    b = ah.series(plain, 3, 1, level=1, orders=4, reference={"frequency": 1.0}, exact=True)
    assert a.exact[0::2] == b.exact and a.exact[1::2] == [0, 0, 0, 0]
    assert a.basis_size == 1 + 4 * 2 + 1  # reach 8: four W₂ of width 2 (t² = r⁴) in 8 orders


# --------------------------------------------------------------------------- Morse and Dunham
@pytest.mark.parametrize("level", range(5))
def test_morse_taylor_at_second_order_gives_the_exact_morse_term_values(level):
    # Morse 1929 (Herzberg ch. III): G(v) = ωe (v+½) − ωexe (v+½)², ωexe = ωe²/(4De), exact.
    # The cubic at first order and the quartic at second: E_0 + E_2 is that G(v) to the last
    # digit, E_1 = E_3 = 0 (the series is even in λ: x → −x, λ → −λ leaves H unchanged).
    a = F(1, 10)
    de = F(1, 2) / a**2  # ωe = 1
    ser = ah.series(ah.Well.from_terms(morse_taylor(a)), 1, None, level=level, orders=4,
                    reference=MORSE_REF, exact=True)
    v = level + F(1, 2)
    assert ser.exact[0] + ser.exact[2] == v - v**2 / (4 * de)
    assert ser.exact[1] == 0 and ser.exact[3] == 0


def test_morse_taylor_numeric_engine_agrees_with_the_exact_one():
    well = ah.Well.from_terms(morse_taylor(F(1, 10)))
    ex = ah.series(well, 1, None, level=2, orders=10, reference=MORSE_REF, exact=True)
    nu = ah.series(well, 1, None, level=2, orders=10, reference=MORSE_REF, exact=False)
    assert nu.method == "banded"
    np.testing.assert_allclose(nu.coefficients, [float(e) for e in ex.exact],
                               rtol=RTOL_FLOAT, atol=RTOL_FLOAT)


def test_morse_taylor_all_at_first_order_is_not_the_spectroscopic_count():
    # the counterfactual: with the quartic at first order, E_2 holds the cubic only and
    # misses ωe²/4De (so the test above can fail)
    a = F(1, 10)
    ser = ah.series(ah.Well.from_terms(morse_taylor(a, quartic_order=1)), 1, None, level=1,
                    orders=2, reference=MORSE_REF, exact=True)
    v = F(3, 2)
    assert ser.exact[0] + ser.exact[2] != v - v**2 * 2 * a**2 / 4


@pytest.mark.parametrize("f3, f4", [(F(-1, 20), F(7, 2400)), (F(1, 7), F(-1, 30)),
                                    (F(0), F(1, 9)), (F(2, 5), F(0))])
def test_second_order_levels_of_cubic_and_quartic_force_constants(f3, f4):
    # U = x²/2 + f3 x³ + f4 x⁴ (m = ħ = ω = 1). Landau & Lifshitz §38 problem 3 (from memory):
    # E⁽²⁾_n = −(15/4) f3² (n² + n + 11/30) + (3/2) f4 (n² + n + ½), with the cubic at first
    # order and the quartic at second. Re-derived: ⟨n|x⁴|n⟩ = (6n² + 6n + 3)/4 and
    # Σ_m |⟨m|x³|n⟩|²/(n − m) = −(30n² + 30n + 11)/8 from ⟨n±3|x³|n⟩, ⟨n±1|x³|n⟩.
    well = ah.Well.from_terms([{"harmonic": {"stiffness": 1.0}},
                               {"power": {"exponent": 3, "strength": float(f3)}},
                               {"power": {"exponent": 4, "strength": float(f4), "order": 2}}])
    e2 = []
    for n in range(4):
        ser = ah.series(well, 1, None, level=n, orders=2, reference=MORSE_REF, exact=True)
        want = -F(15, 4) * f3**2 * (n * n + n + F(11, 30)) + F(3, 2) * f4 * (n * n + n + F(1, 2))
        assert ser.exact[2] == want
        e2.append(ser.exact[2])
    # G(v) = ωe(v+½) − ωexe(v+½)² + …: the second difference of E_2 is −2 ωexe, and
    # ωexe = (15/4) f3² − (3/2) f4 in these units, i.e. Dunham's Y₂₀ = −ωexe
    # = (3Bₑ/2)(a₂ − 5a₁²/4) with V = a₀ξ²(1 + a₁ξ + a₂ξ²), ξ = (r − rₑ)/rₑ (Dunham 1932, from
    # memory; a₀ = rₑ²/2, a₁ = 2 rₑ f3, a₂ = 2 rₑ² f4, Bₑ = 1/(2rₑ²) for any rₑ)
    re = F(3)
    b_e, a1, a2 = 1 / (2 * re**2), 2 * re * f3, 2 * re**2 * f4
    y20 = F(3, 2) * b_e * (a2 - F(5, 4) * a1**2)
    for n in (1, 2):
        assert e2[n + 1] - 2 * e2[n] + e2[n - 1] == 2 * y20


# --------------------------------------------------------------------------- engines vs sympy
def _small_problem():
    h0 = [F(0), F(1), F(5, 2), F(4)]
    w1 = sp.Matrix([[F(1, 5), F(1, 3), F(-1, 4), F(0)], [F(1, 3), F(-1, 2), F(1, 6), F(1, 7)],
                    [F(-1, 4), F(1, 6), F(1, 8), F(2, 9)], [F(0), F(1, 7), F(2, 9), F(-1, 3)]])
    w2 = sp.Matrix([[F(1, 4), F(-1, 5), F(0), F(1, 3)], [F(-1, 5), F(0), F(1, 2), F(0)],
                    [F(0), F(1, 2), F(-1, 6), F(1, 5)], [F(1, 3), F(0), F(1, 5), F(1, 9)]])
    w3 = sp.Matrix(4, 4, lambda i, j: sp.Rational(1, 2 + i + j) * (-1) ** (i * j))
    return h0, w1, w2, w3


def _bands(m: sp.Matrix) -> dict[int, list[F]]:
    n = m.shape[0]
    return {d: [F(str(m[i, i + d])) if 0 <= i + d < n else F(0) for i in range(n)]
            for d in range(-(n - 1), n)}


def test_exact_engine_matches_the_characteristic_root_expanded_by_sympy():
    # sympy: E(λ) is the root near E_0 of det(H(λ) − E) = 0; put E = Σ e_k λ^k into the
    # determinant and solve order by order (linear in e_k since the root is simple) — no
    # perturbation theory at all
    h0, w1, w2, w3 = _small_problem()
    lam, e = sp.symbols("lam e")
    order = 6
    h = sp.diag(*[sp.Rational(x.numerator, x.denominator) for x in h0]) + lam * w1 \
        + lam**2 * w2 + lam**3 * w3
    p = (h - e * sp.eye(4)).det()
    coeffs = [sp.Integer(0)]  # level 0: E_0 = 0
    for k in range(1, order + 1):
        ek = sp.Symbol("ek")
        guess = sum(c * lam**i for i, c in enumerate(coeffs)) + ek * lam**k
        expr = sp.expand(p.subs(e, guess))
        coeffs.append(sp.solve(sp.Poly(expr, lam).coeff_monomial(lam**k), ek)[0])
    got = rs_exact_banded(h0, _bands(w1), 0, order,
                          higher={2: _bands(w2), 3: _bands(w3)})
    assert got == [F(int(c.p), int(c.q)) for c in coeffs]


def test_third_order_is_the_sum_over_states_with_the_second_order_part():
    # textbook sums over states (e.g. Sakurai §5.1), with W₂ and W₃ added by collecting λ³:
    # E₃ = W3₀₀ + Σ' (W1₀ₘW2ₘ₀ + W2₀ₘW1ₘ₀)/Δₘ + Σ' W1₀ₘW1ₘₚW1ₚ₀/(ΔₘΔₚ) − W1₀₀ Σ' |W1₀ₘ|²/Δₘ²
    h0, w1, w2, w3 = _small_problem()
    d = {m: sp.Rational(h0[0].numerator) - sp.Rational(h0[m].numerator, h0[m].denominator)
         for m in range(1, 4)}
    e2 = w2[0, 0] + sum(w1[0, m] * w1[m, 0] / d[m] for m in d)
    e3 = (w3[0, 0] + sum((w1[0, m] * w2[m, 0] + w2[0, m] * w1[m, 0]) / d[m] for m in d)
          + sum(w1[0, m] * w1[m, q] * w1[q, 0] / (d[m] * d[q]) for m in d for q in d)
          - w1[0, 0] * sum(w1[0, m] * w1[m, 0] / d[m] ** 2 for m in d))
    got = rs_exact_banded(h0, _bands(w1), 0, 3, higher={2: _bands(w2), 3: _bands(w3)})
    assert got[1] == F(str(w1[0, 0])) and got[2] == F(str(e2)) and got[3] == F(str(e3))


def test_numeric_engine_agrees_with_the_exact_one_on_a_polynomial_in_lambda():
    h0, w1, w2, w3 = _small_problem()
    want = rs_exact_banded(h0, _bands(w1), 1, 8, higher={2: _bands(w2), 3: _bands(w3)})
    f = lambda m: np.array(m.tolist(), dtype=float)  # noqa: E731
    got = rs_numeric(np.array([float(x) for x in h0]), f(w1), 1, 8,
                     higher={2: f(w2), 3: f(w3)}).floats()
    np.testing.assert_allclose(got, [float(x) for x in want], rtol=1e-12, atol=1e-14)


def test_reach_counts_the_widest_path():
    # common practice, no source: ψ_k spreads by h_j per W_j it is made from
    assert reach({1: 4}, 5) == 20  # W₁ alone: K·h
    assert reach({1: 3, 2: 4}, 4) == 12  # x³ at order 1 beats x⁴ at order 2 (3 per order)
    assert reach({1: 1, 2: 4}, 3) == 5  # W₂ ψ₁ reaches 4 + 1
    # ψ_k of x³ (order 1) + x⁴ (order 2), computed in a basis twice as large as needed,
    # reaches exactly level + r_k: so the size level + r_K + 1 holds every ψ_k whole
    order, level, widths = 6, 1, {1: 3, 2: 4}
    n = 2 * (level + reach(widths, order) + 1)

    def dense(bands):
        m = np.zeros((n, n))
        for off, vals in bands.items():
            for i in range(max(0, -off), min(n, n - off)):
                m[i, i + off] = float(vals[i])
        return m

    res = rs_numeric(np.arange(n) + 0.5, dense(hermite_bands({3: 1}, n)), level, order,
                     vectors=True, higher={2: dense(hermite_bands({4: 1}, n))})
    for k in range(order + 1):
        assert np.flatnonzero(res.vectors[k]).max() == level + reach(widths, k)


# --------------------------------------------------------------------------- λ = 1 physical
def test_partial_sums_at_one_converge_to_the_closed_form_and_the_diagonaliser():
    # H = p²/2 + x²/2 + λ a x + λ² c x² (a at first order, c at second) is an oscillator of
    # frequency w = √(1 + 2cλ²) shifted by −a λ/w²: E_n(λ) = (n + ½) w − a²λ²/(2w²) (closed
    # form, common practice, no source). Its λ-series converges for |2cλ²| < 1.
    a, c, n = F(1, 2), F(1, 5), 1
    well = ah.Well.from_terms([{"harmonic": {"stiffness": 1.0}},
                               {"power": {"exponent": 1, "strength": float(a)}},
                               {"power": {"exponent": 2, "strength": float(c), "order": 2}}])
    ser = ah.series(well, 1, None, level=n, orders=40, reference=MORSE_REF, exact=True)
    lam = sp.Symbol("lam")
    w = sp.sqrt(1 + 2 * sp.Rational(c.numerator, c.denominator) * lam**2)
    closed = (n + sp.Rational(1, 2)) * w - sp.Rational(a.numerator, a.denominator) ** 2 \
        * lam**2 / (2 * w**2)
    taylor = sp.Poly(sp.series(closed, lam, 0, 13).removeO(), lam)
    assert ser.exact[:13] == [F(str(taylor.coeff_monomial(lam**k))) for k in range(13)]
    exact_value = float(closed.subs(lam, 1))
    spec = ah.solve(well, 1, None, size=80, levels=n + 1)
    assert spec.energies[n] == pytest.approx(exact_value, abs=1e-12)
    sums = ser.partial_sums(1.0)
    # the terms fall like (2c)^{k/2} = 0.4^{k/2}: 1e-8 after 40 orders, 1e-2 after 2
    assert abs(sums[-1] - spec.energies[n]) < 1e-7 < abs(sums[2] - spec.energies[n])


def _gaussian_well(d1: float, d2: float, v_shift: float = 0.0, *, orders: bool = True
                   ) -> ah.Well:
    """x²/2 − d1 e^{−x²/1.5²} − d2 e^{−x²/0.8²} (+ v_shift), the second gaussian at order 2;
    ``orders=False``: as formulas, which take any sign of the depths (for λ < 0)."""
    if orders:
        terms = [{"harmonic": {"frequency": 1.0}},
                 {"gaussian": {"depth": d1, "range": 1.5}},
                 {"gaussian": {"depth": d2, "range": 0.8, "order": 2}}]
    else:
        terms = [{"harmonic": {"frequency": 1.0}},
                 {"expression": {"formula": "-d*exp(-x**2/a**2)",
                                 "parameters": {"d": d1, "a": 1.5}}},
                 {"expression": {"formula": "-d*exp(-x**2/a**2)",
                                 "parameters": {"d": d2, "a": 0.8}}}]
    if v_shift:
        terms.append({"polynomial": {"coefficients": {0: v_shift}}})
    return ah.Well.from_terms(terms)


def test_dense_series_with_orders_matches_finite_differences_of_the_diagonaliser():
    # H(λ) = H_ref + λW₁ + λ²W₂ with W₁ = V_g1 − v_min and W₂ = V_g2 (H_ref = T + x²/2 +
    # v_min, v_min the bottom of the whole well): built as a well at each λ and diagonalised,
    # then differentiated at λ = 0 with a 5-point stencil; E_1 = E′(0), E_2 = E″(0)/2
    d1, d2, level = 0.2, 0.1, 1
    well = _gaussian_well(d1, d2)
    ser = ah.series(well, 1, 0, level=level, orders=6, reference={"frequency": 1.0})
    assert ser.method == "dense"
    v_min = ser.reference.v_min

    def energy(lam: float) -> float:
        w = _gaussian_well(lam * d1, lam**2 * d2, (1.0 - lam) * v_min, orders=False)
        return float(ah.solve(w, 1, 0, size=60, length=1.0, levels=level + 1).energies[level])

    h = H_FD
    e = {k: energy(k * h) for k in (-2, -1, 0, 1, 2)}
    first = (e[-2] - 8 * e[-1] + 8 * e[1] - e[2]) / (12 * h)
    second = (-e[-2] + 16 * e[-1] - 30 * e[0] + 16 * e[1] - e[2]) / (12 * h**2)
    assert e[0] == pytest.approx(ser.coefficients[0], abs=1e-12)
    assert first == pytest.approx(ser.coefficients[1], abs=ATOL_FD)
    assert second / 2 == pytest.approx(ser.coefficients[2], abs=ATOL_FD)
    # and the first-order-only series (the default) differs at second order by ⟨V_g2⟩ ≠ 0
    plain = ah.series(ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                          {"gaussian": {"depth": d1, "range": 1.5}},
                                          {"gaussian": {"depth": d2, "range": 0.8}}]),
                      1, 0, level=level, orders=2, reference={"frequency": 1.0})
    assert abs(plain.coefficients[2] - ser.coefficients[2]) > 100 * ATOL_FD


def test_dense_partial_sums_at_one_converge_to_the_physical_level():
    # a bounded W (‖W‖ < ½ the gap 2 of the parity channel) has a convergent series (Kato's
    # bound, e.g. Kato, *Perturbation Theory for Linear Operators*, II §3): λ = 1 is the well
    well = _gaussian_well(0.2, 0.1)
    ser = ah.series(well, 1, 0, level=0, orders=24, reference={"frequency": 1.0})
    spec = ah.solve(well, 1, 0, size=60, levels=1)
    sums = ser.partial_sums(1.0)
    assert abs(sums[-1] - spec.energies[0]) < ATOL_DENSE < abs(sums[1] - spec.energies[0])


# --------------------------------------------------------------------------- refusals
def test_an_absorbed_inverse_square_term_takes_no_order():
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": -2, "strength": 0.3, "order": 2}}])
    with pytest.raises(InputError, match=r"well\[1\]\.power\.order: an inverse-square"):
        ah.series(well, 3, 1, orders=4)


def test_parity_channels_need_each_order_symmetric():
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}},
                               {"power": {"exponent": 3, "strength": -0.1, "order": 2}}])
    assert well.is_symmetric(0.0)
    with pytest.raises(InputError, match="perturbation order 1 are not symmetric"):
        ah.series(well, 1, 0, orders=4)
    ser = ah.series(well, 1, None, orders=4, reference=MORSE_REF, exact=True)
    assert ser.exact[1] == 0 and math.isfinite(ser.coefficients[4])
