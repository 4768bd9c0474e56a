"""The ``series`` front end against published values, closed forms and the diagonaliser."""

import math
from fractions import Fraction

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import ConvergenceWarning
from anharmony.series import Series, lowest_order, pade_approximant, series, verdict

# Bender & Wu, Phys. Rev. 184, 1231 (1969): ground state of p²/2 + x²/2 + λx⁴.
BENDER_WU = [Fraction(1, 2), Fraction(3, 4), Fraction(-21, 8), Fraction(333, 16),
             Fraction(-30885, 128)]

RTOL_NUMERIC_VS_EXACT = 1e-13  # float recursion vs rationals: a few ulp per order
# Finite differences: a degree-4 fit through g = −2h…2h (h = 1e-3) leaves 4h⁴·E_6 ≈ 3e-7 in
# E_2 (E_1: h⁴·E_5 ≈ 4e-9) and eigenvalue rounding ~1e-15/h² ≈ 1e-9.
RTOL_FD_E1 = 1e-6
RTOL_FD_E2 = 1e-5
# Borel–Padé [15/15] of the quartic at λ = 1: measured error 8e-8 against the diagonaliser
# (N = 120, converged to 1e-14); 1e-6 leaves a margin, while the best plain partial sum is
# off by more than 1e-2 there.
ATOL_BOREL_PADE = 1e-6
ATOL_BOREL_PADE_DOUBLET = 1e-6  # the family from 11 orders: measured error 7e-7
RTOL_ROUNDING = 1e-12  # products of a few doubles
RTOL_DENSE = 1e-9  # non-polynomial W: coefficients settle to 1e-10 (relative) in N


def quartic_well(g: float = 1.0) -> ah.Well:
    return ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": g}}])


UNIT_REFERENCE = {"frequency": 1.0}  # H_ref = p²/2 + x²/2: the Bender–Wu splitting


def ground_energy(well: ah.Well, size: int = 120) -> float:
    spec = ah.solve(well, dimension=1, l=0, size=size, length=1.0, levels=1,
                    reference=UNIT_REFERENCE)
    return float(spec.energies[0])


def test_series_returns_a_frozen_series_with_bender_wu_coefficients():
    ser = series(quartic_well(), dimension=1, l=None, orders=4, reference=UNIT_REFERENCE)
    assert isinstance(ser, Series) and ser.method == "exact"
    assert ser.exact == BENDER_WU
    np.testing.assert_allclose(ser.coefficients, [float(c) for c in BENDER_WU],
                               rtol=RTOL_ROUNDING)
    with pytest.raises(AttributeError):
        ser.level = 3  # frozen dataclass


@pytest.mark.parametrize(("l", "band"), [(None, 4), (0, 2)])
def test_numeric_engine_uses_exactly_the_sufficient_basis_and_agrees(l, band):
    # N = n + K·h + 1 makes order K exact for a polynomial W of half-bandwidth h (x⁴: h = 4
    # without symmetry, 2 in a parity channel).
    kw = {"dimension": 1, "l": l, "orders": 40, "reference": UNIT_REFERENCE}
    exact = series(quartic_well(), **kw)
    numeric = series(quartic_well(), exact=False, **kw)
    assert numeric.method == "banded" and numeric.basis_size == 40 * band + 1
    np.testing.assert_allclose(numeric.coefficients, exact.coefficients,
                               rtol=RTOL_NUMERIC_VS_EXACT)


def test_exact_series_is_in_units_of_the_reference_oscillator():
    # ħω = 2, b = 1/√2 (ħ = m = 1): W = 0.1 x⁴ = (0.1 b⁴/ħω) ξ⁴ ħω = ξ⁴/80 ħω, so
    # exact[k] = BW_k / 80^k and coefficients[k] = ħω · exact[k] (scaling of the Bender–Wu
    # series, Phys. Rev. 184, 1231 (1969)).
    well = ah.Well.from_terms([{"harmonic": {"frequency": 2.0}},
                               {"power": {"exponent": 4, "strength": 0.1}}])
    ser = series(well, dimension=1, l=0, orders=4, reference={"frequency": 2.0})
    assert ser.exact == [BENDER_WU[0]] + [c / 80**k for k, c in enumerate(BENDER_WU) if k]
    np.testing.assert_allclose(ser.coefficients, [2 * float(c) for c in ser.exact],
                               rtol=RTOL_ROUNDING)


