"""Coupling scans of wells whose terms carry perturbation orders: the series' own path.

H(λ) = H_ref + λ W₁ + Σ_{k≥2} λ^k W_k (W₁ = V₁ − V_ref, W_k = V_k the terms at order k), the
path of :func:`anharmony.series`; λ = 1 is the physical well.

Outside references: the harmonic oscillator of frequency ω(λ) = √(ω² + 2λ²g/m) (a harmonic
well plus g x² at second order; the exact oscillator, e.g. Messiah, *Quantum Mechanics*,
vol. 1, ch. XII) and its Taylor series from sympy; an independent diagonalisation
(:func:`anharmony.solve`) of the well (1 − λ) V_ref + Σ λ^k V_k written out by hand from terms
at each λ; the Rayleigh–Schrödinger coefficients of :func:`anharmony.series` (the small-λ
behaviour E(λ) − Σ_{n≤K} E_n λ^n = O(λ^{K+1}), Taylor's theorem, common practice, no source).
"""

from __future__ import annotations

import math
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import anharmony as ah
from anharmony.errors import InputError
from anharmony.scan import scan

# one Hamiltonian assembled two ways (matrices of the parts summed with powers of λ, against the
# matrices of the well built at λ): rounding of sums, a few ulp of entries of order 1-10
RTOL_SAME = 1e-10
ATOL_SAME = 1e-12
# the exact oscillator in a 40-state basis of a nearby length: converged to ~1e-13 for the
# lowest levels (measured 2e-14); 1e-11 leaves room and fails on a wrong frequency (1e-3 off)
ATOL_EXACT = 1e-11
REF = {"frequency": 0.9, "center": 0.0}  # not the well's own ω: W₁ has an even part

pytestmark = pytest.mark.filterwarnings("ignore::anharmony.errors.ConvergenceWarning")


def _ordered(g3: float = 0.1, g4: float = 0.05, d: float = 0.2) -> ah.Well:
    """½x² + g3 x³ (order 1) + g4 x⁴ (order 2) − d e^{−x²/0.8²} (a formula, order 3)."""
    return ah.Well.from_terms([
        {"harmonic": {"frequency": 1.0}},
        {"power": {"exponent": 3, "strength": g3}},
        {"power": {"exponent": 4, "strength": g4, "order": 2}},
        {"expression": {"formula": "-d*exp(-x**2/a**2)", "parameters": {"d": d, "a": 0.8},
                        "order": 3}}])


def _by_hand(lam: float, g3: float = 0.1, g4: float = 0.05, d: float = 0.2) -> ah.Well:
    """(1 − λ) V_ref + λ(½x² + g3 x³) + λ² g4 x⁴ + λ³ (−d e^{−x²/0.8²}), with
    V_ref = v_min + ½ 0.9² x² and v_min = V(0) = −d, the physical well at the given centre."""
    w_ref = REF["frequency"]
    return ah.Well.from_terms([
        {"polynomial": {"coefficients": {0: -(1 - lam) * d,
                                         2: 0.5 * ((1 - lam) * w_ref**2 + lam)}}},
        {"power": {"exponent": 3, "strength": lam * g3}},
        {"power": {"exponent": 4, "strength": lam**2 * g4}},
        {"expression": {"formula": "-d*exp(-x**2/a**2)",
                        "parameters": {"d": lam**3 * d, "a": 0.8}}}])


# --------------------------------------------------------------------------- the path
def test_every_lambda_is_a_solve_of_the_well_built_by_hand():
    lams = [0.0, 0.3, 0.7, 1.0, 1.2]
    res = scan(_ordered(), 1, None, parameter="coupling", values=lams, size=40, length=1.0,
               levels=4, reference=REF)
    assert res.method == "pencil"
    assert res.references[0].v_min == pytest.approx(-0.2, abs=1e-15)  # V(0) of the well
    for k, lam in enumerate(lams):
        spec = ah.solve(_by_hand(lam), 1, None, size=40, length=1.0, levels=4, reference=REF)
        np.testing.assert_allclose(res.energies[k], spec.energies, rtol=RTOL_SAME,
                                   atol=ATOL_SAME)
    # λ = 1 is the physical well itself
    spec = ah.solve(_ordered(), 1, None, size=40, length=1.0, levels=4, reference=REF)
    np.testing.assert_allclose(res.energies[3], spec.energies, rtol=RTOL_SAME, atol=ATOL_SAME)


