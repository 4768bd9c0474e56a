"""Figures (issue 6): every kind draws the dataset's own numbers and writes the requested image.

The plotted numbers are read back from the artists (``ax.lines[i].get_xydata()``, found by
their ``gid``) and compared with the dataset, so a figure cannot show the wrong variable. The
synthetic dataset is a stiffened spherical oscillator whose levels, series and wavefunctions
are known in closed form; the demo cases are run with :func:`anharmony.runner.run_case`.
"""

from __future__ import annotations

import math
import os
import re
import struct
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import yaml
from scipy import constants as sc
from scipy.special import binom, eval_genlaguerre, gammaln

os.environ.setdefault("MPLBACKEND", "Agg")

import matplotlib  # noqa: F401  # hard dependency: a broken install fails, not skips
import xarray as xr

from anharmony import plots
from anharmony.plots import _style
from anharmony.plots._common import level_label, pretty_units

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"

RTOL_COPY = 1e-12  # plotted numbers are the dataset's, copied (abs/difference at most)
RTOL_REBUILD = 1e-8  # the well is rediagonalised in the run's basis: eigh-level agreement
ATOL_DENSITY = 1e-12  # of the peak: a 30-state basis holds the exact oscillator states (~1e-15)
RTOL_NORM = 1e-4  # the view cuts the tails (measured 2e-6) and the trapezoid rule adds ~1e-10
RTOL_FACTORIAL_FIT = 1e-2  # ratio method with 1/k corrections on 16 exact-model orders
MIN_LSTAR_STEP = 20.0  # neighbours in the palette differ by this much CIE L* (greyscale print)

WIDTH, HEIGHT, DPI = 4.0, 3.0, 50  # small, fast images: 200 x 150 pixels


# =========================================================================== fixtures
@pytest.fixture(autouse=True)
def _close_figures():
    yield
    import matplotlib.pyplot as plt

    plt.close("all")


SYNTHETIC_CASE = """\
schema: 1
title: Stiffened spherical oscillator (synthetic test data)
units: oscillator
space: {dimension: 3, l: [0, 1, 2], spin: 1/2}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 2, strength: 0.0}
reference: {frequency: 1.0}
basis: {size: 30}
levels: {count: 3}
scan:
  parameter: well[1].strength
  values: [0.0, 0.1, 0.2, 0.4]
perturbation: {orders: 8, resum: [pade, borel_pade]}
convergence: {sizes: [4, 8, 12, 16], lengths: [0.8, 1.0, 1.2], tolerance: 1.0e-8}
"""
SCAN = np.array([0.0, 0.1, 0.2, 0.4])
CHANNELS = [(0, 0.5, "s1/2"), (1, 0.5, "p1/2"), (1, 1.5, "p3/2"), (2, 1.5, "d3/2"),
            (2, 2.5, "d5/2")]
LEVELS, ORDERS = 3, 9
SIZES, LENGTHS = np.array([4, 8, 12, 16]), np.array([0.8, 1.0, 1.2])


def _attrs(units, long_name):
    return {"units": units, "long_name": long_name}