def test_finite_differences_of_the_diagonaliser_reproduce_e1_e2():
    # E(g) of p²/2 + x²/2 + g x⁴ near g = 0: dE/dg = E_1, ½ d²E/dg² = E_2 (definition). The
    # symmetric stencil needs g < 0, where the well is unbounded below; a 40-state basis
    # (reaching |x| ≈ 9, inside the barrier at |x| ≈ 11) sees only the metastable well, and
    # its eigenvalue has the same Taylor coefficients up to order 19 (N = n + K·h + 1).
    h = 1e-3
    gs = h * np.arange(-2, 3)
    energies = [ground_energy(quartic_well(g), size=40) for g in gs]
    fit = np.polynomial.polynomial.polyfit(gs, energies, 4)
    ser = series(quartic_well(), dimension=1, l=0, orders=2, reference=UNIT_REFERENCE)
    assert fit[1] == pytest.approx(ser.coefficients[1], rel=RTOL_FD_E1)
    assert fit[2] == pytest.approx(ser.coefficients[2], rel=RTOL_FD_E2)


def test_borel_pade_sums_the_divergent_quartic_series_at_unit_coupling():
    # The series diverges for every λ > 0 (Bender & Wu 1969: E_k ~ 3^k Γ(k + ½)); its Borel
    # sum is the energy (Graffi, Grecchi & Simon, Phys. Lett. B 32, 631 (1970)).
    ser = series(quartic_well(), dimension=1, l=0, orders=30, reference=UNIT_REFERENCE)
    exact = ground_energy(quartic_well(1.0))
    assert ser.large_order().kind == "factorial"
    best_partial = np.min(np.abs(ser.partial_sums(1.0) - exact))
    assert best_partial > 1e-2
    res = ser.borel_pade(1.0)
    assert not bool(res.on_path)
    assert float(res.value) == pytest.approx(exact, abs=ATOL_BOREL_PADE)


def test_gaussian_well_dense_series_first_order_and_finite_differences():
    # V = −V₀ e^{−x²/a²}: ħω = √(2V₀)/a (V″(0) = 2V₀/a², ħ = m = 1), and with
    # ξ = x/b, ⟨0|e^{−x²/a²}|0⟩ = (1 + b²/a²)^{−1/2}, ⟨0|ξ²|0⟩ = ½ (Gaussian integrals):
    # E_1 = V₀ − V₀ (1 + b²/a²)^{−1/2} − ħω/4. E_2 from the diagonaliser by finite differences
    # along H(λ) = (1 − λ) V_ref + λ V (DESIGN §2).
    v0, a = 10.0, 2.0
    hw = math.sqrt(2 * v0) / a
    b = 1 / math.sqrt(hw)
    well = ah.Well.from_terms([{"gaussian": {"depth": v0, "range": a}}])
    ser = series(well, dimension=1, l=0, orders=4)
    assert ser.method == "dense" and ser.precision <= 1e-10  # the engine's default target
    assert ser.reference.frequency == pytest.approx(hw, rel=RTOL_ROUNDING)
    assert ser.coefficients[0] == pytest.approx(-v0 + hw / 2, rel=RTOL_ROUNDING)
    e1 = v0 - v0 / math.sqrt(1 + b**2 / a**2) - hw / 4
    assert ser.coefficients[1] == pytest.approx(e1, rel=RTOL_DENSE)

    def energy(lam: float) -> float:
        family = ah.Well.from_terms([
            {"harmonic": {"stiffness": (1 - lam) * hw**2}},
            {"gaussian": {"depth": lam * v0, "range": a}},
            {"polynomial": {"coefficients": {0: -(1 - lam) * v0}}},
        ])
        spec = ah.solve(family, dimension=1, l=0, size=60, length=b, levels=1,
                        reference={"length": b})
        return float(spec.energies[0])

    # one-sided (the Gaussian depth must stay positive); E(0) = −V₀ + ħω/2 exactly. A degree-4
    # fit through 0…4h leaves 50h³·E_5 ≈ 2e-9 in E_2 (|E_5| ≈ 4e-5) and ~10·1e-14/h² ≈ 1e-9 of
    # eigenvalue rounding: ~1e-6 of |E_2| ≈ 3e-3, inside RTOL_FD_E2.
    h = 1e-2
    lams = h * np.arange(0, 5)
    values = [-v0 + hw / 2] + [energy(x) for x in lams[1:]]
    fit = np.polynomial.polynomial.polyfit(lams, values, 4)
    assert fit[1] == pytest.approx(ser.coefficients[1], rel=RTOL_FD_E1)
    assert fit[2] == pytest.approx(ser.coefficients[2], rel=RTOL_FD_E2)