def test_one_value_away_from_one_is_the_same_well():
    # one λ is solved without a pencil: the formula term is taken from its matrices at that λ
    res = scan(_ordered(), 1, None, parameter="coupling", values=[0.6], size=40, length=1.0,
               levels=3, reference=REF)
    spec = ah.solve(_by_hand(0.6), 1, None, size=40, length=1.0, levels=3, reference=REF)
    np.testing.assert_allclose(res.energies[0], spec.energies, rtol=RTOL_SAME, atol=ATOL_SAME)


def test_the_well_at_each_value_and_its_potential_follow_the_path():
    lams = [0.0, 0.5, 2.0]
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}},
                               {"power": {"exponent": 4, "strength": 0.05, "order": 2}}])
    res = scan(well, 1, None, parameter="coupling", values=lams, size=30, length=1.0,
               levels=2, reference=REF)
    x = np.linspace(-3.0, 3.0, 13)
    for k, lam in enumerate(lams):
        expected = (0.5 * ((1 - lam) * 0.81 + lam) * x**2 + lam * 0.1 * x**3
                    + lam**2 * 0.05 * x**4)
        np.testing.assert_allclose(res.potential(k, x)[0], expected, rtol=1e-13, atol=1e-14)
        np.testing.assert_allclose(res.well_at(k).value(x), expected, rtol=1e-13, atol=1e-14)
    assert res.threshold.tolist() == [np.inf] * 3  # x⁴ with λ² > 0 confines at every λ


@pytest.mark.parametrize(("terms", "l"), [
    ([{"power": {"exponent": 4, "strength": -0.01, "order": 2}}], None),
    ([{"power": {"exponent": 3, "strength": 0.05, "order": 2}}], None),
    ([{"power": {"exponent": 4, "strength": -0.01, "order": 2}}], 0),
    ([{"power": {"exponent": 2, "strength": -1.0, "order": 2}}], 0),
    ([{"gaussian": {"depth": 0.5, "range": 1.0, "order": 2}}], None),
])
def test_thresholds_are_those_of_the_well_at_each_value(terms, l):
    # the pencil's thresholds (from the leading powers, or the well at λ) against
    # Well.threshold of the well the scan says it solved (our contract: the threshold of V_λ)
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}}, *terms])
    lams = [-1.5, -0.5, 0.0, 0.3, 1.0, 2.0, 4.0]  # past λ = 3.3, (1 − λ) V_ref + λ ½x² opens
    res = scan(well, 1, l, parameter="coupling", values=lams, size=20, length=1.0, levels=2,
               reference={"frequency": 1.2, "center": 0.0})
    expected = [res.well_at(k).threshold(1, symmetric=l is not None) for k in range(len(lams))]
    assert res.threshold.tolist() == expected
    assert len(set(expected)) > 1  # the path crosses from confining to open or finite


@pytest.mark.parametrize(("dimension", "l", "mass"), [(1, None, 1.0), (1, 1, 2.0), (3, 0, 1.0),
                                                      (3, 2, 0.5)])
def test_a_quadratic_term_at_second_order_is_the_exact_oscillator(dimension, l, mass):
    # ½mω²x² + λ² g x² = ½ m ω(λ)² x², ω(λ)² = ω² + 2λ²g/m (textbook): E = ħω(λ)(osc. level)
    g = 0.3
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 2, "strength": g, "order": 2}}])
    lams = np.array([-1.0, 0.0, 0.4, 1.0, 1.7])
    res = scan(well, dimension, l, parameter="coupling", values=lams, size=40, length=1.0,
               levels=3, reference={"frequency": 1.0}, mass=mass)
    assert res.method == "pencil"
    omega = np.sqrt(1.0 + 2.0 * lams**2 * g / mass)
    n = np.arange(3)
    osc = n + 0.5 if dimension == 1 and l is None else (
        2 * n + 1.5 if dimension == 1 else 2 * n + l + 1.5)
    np.testing.assert_allclose(res.energies, omega[:, None] * osc[None, :], rtol=0,
                               atol=ATOL_EXACT)