def synthetic_result(*, with_length_scan: bool = True) -> xr.Dataset:
    """V = ½ r² + s r² = ½ (1 + 2s) r² in oscillator units, scanned in s.

    Exact: E_nl = (2n + l + 3/2) √(1 + 2s) (the oscillator of frequency √(1 + 2s)); the RS
    series of W = s r² about the unit oscillator is E_0 √(1 + 2sλ), so E_k = E_0 C(½, k) (2s)^k
    (binomial series). Textbook results, e.g. Messiah, Quantum Mechanics, vol. 1, ch. XII.
    """
    s, c, n, k = len(SCAN), len(CHANNELS), LEVELS, ORDERS
    ls = np.array([ch[0] for ch in CHANNELS])
    e0 = 2 * np.arange(n)[None, :] + ls[:, None] + 1.5  # (channel, level)
    w = np.sqrt(1 + 2 * SCAN)
    energy = e0[None] * w[:, None, None]
    ref = np.broadcast_to(e0[None], (s, c, n)).copy()
    kk = np.arange(k)
    coef = e0[None, :, :, None] * binom(0.5, kk)[None, None, None, :] * \
        (2 * SCAN)[:, None, None, None] ** kk[None, None, None, :]
    psum = np.cumsum(coef, axis=-1)
    resum = np.stack([energy, energy + 1e-3], axis=-1)
    terms = np.abs(coef[..., 1:])
    terms = np.where(terms > 0, terms, np.inf)
    opt_order = (np.argmin(terms, axis=-1) + 1).astype(np.int16)
    opt_order = np.where(np.isinf(terms).all(axis=-1), -1, opt_order).astype(np.int16)
    opt_value = np.take_along_axis(np.concatenate([np.zeros((s, c, n, 1)), psum], axis=-1),
                                   np.maximum(opt_order, 0)[..., None].astype(int),
                                   axis=-1)[..., 0]
    b = LENGTHS[None, None, None, None, :]
    size = SIZES[None, None, None, :, None]
    conv = energy[..., None, None] + 0.3 * np.exp(-0.5 * size) * (1 + 4 * (b - 1) ** 2)
    lev = ("scan", "channel", "level")
    data = {
        "energy": (lev, energy, _attrs("1", "eigenvalue of the full well")),
        "bound": (lev, np.ones((s, c, n), dtype=np.int8), _attrs("1", "bound flag")),
        "converged": (lev, np.ones((s, c, n), dtype=np.int8), _attrs("1", "converged flag")),
        "reference_energy": (lev, ref, _attrs("1", "level of the reference oscillator")),
        "shift": (lev, energy - ref, _attrs("1", "energy - reference_energy")),
        "error_estimate": (lev, np.full((s, c, n), 1e-10), _attrs("1", "error estimate")),
        "series_coefficient": ((*lev, "order"), coef, _attrs("1", "RS coefficient E_k")),
        "series_partial_sum": ((*lev, "order"), psum, _attrs("1", "partial sums at 1")),
        "series_resummed": ((*lev, "method"), resum, _attrs("1", "resummed at 1")),
        "series_optimal": (lev, opt_value, _attrs("1", "optimal truncation")),
        "series_optimal_order": (lev, opt_order, _attrs("1", "order of the smallest term")),
        "frequency": ("scan", np.ones(s), _attrs("1", "hbar*omega of the basis")),
        "length": ("scan", np.ones(s), _attrs("1", "b of the basis")),
        "reference_frequency": ("scan", np.ones(s), _attrs("1", "hbar*omega of the reference")),
        "reference_center": ("scan", np.zeros(s), _attrs("1", "centre of the reference")),
        "reference_v_min": ("scan", np.zeros(s), _attrs("1", "well at the centre")),
        "threshold": (("scan", "channel"), np.full((s, c), np.inf), _attrs("1", "threshold")),
        "convergence_extrapolated": (lev, energy, _attrs("1", "extrapolated energy")),
        "convergence_extrapolated_error": (lev, np.full((s, c, n), 1e-6),
                                           _attrs("1", "its uncertainty")),
    }
    if with_length_scan:
        data["convergence_energy"] = ((*lev, "basis_size", "basis_length"), conv,
                                      _attrs("1", "eigenvalue at each basis size and length"))
    else:
        data["convergence_energy"] = ((*lev, "basis_size"), conv[..., 1],
                                      _attrs("1", "eigenvalue at each basis size"))
    coords = {
        "scan_value": ("scan", SCAN, {"units": "1", "long_name": "strength of well[1]",
                                      "parameter": "well[1].strength"}),
        "l": ("channel", ls, _attrs("1", "l")),
        "j": ("channel", np.array([ch[1] for ch in CHANNELS]), _attrs("1", "j")),
        "label": ("channel", np.array([ch[2] for ch in CHANNELS]), _attrs("1", "label")),
        "level": ("level", np.arange(n), _attrs("1", "level index")),
        "order": ("order", kk, _attrs("1", "order")),
        "method": ("method", np.array(["pade", "borel_pade"]), _attrs("1", "method")),
        "basis_size": ("basis_size", SIZES, _attrs("1", "basis size")),
    }
    if with_length_scan:
        coords["basis_length"] = ("basis_length", LENGTHS, _attrs("1", "basis length"))
    attrs = {"Conventions": "CF-1.11", "title": "Stiffened spherical oscillator",
             "unit_system": "oscillator", "energy_units": "1", "length_units": "1",
             "dimension": 3, "basis_size": 30, "tolerance": 1e-8,
             "scan_parameter": "well[1].strength", "case": SYNTHETIC_CASE}
    return xr.Dataset(data, coords=coords, attrs=attrs)


@pytest.fixture(scope="module")
def synthetic():
    return synthetic_result()


def _run(name: str, **changes):
    from anharmony.cases import case_from_dict
    from anharmony.runner import run_case

    data = yaml.safe_load((CASES / name).read_text(encoding="utf-8"))
    for key, value in changes.items():
        data.setdefault(key, {}).update(value)
    return run_case(case_from_dict(data, name=name, folder=CASES))


def _need_demo(name: str) -> None:
    # the demo cases ship with the repository: a missing one is a failure, not a skip
    assert (CASES / name).is_file(), f"demo case {name} missing from {CASES}"


@pytest.fixture(scope="module")
def quartic():
    """The quartic demo case, with a basis-size scan added for the convergence figure."""
    _need_demo("quartic-3d.yaml")
    return _run("quartic-3d.yaml", convergence={"sizes": [10, 20, 30]})


@pytest.fixture(scope="module")
def morse():
    """The Morse demo case: a coupling scan in 1D without symmetry."""
    _need_demo("diatomic-morse.yaml")
    return _run("diatomic-morse.yaml")