def test_dense_series_warns_when_the_basis_cap_is_too_small():
    well = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "range": 2.0}}])
    with pytest.warns(ConvergenceWarning, match="max_size"):
        ser = series(well, dimension=1, l=0, orders=12, max_size=10)
    assert ser.precision > 1e-10  # the target it warns about missing


def test_nuclear_units_first_order_is_the_oscillator_moment():
    # 1s of a 3D oscillator: ⟨r⁴⟩ = 15 b⁴/4 (Gaussian moments; sympy check of the same number
    # in test_series_exact), b² = ħ²/(m ħω) in fm for a nucleon.
    hw, g = 10.0, 0.01
    well = ah.Well.from_terms([{"harmonic": {"frequency": hw}},
                               {"power": {"exponent": 4, "strength": g}}], units="nuclear")
    ser = series(well, dimension=3, l=0, orders=3, units="nuclear", reference={"frequency": hw})
    b = ah.get_units("nuclear").length_from_frequency(hw)
    assert ser.coefficients[0] == pytest.approx(1.5 * hw, rel=RTOL_ROUNDING)
    assert ser.coefficients[1] == pytest.approx(15 / 4 * g * b**4, rel=RTOL_ROUNDING)


def test_verdict_against_a_closed_form():
    # W = x²/2 (a stiffer oscillator): E(λ) = ½√(1 + λ) exactly, radius of convergence 1.
    # Expected verdicts are worked out here from the closed form and the binomial series.
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 2, "strength": 0.5}}])
    ser = series(well, dimension=1, l=None, orders=12, reference=UNIT_REFERENCE)
    grid = np.linspace(0.0, 1.4, 15)
    exact = 0.5 * np.sqrt(1 + grid)
    binom, coeffs = 1.0, []
    for k in range(13):
        coeffs.append(0.5 * binom)
        binom *= (0.5 - k) / (k + 1)
    sums = np.cumsum(np.array(coeffs)[:, None] * grid[None, :] ** np.arange(13)[:, None], axis=0)
    ok = np.abs(sums - exact) <= 1e-4  # the verdict's own tolerance, a setting under test
    res = verdict(ser, grid, exact, atol=1e-4)
    for k in range(13):
        bad = np.flatnonzero(~ok[k])
        want = grid[-1] if not bad.size else (grid[bad[0] - 1] if bad[0] > 0 else math.nan)
        assert res.max_coupling[k] == pytest.approx(want, rel=1e-15, nan_ok=True)  # grid value
    assert res.lowest_order(0.3) == int(np.flatnonzero(ok[:, 3])[0])
    assert res.lowest_order(1.4) is None  # beyond the radius no order is within 1e-4
    assert lowest_order(ser, 0.3, 0.5 * math.sqrt(1.3), atol=1e-4) == res.lowest_order(0.3)
    # the resummed columns: the series is Stieltjes-like, Padé is close even past the radius
    assert res.pade is not None and abs(res.pade[-1] - exact[-1]) < 1e-4  # the same tolerance


def test_verdict_quartic_small_coupling_against_diagonaliser():
    # Lowest order within 1e-5 at λ = 0.01, with the partial sums built here from the
    # published Bender–Wu coefficients (Phys. Rev. 184, 1231 (1969)).
    lam = 0.01
    e = ground_energy(quartic_well(lam))
    ser = series(quartic_well(), dimension=1, l=0, orders=4, reference=UNIT_REFERENCE)
    sums = np.cumsum([float(c) * lam**k for k, c in enumerate(BENDER_WU)])
    want = int(np.flatnonzero(np.abs(sums - e) <= 1e-5)[0])  # the tolerance under test
    assert lowest_order(ser, lam, e, atol=1e-5) == want


def test_verdict_needs_a_tolerance():
    with pytest.raises(ValueError, match="tolerance"):
        verdict([1.0, 0.5], [0.1], [1.05])


def test_auto_without_rational_coefficients_falls_back_to_numeric():
    # Pure quartic: the variational b makes W's coefficients irrational multiples of ħω.
    well = ah.Well.from_terms([{"power": {"exponent": 4, "strength": 1.0}}])
    ser = series(well, dimension=1, l=0, orders=6)
    assert ser.exact is None and ser.method == "banded"
    assert ser.reference.method == "variational"