def test_the_series_coefficients_are_the_taylor_coefficients_of_the_exact_oscillator():
    # the series' own E_n against sympy's expansion of (n + ½) √(1 + 2 g λ²): the scan and the
    # series share the closed form, so they share the path
    g = sp.Rational(3, 10)
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 2, "strength": float(g), "order": 2}}])
    ser = ah.series(well, 1, None, level=1, orders=8, reference={"frequency": 1.0,
                                                                  "center": 0.0})
    lam = sp.Symbol("lam")
    taylor = sp.Poly(sp.series(sp.Rational(3, 2) * sp.sqrt(1 + 2 * g * lam**2), lam, 0, 9)
                     .removeO(), lam)
    expected = [float(taylor.coeff_monomial(lam**k)) for k in range(9)]
    np.testing.assert_allclose(ser.coefficients, expected, rtol=1e-13, atol=1e-15)


def test_small_lambda_behaviour_is_the_series_to_every_order():
    # E(λ) − Σ_{n≤K} E_n λ^n = E_{K+1} λ^{K+1} + O(λ^{K+2}) with the series' coefficients
    # (Taylor's theorem): checked as |r_K(λ)/λ^{K+1} − E_{K+1}| ≤ 3|E_{K+2}|λ + noise, the
    # noise the levels' rounding (~1e-14) over λ^{K+1}
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}},
                               {"power": {"exponent": 4, "strength": 0.05, "order": 2}}])
    level, big = 1, 6
    ser = ah.series(well, 1, None, level=level, orders=big, reference=REF)
    c = np.asarray(ser.coefficients, dtype=float)
    lams = np.array([0.05, 0.1])
    res = scan(well, 1, None, parameter="coupling", values=lams, size=60, levels=level + 1,
               reference=REF)
    e = res.energies[:, level]
    for order in range(1, big - 1):
        partial = np.polynomial.polynomial.polyval(lams, c[:order + 1])
        q = (e - partial) / lams ** (order + 1)
        bound = 3 * abs(c[order + 2]) * lams + 1e-13 / lams ** (order + 1)
        assert np.all(np.abs(q - c[order + 1]) <= bound), (order, q, c[order + 1])
    # the first-order path H_ref + λ(H − H_ref) is another curve: off the series at λ²
    plain = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                {"power": {"exponent": 3, "strength": 0.1}},
                                {"power": {"exponent": 4, "strength": 0.05}}])
    other = scan(plain, 1, None, parameter="coupling", values=lams, size=60,
                 levels=level + 1, reference=REF).energies[:, level]
    partial = np.polynomial.polynomial.polyval(lams, c[:3])
    assert np.all(np.abs(other - partial) > 100 * np.abs(e - partial))