@pytest.fixture(scope="module")
def trap():
    """The Gaussian-trap demo case: 1D parity channels."""
    _need_demo("trap-rb87.yaml")
    return _run("trap-rb87.yaml")


# =========================================================================== helpers
def lines_by_gid(fig) -> dict[str, np.ndarray]:
    out = {}
    for ax in fig.axes:
        for ln in ax.lines:
            gid = ln.get_gid()
            if gid:
                out.setdefault(gid, ln.get_xydata())
    return out


def texts(fig) -> list[str]:
    return [t.get_text() for ax in fig.axes for t in ax.texts]


def assert_same(actual, expected, rtol=RTOL_COPY):
    np.testing.assert_allclose(np.asarray(actual, float), np.asarray(expected, float),
                               rtol=rtol, atol=0, equal_nan=True)


def image_size(path: Path) -> tuple[float, float]:
    """(width, height): pixels for PNG, points for PDF and SVG (read from the file itself)."""
    data = path.read_bytes()
    if path.suffix == ".png":
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
        return struct.unpack(">II", data[16:24])  # IHDR width, height (PNG spec, W3C 2003)
    if path.suffix == ".pdf":
        assert data[:5] == b"%PDF-"
        m = re.search(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
        return float(m[1]), float(m[2])
    text = data.decode("utf-8")
    assert "<svg" in text
    m = re.search(r'<svg[^>]*width="([\d.]+)pt"[^>]*height="([\d.]+)pt"', text)
    return float(m[1]), float(m[2])


# =========================================================================== images
@pytest.mark.parametrize("fmt", ["png", "pdf", "svg"])
@pytest.mark.parametrize("kind", [k for k in plots.KINDS if k != "residuals"])  # a fit's:
def test_each_kind_writes_an_image_of_the_requested_size_and_format(quartic, kind, fmt,
                                                                    tmp_path):
    fig = plots.make_figure(quartic, kind)
    out = plots.save_figure(fig, tmp_path / f"{kind}.{fmt}", dpi=DPI, size=(WIDTH, HEIGHT))
    assert out.stat().st_size > 1000
    expected = (WIDTH * DPI, HEIGHT * DPI) if fmt == "png" else (WIDTH * 72, HEIGHT * 72)
    assert image_size(out) == pytest.approx(expected, abs=1)  # 72 points per inch (PDF spec)
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temporaries


def test_figure_is_titled_with_the_case_and_labelled_with_units(synthetic):
    fig = plots.make_figure(synthetic, "flow")
    assert fig.get_suptitle() == "Stiffened spherical oscillator"
    ax = fig.axes[0]
    assert ax.get_ylabel() == "energy E (ħω)"
    assert ax.get_xlabel() == "well[1].strength"


def test_axis_units_come_from_the_units_attributes(trap):
    fig = plots.make_figure(trap, "flow")
    ax = fig.axes[0]
    assert ax.get_ylabel() == "energy E (h·kHz)"  # trap energies are E/h in kHz
    # the scanned parameter in the trade's words, its unit from the same table
    assert ax.get_xlabel() == "Gaussian depth V₀ (h·kHz)"
    assert trap.scan_value.units == "kHz"  # CF/UDUNITS spelling in the file


def test_make_figure_uses_no_pyplot_state(synthetic):
    import matplotlib.pyplot as plt

    before = plt.get_fignums()
    plots.make_figure(synthetic, "scheme")
    assert plt.get_fignums() == before


def test_importing_anharmony_plots_does_not_import_matplotlib():
    code = ("import sys, anharmony, anharmony.plots; "
            "assert 'matplotlib' not in sys.modules, 'matplotlib imported'")
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT, timeout=120)  # hang guard


# =========================================================================== plotted data
def test_flow_draws_the_energies_partial_sums_and_resummed_values(synthetic):
    fig = plots.make_figure(synthetic, "flow", orders=[1, 3])
    got = lines_by_gid(fig)
    ds = synthetic
    for c in range(len(CHANNELS)):
        for n in range(LEVELS):
            xy = got[f"energy:{c}:{n}"]
            assert_same(xy[:, 0], ds.scan_value.values)
            assert_same(xy[:, 1], ds.energy.values[:, c, n])
            for k in (1, 3):
                assert_same(got[f"partial_sum:{c}:{n}:{k}"][:, 1],
                            ds.series_partial_sum.values[:, c, n, k])
            for m, name in enumerate(("pade", "borel_pade")):
                assert_same(got[f"resummed:{c}:{n}:{name}"][:, 1],
                            ds.series_resummed.values[:, c, n, m])
    assert not any(g.startswith("partial_sum") and g.endswith(":2") for g in got)


def test_flow_direct_labels_are_spectroscopic(synthetic):
    fig = plots.make_figure(synthetic, "flow", channel="d5/2")
    assert sorted(texts(fig)) == ["1d5/2", "2d5/2", "3d5/2"]