@pytest.mark.parametrize(("kwargs", "message"), [
    ({"level": -1}, "level"),
    ({"orders": 0}, "orders"),
    ({"exact": "yes"}, "exact"),
    ({"dimension": 4}, "dimension"),
    ({"max_size": 1}, "max_size"),
])
def test_bad_arguments_name_the_parameter(kwargs, message):
    with pytest.raises(ValueError, match=message):
        series(quartic_well(), **kwargs)


def test_exact_true_without_a_polynomial_well_is_an_error():
    well = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "range": 2.0}}])
    with pytest.raises(ValueError, match="exact: no rational series"):
        series(well, dimension=1, l=0, orders=4, exact=True)


def test_parity_channel_of_an_asymmetric_well_is_rejected():
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}}])
    with pytest.raises(ValueError, match="parity"):
        series(well, dimension=1, l=0, orders=4)


def test_well_must_be_a_well():
    with pytest.raises(TypeError, match="well"):
        series([{"harmonic": {"frequency": 1.0}}], orders=4)


def test_borel_pade_leaves_out_an_approximant_with_a_pole_zero_pair_on_the_path():
    # 2D, |m| = 1, W = 0.05 r⁴: the [5/5] Borel-plane approximant of 11 exact coefficients has
    # a pole–zero pair at s ≈ 1.11 on the positive axis (a Froissart doublet: Baker &
    # Graves-Morris, Padé Approximants, §2.2). It is left out of the family rather than
    # cancelled (cancelling changes B by r/(s − p), here more than 1e-10 of E_0), and the
    # sum of the others holds the diagonaliser's value within its uncertainty.
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 0.05}}])
    ser = series(well, dimension=2, l=1, orders=10)
    borel = [c / math.factorial(k) for k, c in enumerate(ser.precise)]
    top = pade_approximant(borel, 5, 5, method="mpmath")
    assert top.doublets.size == 1 and abs(top.doublets[0] - 1.11) < 0.01
    res = ser.borel_pade(1.0)
    exact = float(ah.solve(well, dimension=2, l=1, size=60, levels=1).energies[0])
    assert (5, 5) in res.rejected[0] and (5, 5) not in res.members[0]
    assert not bool(res.on_path) and bool(res.trusted)
    assert abs(float(res.value) - exact) <= float(res.uncertainty)
    assert float(res.value) == pytest.approx(exact, abs=ATOL_BOREL_PADE_DOUBLET)


def test_series_signature_matches_solve():
    # Project-wide pattern (the brief of the API issue): (well, dimension=3, l=0, j=None, *,
    # ...) with solve's names and defaults where both have the parameter.
    import inspect

    sig = inspect.signature(series)
    solve_sig = inspect.signature(ah.solve)
    names = list(sig.parameters)
    assert names[:4] == ["well", "dimension", "l", "j"]
    assert all(sig.parameters[n].kind is inspect.Parameter.KEYWORD_ONLY for n in names[4:])
    for name in set(names) & set(solve_sig.parameters):
        assert sig.parameters[name].default == solve_sig.parameters[name].default, name


def test_series_defaults_to_three_dimensions():
    # 1s of the 3D oscillator with W = 0.01 r⁴: E_0 = 3/2, E_1 = 0.01·⟨r⁴⟩ = 0.01·15/4
    # (Gaussian moments, as in test_nuclear_units_first_order_is_the_oscillator_moment).
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 0.01}}])
    ser = series(well, orders=2, reference=UNIT_REFERENCE)
    assert ser.channel.dimension == 3
    assert ser.coefficients[:2] == pytest.approx([1.5, 0.01 * 15 / 4], rel=RTOL_ROUNDING)
    with pytest.raises(TypeError):
        series(well, 3, 0, None, 0)  # level is keyword-only now


def test_series_pade_and_borel_pade_return_values_with_uncertainties():
    ser = series(quartic_well(0.1), dimension=1, l=0, orders=30, reference=UNIT_REFERENCE)
    exact = ground_energy(quartic_well(0.1))
    for res in (ser.pade(1.0), ser.borel_pade(1.0)):
        assert bool(res.trusted)
        assert abs(float(res.value) - exact) <= float(res.uncertainty)
        assert float(res.error) == float(res.uncertainty)  # the older name
    with pytest.raises(ValueError, match="M must be an integer"):
        ser.pade(5, 5, 1.0)  # the old (L, M, λ) order fails loudly, not silently