# --------------------------------------------------------------------------- refusals
@pytest.mark.parametrize("orders", [False, True])
def test_an_inverse_square_term_stays_in_the_reference_on_the_coupling_path(orders):
    # A radial channel absorbs g/r² into its basis (effective l), so the series puts it into
    # H_ref; the coupling scan must follow the same path. At λ = 0 the levels are those of the
    # oscillator with λ_eff(λ_eff + 1) = l(l + 1) + g/c (textbook: the 3D oscillator plus g/r²,
    # e.g. Flügge, Practical Quantum Mechanics, problem 65, quoted from memory), and at small λ
    # the scan follows the series' partial sums to O(λ^{K+1}).
    g, hw = 0.3, 1.0
    terms = [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": -2, "strength": g}},
             {"power": {"exponent": 4, "strength": 0.1, **({"order": 2} if orders else {})}}]
    well = ah.Well.from_terms(terms)
    ref = {"frequency": hw}
    lams = np.array([0.0, 0.01, 0.02, 0.04])
    res = scan(well, 3, 1, parameter="coupling", values=lams, size=40, levels=2, reference=ref)
    lam_eff = -0.5 + math.sqrt(0.25 + 2 + g / 0.5)  # c = ħ²/2m = ½ in oscillator units
    exact0 = hw * (2 * np.arange(2) + lam_eff + 1.5)  # v_min = 0 at r = 0 without g/r²
    np.testing.assert_allclose(res.energies[0], exact0, rtol=1e-12)  # rounding of a 40-state eigh
    c = ah.series(well, 3, 1, level=0, orders=6, reference=ref).coefficients
    partial = np.polynomial.polynomial.polyval(lams, c[:4])
    # remainder O(λ⁴): within 10× the next terms Σ_{k≥4} |c_k| λ^k at λ ≤ 0.04, plus rounding
    tail = sum(abs(c[k]) * lams**k for k in range(4, 7))
    assert abs(c[4]) > 0 and np.all(np.abs(res.energies[:, 0] - partial) <= 10 * tail + 1e-12)
    # and every λ is a direct solve of the same well
    for k in range(len(lams)):
        direct = ah.solve(res.well_at(k), 3, 1, size=40, levels=2, reference=ref)
        np.testing.assert_allclose(res.energies[k], direct.energies, rtol=1e-12)


def test_parity_channels_need_each_order_symmetric():
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}},
                               {"power": {"exponent": 3, "strength": -0.1, "order": 2}}])
    assert well.is_symmetric(0.0)  # the sum is, the parts are not
    with pytest.raises(InputError, match="order 1 are not symmetric"):
        scan(well, 1, 0, parameter="coupling", values=[0.5, 1.0], size=20)


# --------------------------------------------------------------------------- case files
CASE = """\
schema: 1
title: Cubic and quartic at their own orders
space: {dimension: 1}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 3, strength: 0.1}
  - power: {exponent: 4, strength: 0.05, order: 2}
reference: {frequency: 0.9, center: 0.0}
basis: {size: 40, length: 1.0}
levels: {count: 3}
scan: {parameter: coupling, values: [0.0, 0.5, 1.0]}
perturbation: {orders: 6}
output: orders.nc
"""


def test_a_case_scans_the_coupling_of_a_well_with_orders_and_stores_them(tmp_path):
    from anharmony.runner import run_case
    from anharmony.store import read_dataset, write_dataset

    p = tmp_path / "orders.yaml"
    p.write_text(CASE)
    ds = run_case(p)
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 3, "strength": 0.1}},
                               {"power": {"exponent": 4, "strength": 0.05, "order": 2}}])
    res = scan(well, 1, None, parameter="coupling", values=[0.0, 0.5, 1.0], size=40,
               length=1.0, levels=3, reference=REF)
    np.testing.assert_allclose(ds.energy.values[:, 0], res.energies, rtol=RTOL_SAME,
                               atol=ATOL_SAME)
    ser = ah.series(well, 1, None, level=2, orders=6, reference=REF)
    ser_0 = ah.series(well, 1, None, level=0, orders=6, reference=REF)
    np.testing.assert_allclose(ds.series_coefficient.values[0, 0, 2], ser.coefficients,
                               rtol=1e-12, atol=1e-15)
    # the well figure of a point draws the path's well (1 − λ) V_ref + Σ λ^k V_k
    from anharmony import plots

    fig = plots.make_figure(ds, "well", scan_index=1)
    (line,) = [ln for ax in fig.axes for ln in ax.lines if ln.get_gid() == "potential"]
    x, v = line.get_xydata().T
    lam = 0.5
    ok = np.isfinite(v)
    np.testing.assert_allclose(v[ok], (0.5 * ((1 - lam) * 0.81 + lam) * x**2 + lam * 0.1 * x**3
                                       + lam**2 * 0.05 * x**4)[ok], rtol=1e-12, atol=1e-12)
    # the stored series says which orders its terms had (read back from the file)
    out = write_dataset(ds, tmp_path / "orders.nc")
    back = read_dataset(out)
    assert back.series_term_order.values.tolist() == list(ser.term_orders) == [1, 1, 2]
    assert back.series_term_kind.values.tolist() == ["harmonic", "power", "power"]
    assert back.series_term_order.attrs["units"] == "1"
    plain = read_dataset(out, plain=True)
    assert plain.series_term_order.values.tolist() == [1, 1, 2]
    # show says so in one line (a subprocess, as the command is used)
    shown = subprocess.run([sys.executable, "-m", "anharmony", "show", str(out)],
                           capture_output=True, text=True, timeout=60,
                           env={"PYTHONPATH": str(Path(ah.__file__).parents[1]),
                                "PATH": "/usr/bin:/bin"})
    assert shown.returncode == 0, shown.stderr
    assert ("series: terms at orders well[0] harmonic 1, well[1] power 1, well[2] power 2"
            in shown.stdout)
    # the verdict of a coupling point compares its level with Σ_{i≤k} E_i λ^i at its own λ
    # (the stored partial sums are at λ = 1): the distance it names is the smallest one
    row = shown.stdout.split("coupling = 0.5:")[1].splitlines()[2]
    assert row.split()[0] == "v=0"
    said = float(re.search(r"off by (\S+)", row)[1])
    sums = np.cumsum(ser_0.coefficients * 0.5 ** np.arange(7))
    assert said == pytest.approx(np.min(np.abs(sums - ds.energy.values[1, 0, 0])), rel=0.05)