def test_flow_masks_continuum_states_out_of_the_level_lines(synthetic):
    ds = synthetic.copy(deep=True)
    ds["bound"].values[2:, 0, 2] = 0
    got = lines_by_gid(plots.make_figure(ds, "flow", channel="s1/2"))
    e = ds.energy.values[:, 0, 2]
    assert_same(got["energy:0:2"][:, 1], np.where(np.arange(4) < 2, e, np.nan))
    assert_same(got["continuum:0:2"][:, 1], np.where(np.arange(4) < 2, np.nan, e))


def test_flow_frames_the_bound_levels_not_a_far_continuum(synthetic):
    # Our figure contract: a discretised continuum far above must not squeeze the bound
    # levels into a strip; the frame holds every bound level and the threshold, and the
    # continuum lines are clipped (they stay in the figure, drawn by their own gid).
    ds = synthetic.copy(deep=True)
    ds["bound"].values[:, 0, 2] = 0
    ds["energy"].values[:, 0, 2] = 1e3  # far above the others (< 12 ħω)
    ds["threshold"].values[:] = 9.0
    fig = plots.make_figure(ds, "flow", channel="s1/2")
    ax = fig.axes[0]
    lo, hi = ax.get_ylim()
    bound = ds.energy.values[:, 0, :2]
    assert lo <= bound.min() and max(bound.max(), 9.0) <= hi < 1e3
    assert "continuum:0:2" in lines_by_gid(fig)


def test_flow_of_a_coupling_scan_sums_the_series_at_each_lambda(morse):
    got = lines_by_gid(plots.make_figure(morse, "flow", orders=[2]))
    lam = morse.scan_value.values
    coef = morse.series_coefficient.values[:, 0, 3]
    expected = [np.polynomial.polynomial.polyval(x, coef[i, :3]) for i, x in enumerate(lam)]
    assert_same(got["partial_sum:0:3:2"][:, 1], expected)
    at_one = np.isclose(lam, 1.0)  # λ comes from a linspace: 1.0 to an ulp
    assert_same(got["partial_sum:0:3:2"][at_one, 1],
                morse.series_partial_sum.values[at_one, 0, 3, 2])
    resummed = got["resummed:0:3:pade"][:, 1]  # resummed values exist at λ = 1 only
    assert np.isnan(resummed[~at_one]).all()
    assert_same(resummed[at_one], morse.series_resummed.values[at_one, 0, 3, 0])


def test_shift_draws_the_shifts_and_the_low_order_rs_shifts(synthetic):
    got = lines_by_gid(plots.make_figure(synthetic, "shift", orders=[1, 2]))
    ds = synthetic
    for c in range(len(CHANNELS)):
        for n in range(LEVELS):
            assert_same(got[f"shift:{c}:{n}"][:, 1], ds["shift"].values[:, c, n])
            for k in (1, 2):
                assert_same(got[f"pt_shift:{c}:{n}:{k}"][:, 1],
                            ds.series_partial_sum.values[:, c, n, k]
                            - ds.series_coefficient.values[:, c, n, 0])


def test_shift_loglog_slope_of_first_order_is_one_for_a_linear_term(synthetic):
    # E_1 = E_0 s for W = s r² (first term of the binomial series): exactly linear in s,
    # so the log–log slope is 1 (the first scan point, s = 0, drops out of a log axis).
    fig = plots.make_figure(synthetic, "shift", log=True, channel="p3/2", levels=[1])
    ax = fig.axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    got = lines_by_gid(fig)
    guide = got["slope:2:1"]
    slope = math.log(guide[1, 1] / guide[0, 1]) / math.log(guide[1, 0] / guide[0, 0])
    assert slope == pytest.approx(1.0, rel=1e-9)  # from two exact binomial terms
    # slope 1 is the first-order rule: not written beside the level (only a deviation is)
    assert not any("slope" in t for t in texts(fig) if "RS shift" not in t)
    assert not any(gid.startswith("pt_shift:") and gid.endswith(":2") for gid in got)
    shift = got["shift:2:1"]
    assert np.isnan(shift[0]).all()  # s = 0 has no place on a log axis
    assert_same(shift[1:, 1], np.abs(synthetic["shift"].values[1:, 2, 1]))


def test_series_draws_coefficients_partial_sums_and_exact_level(synthetic):
    fig = plots.make_figure(synthetic, "series", channel="p1/2", scan_index=2, levels=[0, 2])
    got = lines_by_gid(fig)
    ds = synthetic
    for n in (0, 2):
        k = ds.order.values
        assert_same(got[f"coefficient:1:{n}"][:, 0], k)
        assert_same(got[f"coefficient:1:{n}"][:, 1],
                    np.abs(ds.series_coefficient.values[2, 1, n]))
        assert_same(got[f"partial_sum:1:{n}"][:, 1], ds.series_partial_sum.values[2, 1, n])
        assert_same(got[f"exact:1:{n}"][:, 1], [ds.energy.values[2, 1, n]] * 2)
        ko = int(ds.series_optimal_order.values[2, 1, n])
        assert_same(got[f"optimal:1:{n}"], [[ko - 1, ds.series_optimal.values[2, 1, n]]])
    assert fig.axes[0].get_yscale() == "log"


def test_series_large_order_estimate_follows_a_factorial_series(synthetic):
    # E_k = 0.7 · 3^k Γ(k + ½), the growth of the quartic oscillator's ground state
    # (Bender and Wu, Phys. Rev. 184, 1231 (1969)); the estimate must lie on it.
    big = np.arange(17, dtype=float)
    model = 0.7 * np.exp(big * math.log(3.0) + gammaln(big + 0.5)) * (-1.0) ** big
    ds = synthetic.reindex(order=np.arange(17))
    coef = np.broadcast_to(model, ds.series_coefficient.shape).copy()
    ds["series_coefficient"] = (ds.series_coefficient.dims, coef, ds.series_coefficient.attrs)
    ds["series_partial_sum"] = (ds.series_partial_sum.dims, np.cumsum(coef, axis=-1),
                                ds.series_partial_sum.attrs)
    got = lines_by_gid(plots.make_figure(ds, "series"))
    est = got["large_order:0:0"]
    assert_same(est[:, 1], np.abs(model[est[:, 0].astype(int)]), rtol=RTOL_FACTORIAL_FIT)


def test_series_leaves_out_vanishing_orders(synthetic):
    ds = synthetic.copy(deep=True)
    ds["series_coefficient"].values[..., 1::2] = 1e-30  # odd orders "vanish" numerically
    got = lines_by_gid(plots.make_figure(ds, "series"))
    y = got["coefficient:0:0"][:, 1]
    assert np.isnan(y[1::2]).all()
    assert_same(y[0::2], np.abs(ds.series_coefficient.values[-1, 0, 0, 0::2]))


def test_convergence_with_a_length_scan(synthetic):
    fig = plots.make_figure(synthetic, "convergence", channel="p3/2", scan_index=1,
                            basis_size=8)
    got = lines_by_gid(fig)
    ds = synthetic
    conv = ds.convergence_energy.values[1, 2, 0]  # (basis_size, basis_length)
    e_inf = ds.convergence_extrapolated.values[1, 2, 0]
    for b in range(len(LENGTHS)):
        xy = got[f"difference:2:0:{b}"]
        assert_same(xy[:, 0], SIZES)
        assert_same(xy[:, 1], np.abs(conv[:, b] - e_inf))
    xy = got["energy_vs_length:2:0"]
    assert_same(xy[:, 0], LENGTHS)
    assert_same(xy[:, 1], conv[1, :])  # N = 8 is the second size
    assert_same(got["extrapolated:2:0"][:, 1], [e_inf, e_inf])
    assert_same(got["tolerance"][:, 1], [1e-8, 1e-8])


def test_convergence_without_a_length_scan_uses_the_size_scan(quartic):
    fig = plots.make_figure(quartic, "convergence", channel="p", levels=[0, 1])
    got = lines_by_gid(fig)
    conv = quartic.convergence_energy.values[-1, 1]
    limit = quartic["extrapolated_energy"] if "extrapolated_energy" in quartic else \
        quartic["energy"]  # E∞: the study's extrapolation, else the best level
    for n in (0, 1):
        e = limit.values[-1, 1, n]
        diff = np.abs(conv[n] - e)
        assert_same(got[f"difference:1:{n}:0"][:, 1], np.where(diff > 0, diff, np.nan))
    assert_same(got["energy_vs_size:1:0"][:, 1], conv[0])
    assert_same(got["energy_vs_size:1:0"][:, 0], quartic.basis_size.values)


def _radial_density(n: int, l: int, omega: float, r: np.ndarray) -> np.ndarray:
    """r² R_nl(r)² of the 3D oscillator (ħ = m = 1), normalised on dr.

    R_nl ∝ r^l e^{−ω r²/2} L_n^{(l+½)}(ω r²) (e.g. Messiah, vol. 1, app. B).
    """
    u = r ** (l + 1) * np.exp(-omega * r**2 / 2) * eval_genlaguerre(n, l + 0.5, omega * r**2)
    norm = 2 * omega ** (l + 1.5) * math.exp(gammaln(n + 1) - gammaln(n + l + 1.5))
    return norm * u**2