def test_check_says_the_scan_is_polynomial_in_lambda(tmp_path):
    from anharmony.cases import load_case
    from anharmony.runner import describe

    p = tmp_path / "orders.yaml"
    p.write_text(CASE)
    text = "\n".join(describe(load_case(p)).lines)
    assert "polynomial in lambda by the term orders: matrices built once" in text
    p.write_text(CASE.replace(", order: 2", ""))
    assert "linear: matrices built once" in "\n".join(describe(load_case(p)).lines)


def test_a_case_without_orders_stores_first_order_and_show_is_silent(tmp_path):
    from anharmony.runner import run_case

    p = tmp_path / "plain.yaml"
    p.write_text(CASE.replace(", order: 2", ""))
    ds = run_case(p)
    assert ds.series_term_order.values.tolist() == [1, 1, 1]
    assert "sum_k" not in ds.scan_value.attrs["long_name"]


def test_a_coupling_scan_without_a_series_stores_the_orders_of_its_path(tmp_path):
    from anharmony.runner import run_case

    p = tmp_path / "path.yaml"
    p.write_text(CASE.replace("perturbation: {orders: 6}\n", ""))
    ds = run_case(p)
    assert "series_coefficient" not in ds or ds.sizes.get("order", 0) == 0
    assert ds.series_term_order.values.tolist() == [1, 1, 2]
    assert "sum_k lambda**k W_k" in ds.scan_value.attrs["long_name"]


def test_a_case_with_orders_and_an_inverse_square_term_runs_on_the_series_path(tmp_path):
    # the case runs through the core scan (the same numbers), g/r² kept in H_ref at every λ
    from anharmony.runner import run_case

    text = ("schema: 1\nspace: {dimension: 3, l: [1]}\nwell:\n  - harmonic: {frequency: 1.0}\n"
            "  - power: {exponent: -2, strength: 0.3}\n"
            "  - power: {exponent: 4, strength: 0.1, order: 2}\n"
            "reference: {frequency: 1.0}\nbasis: {size: 30}\n"
            "levels: {count: 2}\nscan: {parameter: coupling, values: [0.0, 0.5, 1.0]}\n"
            "output: inv.nc\n")
    p = tmp_path / "coupled.yaml"
    p.write_text(text)
    ds = run_case(p)
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": -2, "strength": 0.3}},
                               {"power": {"exponent": 4, "strength": 0.1, "order": 2}}])
    res = scan(well, 3, 1, parameter="coupling", values=[0.0, 0.5, 1.0], size=30, levels=2,
               reference={"frequency": 1.0})
    np.testing.assert_allclose(ds.energy.values[:, 0], res.energies, rtol=RTOL_SAME,
                               atol=ATOL_SAME)