def test_well_draws_the_exact_oscillator_and_its_densities(synthetic):
    p, c, l = 3, 3, 2  # s = 0.4, channel d3/2
    fig = plots.make_figure(synthetic, "well", scan_index=p, channel="d3/2")
    got = lines_by_gid(fig)
    omega = math.sqrt(1 + 2 * SCAN[p])
    pot = got["potential"]
    # ½ ω² r², recomputed from the case: rtol 1e-12 for rounding of a few products
    assert_same(pot[:, 1], 0.5 * omega**2 * pot[:, 0] ** 2, rtol=1e-12)
    eff = got["effective_potential"]
    r = eff[1:, 0]
    # V + l(l+1)/2r², recomputed: rtol 1e-12 for rounding of a few products
    assert_same(eff[1:, 1], 0.5 * omega**2 * r**2 + l * (l + 1) / (2 * r**2), rtol=1e-12)
    ratios = []
    for n in range(LEVELS):
        e = synthetic.energy.values[p, c, n]
        level = got[f"level:{c}:{n}"]
        assert_same(level[:, 1], [e, e])
        # the level line ends at the classical turning points, V_eff = E
        v_end = 0.5 * omega**2 * level[:, 0] ** 2 + l * (l + 1) / (2 * level[:, 0] ** 2)
        assert_same(v_end, [e, e], rtol=1e-4)  # linear interpolation on the plotting grid
        dens = got[f"density:{c}:{n}"]
        exact = _radial_density(n, l, omega, dens[:, 0])
        lifted = dens[:, 1] - e
        ratio = np.sum(lifted * exact) / np.sum(exact**2)  # the common plotting scale
        np.testing.assert_allclose(lifted / ratio, exact, rtol=0, atol=ATOL_DENSITY * exact.max())
        ratios.append(ratio)
        # normalised densities: ∫ (y − E) dr / scale = 1
        assert np.trapezoid(lifted, dens[:, 0]) / ratio == pytest.approx(1.0, rel=RTOL_NORM)
    # one scale for all; 1e-9: each ratio is a least-squares quotient of sums of ~1e3 terms
    assert ratios == pytest.approx([ratios[0]] * LEVELS, rel=1e-9)


def test_well_of_a_coupling_scan_interpolates_the_reference_and_the_morse_well(morse):
    from anharmony.plots._common import ResultView
    from anharmony.plots.well import rebuild

    p = 2
    lam = float(morse.scan_value.values[p])
    fig = plots.make_figure(morse, "well", scan_index=p)
    got = lines_by_gid(fig)
    case = yaml.safe_load(morse.attrs["case"])
    mp = case["well"][0]["morse"]
    x = got["potential"][:, 0]
    v_morse = mp["depth"] * (1 - np.exp(-mp["width"] * (x - mp["center"]))) ** 2
    # ½ m ω² (x − x₀)² in cm⁻¹ with ħω in cm⁻¹, x in Å, m in u (CODATA via scipy.constants)
    hbar2_2m = sc.hbar**2 / (2 * case["particle"]["mass"] * sc.atomic_mass) \
        / (sc.h * sc.c * 100) / sc.angstrom**2
    hw = float(morse.reference_frequency.values[p])
    x0 = float(morse.reference_center.values[p])
    v_ref = morse.reference_v_min.values[p] + hw**2 / (4 * hbar2_2m) * (x - x0) ** 2
    # rtol 1e-9: ħ²/2m here goes through CODATA products; the package rounds them differently
    assert_same(got["potential"][:, 1], (1 - lam) * v_ref + lam * v_morse, rtol=1e-9)
    pic = rebuild(ResultView(morse, "well"), p, 0, 8)
    assert_same(pic.energies, morse.energy.values[p, 0, :8], rtol=RTOL_REBUILD)
    for n in range(8):
        assert_same(got[f"level:0:{n}"][:, 1], [morse.energy.values[p, 0, n]] * 2)


def test_well_of_a_parity_channel_is_drawn_on_both_sides(trap):
    fig = plots.make_figure(trap, "well", scan_index=0, channel="odd")
    got = lines_by_gid(fig)
    x = got["potential"][:, 0]
    assert x[0] == -x[-1]  # a symmetric plotting grid, mirrored exactly
    g = yaml.safe_load(trap.attrs["case"])["well"][0]["gaussian"]
    depth = float(trap.scan_value.values[0])
    assert_same(got["potential"][:, 1], -depth * np.exp(-2 * x**2 / g["waist"] ** 2),
                rtol=1e-12)  # V = −U₀ e^{−2x²/w²}; rounding of exp
    dens = got["density:1:0"]
    e = trap.energy.values[0, 1, 0]
    lifted = dens[:, 1] - e
    assert lifted.min() >= -1e-12 * abs(e)  # a density: ≥ 0 up to the rounding of y − E
    # odd state: |ψ(0)|² = 0; 1e-9 |E|: the grid point nearest 0 is not exactly 0
    assert lifted[np.argmin(np.abs(dens[:, 0]))] == pytest.approx(0.0, abs=1e-9 * abs(e))
    assert_same(lifted, lifted[::-1], rtol=1e-9)  # |ψ|² of a parity state is even; recurrences


def test_scheme_bars_labels_and_shells(synthetic):
    fig = plots.make_figure(synthetic, "scheme", scan_index=2)
    got = lines_by_gid(fig)
    ds = synthetic
    for c in range(len(CHANNELS)):
        for n in range(LEVELS):
            assert_same(got[f"level:{c}:{n}"][:, 1], [ds.energy.values[2, c, n]] * 2)
    # shells of the unit oscillator at N + 3/2 (N = 2n + l up to 2·2 + 2 = 6)
    for big_n in range(7):
        assert_same(got[f"shell:{big_n}"][:, 1], [big_n + 1.5] * 2)
    labels = set(texts(fig))
    assert {"1s1/2", "2s1/2", "3s1/2", "1p1/2", "1p3/2", "1d3/2", "1d5/2", "3d5/2"} <= labels
    assert {f"N={k}" for k in range(7)} <= labels
    tick = [t.get_text() for t in fig.axes[0].get_xticklabels()]
    assert tick[1:] == [ch[2] for ch in CHANNELS]


def test_scheme_omits_continuum_states(synthetic):
    ds = synthetic.copy(deep=True)
    ds["bound"].values[-1, 0, 2] = 0
    got = lines_by_gid(plots.make_figure(ds, "scheme"))
    assert "level:0:2" not in got and "level:0:1" in got


@pytest.mark.parametrize(("dimension", "l", "j", "n", "label"), [
    (3, 0, 0.5, 0, "1s1/2"),
    (3, 2, 2.5, 0, "1d5/2"),
    (3, 1, 1.5, 1, "2p3/2"),
    (3, 3, 3.5, 0, "1f7/2"),
    (3, 7, None, 0, "1k"),  # s p d f g h i k: j is skipped (trade convention)
    (3, 0, None, 2, "3s"),
    (2, 1, None, 0, "n=0, |m|=1"),
    (1, -1, None, 3, "v=3"),
    (1, 1, None, 2, "v=5"),  # odd parity: v = 2n + 1
])
def test_spectroscopic_labels_follow_the_trade_convention(dimension, l, j, n, label):
    # n l j with n counted from 1 (common practice, no source)
    assert level_label(dimension, l, j, n) == label


@pytest.mark.parametrize(("units", "quantity", "shown"), [
    ("cm-1", "energy", "cm⁻¹"),
    ("MeV fm-4", None, "MeV/fm⁴"),
    ("angstrom", "length", "Å"),
    ("um", "length", "µm"),
    ("kHz", "energy", "h·kHz"),
    ("1", None, None),
])
def test_units_are_written_for_axis_labels(units, quantity, shown):
    assert pretty_units(units, "molecular", quantity) == shown


def test_oscillator_units_are_hbar_omega_and_b():
    assert pretty_units("1", "oscillator", "energy") == "ħω"
    assert pretty_units("1", "oscillator", "length") == "b"


# =========================================================================== bad requests
@pytest.mark.parametrize(("kwargs", "words"), [
    ({"kind": "spectrum"}, ["kind", "'spectrum'", "flow, shift, series, convergence, well, "
                            "scheme"]),
    ({"kind": "flow", "channel": "f7/2"}, ["'f7/2'", "s1/2, p1/2, p3/2, d3/2, d5/2"]),
    ({"kind": "well", "channel": 9}, ["channel", "9", "5 channel"]),
    ({"kind": "scheme", "scan_index": 4}, ["scan_index", "4", "0…3"]),
    ({"kind": "flow", "levels": [3]}, ["levels", "3", "0…2"]),
    ({"kind": "flow", "orders": [12]}, ["orders", "12", "0, 1, 2"]),
    ({"kind": "series", "methods": ["shanks"]}, ["methods", "'shanks'", "pade, borel_pade"]),
    ({"kind": "flow", "log": True}, ["log", "flow", "shift"]),
    ({"kind": "flow", "size": (0.1, 3)}, ["size", "inches"]),
    ({"kind": "series", "channel": ["s1/2", "p1/2"]}, ["channel", "one channel"]),
])
def test_bad_requests_raise_one_clear_line(synthetic, kwargs, words):
    kind = kwargs.pop("kind")
    with pytest.raises(ValueError) as err:
        plots.make_figure(synthetic, kind, **kwargs)
    message = str(err.value)
    assert "\n" not in message
    for w in words:
        assert w in message


@pytest.mark.parametrize(("drop", "kind"), [
    ("convergence_energy", "convergence"),
    ("series_coefficient", "series"),
    ("energy", "flow"),
    ("shift", "shift"),
    ("reference_energy", "scheme"),
])
def test_a_missing_variable_is_named(synthetic, drop, kind):
    ds = synthetic.drop_vars(drop)
    with pytest.raises(ValueError, match=rf"^{kind} figure: .*'{drop}'") as err:
        plots.make_figure(ds, kind)
    assert "\n" not in str(err.value)


def test_a_missing_case_text_is_named(synthetic):
    ds = synthetic.copy()
    ds.attrs = {k: v for k, v in ds.attrs.items() if k != "case"}
    with pytest.raises(ValueError, match=r"^well figure: .*'case'"):
        plots.make_figure(ds, "well")


def test_a_missing_result_file_is_named(tmp_path):
    missing = tmp_path / "nothing.nc"
    with pytest.raises(ValueError, match="no such result file") as err:
        plots.make_figure(missing, "flow")
    assert "\n" not in str(err.value)


@pytest.mark.parametrize(("name", "words"), [
    ("figure.jpg", ["'.jpg'", ".png, .pdf or .svg"]),
    ("figure", ["no suffix"]),
    ("no-such-folder/figure.png", ["folder", "does not exist"]),
])
def test_bad_output_paths_raise_one_clear_line(synthetic, tmp_path, name, words):
    fig = plots.make_figure(synthetic, "scheme")
    with pytest.raises(ValueError) as err:
        plots.save_figure(fig, tmp_path / name)
    assert "\n" not in str(err.value)
    for w in words:
        assert w in str(err.value)


def test_an_interrupted_save_keeps_the_old_file(synthetic, tmp_path, monkeypatch):
    target = tmp_path / "flow.png"
    target.write_bytes(b"old figure")
    fig = plots.make_figure(synthetic, "flow")

    def broken(path, **kw):
        Path(path).write_bytes(b"half a fig")
        raise KeyboardInterrupt

    monkeypatch.setattr(fig, "savefig", broken)
    with pytest.raises(KeyboardInterrupt):
        plots.save_figure(fig, target)
    assert target.read_bytes() == b"old figure"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["flow.png"]


# =========================================================================== style
def _lstar(hex_colour: str) -> float:
    """CIE 1976 L* of an sRGB colour (IEC 61966-2-1 transfer; Y with D65 weights)."""
    rgb = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    y = float(np.dot([0.2126, 0.7152, 0.0722], lin))
    return 116 * y ** (1 / 3) - 16 if y > 216 / 24389 else 24389 / 27 * y


def test_palette_neighbours_differ_in_greyscale():
    ls = [_lstar(c) for c in _style.PALETTE]
    steps = [abs(a - b) for a, b in zip(ls, ls[1:] + ls[:1], strict=True)]
    assert min(steps) >= MIN_LSTAR_STEP


# =========================================================================== command line
@pytest.fixture(scope="module")
def quartic_file(quartic, tmp_path_factory):
    from anharmony.store import write_dataset

    return write_dataset(quartic, tmp_path_factory.mktemp("result") / "quartic-3d.nc")


def test_a_result_file_plots_the_same_numbers_as_its_dataset(quartic, quartic_file):
    from_file = lines_by_gid(plots.make_figure(quartic_file, "flow"))
    from_memory = lines_by_gid(plots.make_figure(quartic, "flow"))
    assert from_file.keys() == from_memory.keys()
    for gid, xy in from_memory.items():
        assert_same(from_file[gid], xy)


def test_plot_command_writes_the_figure(quartic_file, tmp_path, capsys):
    from anharmony.cli import main

    out = tmp_path / "scheme.svg"
    assert main(["plot", str(quartic_file), "--kind", "scheme", "-o", str(out)]) == 0
    # 72 points per inch (SVG/PDF); abs=1 point: rounding a writer may apply to the page size
    assert image_size(out) == pytest.approx((72 * plots.KINDS["scheme"].size[0],
                                             72 * plots.KINDS["scheme"].size[1]), abs=1)


@pytest.mark.parametrize(("args", "words"), [
    (["--kind", "flow", "--channel", "h11/2"], ["no channel 'h11/2'", "s, p, d"]),
    (["--kind", "well", "--scan", "7"], ["scan_index", "0…4"]),
])
def test_plot_command_bad_request_exits_2_with_one_line(quartic_file, tmp_path, capsys, args,
                                                        words):
    from anharmony.cli import main

    code = main(["plot", str(quartic_file), "-o", str(tmp_path / "f.png"), *args])
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert len(err.splitlines()) == 1
    for w in words:
        assert w in err
    assert not (tmp_path / "f.png").exists()


def test_plot_command_missing_file_exits_2_with_one_line(tmp_path, capsys):
    from anharmony.cli import main

    code = main(["plot", str(tmp_path / "gone.nc"), "--kind", "flow", "-o",
                 str(tmp_path / "f.png")])
    err = capsys.readouterr().err.strip()
    assert code == 2 and len(err.splitlines()) == 1 and "no such result file" in err


def test_well_says_when_the_rebuilt_levels_are_not_the_files(synthetic):
    ds = synthetic.copy(deep=True)
    ds["energy"].values[1, 0, :] += 0.3  # energies that the stored case cannot give
    fig = plots.make_figure(ds, "well", scan_index=1)
    assert any(t.startswith("note: the rebuilt well's levels differ") for t in texts(fig))
    fig = plots.make_figure(synthetic, "well", scan_index=1)
    assert not any(t.startswith("note:") for t in texts(fig))


def test_title_and_size_options(synthetic):
    fig = plots.make_figure(synthetic, "scheme", title="Invented nucleus", size=(5.0, 4.0))
    assert fig.get_suptitle() == "Invented nucleus"
    assert tuple(fig.get_size_inches()) == (5.0, 4.0)
