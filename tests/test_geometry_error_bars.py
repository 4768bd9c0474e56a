"""Error bars and flags of the geometry levels (Cartesian and axial blocks, the open line).

Each check is a regression test of a silent wrong answer found in review: a block level's
error bar below its true error, an open well whose levels were never judged, "lowest levels"
that skip states the truncated basis lacks, and an open 1D well with no word.

References (never anharmony): the exact anisotropic oscillator E = Σ ħω_i (n_i + ½)
(textbook); ``tests/refgeometry.py`` — Richardson-extrapolated finite differences on the
line, in the (ρ, z) plane of one Λ, and a large oscillator product basis for a 2D polynomial
well (methods named there); the 1D escape barrier as the local maximum of V from
``scipy.optimize.brentq`` on V′ (calculus).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

import anharmony as ah
from anharmony.cli import main
from anharmony.geometry import solve_geometry
from anharmony.geometry.by_block import solve_blocks
from refgeometry import axial_levels, line_levels, product_levels

# a reference accurate to this (its own spread over grids, measured below 1e-6) is enough:
# the error bars tested are 1e-5 … 1e-1
REF_SLACK = 2e-6


def _quiet(f, *args, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        return f(*args, **kw)


# ---------------------------------------------------------------- 1. error bars bound the truth
def test_error_bars_of_a_2d_anharmonic_well_cover_the_true_error():
    # ω = (1, 1.6), 0.05 r⁴, N_max = 8: the reference is a 30 × 26 oscillator product basis
    # (converged to 1e-9 against 40 × 34, measured); every level of both truncations must lie
    # within its error bar of the reference
    ref = product_levels((1.0, 1.6), 0.05, (30, 26), 12)
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [1.0, 1.6]}},
                               {"power": {"exponent": 4, "strength": 0.05}}])
    for truncation in ("shells", "energy"):
        s = _quiet(solve_geometry, well, 2, geometry="cartesian", shells=8,
                   truncation=truncation, levels=12)
        true = np.abs(s.energies - ref)
        assert np.all(true <= s.error_estimate), (truncation, true / s.error_estimate)
        assert np.max(true) > 1e-4  # the check has teeth: the basis is visibly short


def _nucleus_levels():
    """Spherical Woods–Saxon + spin–orbit (A = 24; the deformed-nucleus demo at β₂ = 0): the
    (l, j) levels of even l with j ≥ ½, from finite differences of u(r) on the line r > 0
    (u(0) = 0), sorted: the Ω = ½⁺ block holds all of them."""
    from scipy import constants as sc

    m = 0.5 * (sc.m_p + sc.m_n) * sc.c**2 / (sc.e * 1e6)
    hbarc = sc.hbar * sc.c / (sc.e * 1e6) * 1e15
    k = hbarc**2 / (2 * m)
    big_r = 1.27 * 24 ** (1 / 3)

    def f(r):
        return 1.0 / (1.0 + np.exp((r - big_r) / 0.67))

    def df(r):
        e = np.exp((r - big_r) / 0.67)
        return -e / 0.67 / (1.0 + e) ** 2

    out = []
    for l, j in ((0, 0.5), (2, 2.5), (2, 1.5)):
        ls = (j * (j + 1) - l * (l + 1) - 0.75) / 2

        def v(r, l=l, ls=ls):
            return -51.0 * f(r) + 22.0 * 1.27**2 * df(r) / r * ls + k * l * (l + 1) / r**2

        e, acc = line_levels(v, k, (0.0, 16.0), 1600, 2, -51.0)
        out += [x for x, a in zip(e, acc, strict=True) if x < 0 and a < 1e-5]
    return np.sort(out)


def test_error_bars_of_a_nuclear_omega_block_cover_the_true_error():
    # at shells 8 the change from 6 to 8 shells of 1d5/2 is 2e-5 MeV while it is 1.7e-2 MeV
    # off (a plateau of the slow convergence at the Woods–Saxon cusp): its error bar must
    # still cover the truth
    d = {"r0": 1.27, "mass_number": 24, "diffuseness": 0.67, "beta2": 0.0}
    well = ah.Well.from_terms([{"deformed_woods_saxon": {"depth": 51.0, **d}},
                               {"deformed_spin_orbit": {"strength": 22.0, "length": 1.27,
                                                        **d}}], units="nuclear")
    s = _quiet(solve_geometry, well, 3, geometry="axial", omega=0.5, parity=1, shells=8,
               units="nuclear", levels=3)
    ref = _nucleus_levels()[:3]
    true = np.abs(s.energies - ref)
    assert true[1] > 1e-2  # 1d5/2: the level the old error bar missed by 880×
    assert np.all(true <= s.error_estimate + REF_SLACK), true / s.error_estimate


def test_error_bars_of_a_tilted_beam_trap_cover_the_staircase():
    # a focused beam with a tilt along its axis (oscillator units: U₀ = 100, w₀ = 1,
    # z_R = 3, F = 1), axial basis, energy truncation: the Λ = 2 level stands still from
    # N_max − 2 to N_max (the radial quanta enter every fourth shell)
    well = ah.Well.from_terms([{"focused_beam": {"depth": 100.0, "waist": 1.0,
                                                 "rayleigh_length": 3.0}},
                               {"tilt": {"force": 1.0, "axis": "z"}}])
    s = _quiet(solve_geometry, well, 3, geometry="axial", omega=2, shells=12,
               truncation="energy", levels=2)

    def v(rho, z):
        w = 1.0 + (z / 3.0) ** 2
        return -100.0 / w * np.exp(-2.0 * rho**2 / w) + z

    ref, acc = axial_levels(v, 0.5, 2, 1.5, (-4.0, 4.0), (30, 60), 2, -100.0)
    true = np.abs(s.energies - ref)
    assert np.all(acc < 0.1 * true)
    assert np.all(true <= s.error_estimate + acc), true / s.error_estimate


# ---------------------------------------------------------------- 2. open wells are judged
def _beam_with_gravity():
    return ah.Well.from_terms([{"focused_beam": {"depth": 100.0, "waist": 1.0,
                                                 "rayleigh_length": 3.0}},
                               {"tilt": {"force": 2.0, "axis": "z"}}])


def test_quasi_bound_levels_of_an_open_well_are_judged_and_named():
    well = _beam_with_gravity()
    with pytest.warns(ah.ConvergenceWarning, match="quasi-bound level") as rec:
        s = solve_geometry(well, 3, geometry="axial", shells=8, truncation="energy",
                           levels=6)
    # V → −∞ along −z: no level is bound, the ones below the escape barrier are quasi-bound
    assert s.threshold == -math.inf and not np.any(s.bound)
    assert math.isfinite(s.barrier) and np.all(s.quasi_bound == (s.energies < s.barrier))
    assert np.any(s.quasi_bound)
    text = " ".join(str(w.message) for w in rec)
    bad = [lab for lab, q, e in zip(s.labels, s.quasi_bound, s.error_estimate, strict=True)
           if q and e > 1e-6 * np.mean(np.diff(s.energies))]
    assert bad and all(lab in text for lab in bad[:8])


def test_blocks_of_an_open_well_flag_quasi_bound_levels_and_their_convergence():
    b = _quiet(solve_blocks, _beam_with_gravity(), 3, geometry="axial", shells=8,
               truncation="energy", levels=2)
    assert not np.any(b.bound)
    with np.errstate(invalid="ignore"):
        assert np.array_equal(b.quasi_bound, b.energies < b.barrier)
    conv = b.converged(1e-3)
    assert np.array_equal(conv, b.quasi_bound & (b.error_estimate <= 1e-3))
    assert np.any(b.quasi_bound & ~conv)  # judged, and not all converged at 8 shells


OPEN_CASE = """\
schema: 1
title: tilted beam
units: oscillator
space: {dimension: 3, geometry: axial, shells: 8, truncation: energy}
well:
  - focused_beam: {depth: 100.0, waist: 1.0, rayleigh_length: 3.0}
  - tilt: {force: 2.0, axis: z}
levels: {count: 2}
convergence: {tolerance: 1.0e-3}
output: open.nc
"""


def _run_case(tmp_path, name, text, capsys):
    """Run a case file through the command line (exit 0); its stderr and result."""
    path = tmp_path / f"{name}.yaml"
    path.write_text(text)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        assert main(["run", str(path), "--progress", "off"]) == 0
    return capsys.readouterr().err, ah.read_dataset(tmp_path / f"{name}.nc")


def test_a_case_of_an_open_well_warns_about_its_unconverged_quasi_bound_levels(tmp_path,
                                                                                 capsys):
    err, ds = _run_case(tmp_path, "open", OPEN_CASE, capsys)
    assert "quasi-bound level(s) not converged" in err
    q = ds["quasi_bound"].values.astype(bool)
    assert np.any(q) and not np.any(ds["bound"].values)
    conv = ds["converged"].values.astype(bool)
    assert np.array_equal(conv, q & (ds["error_estimate"].values <= 1e-3))


# ---------------------------------------------------------------- 3. no skipped states
def _exact(w, top=60):
    return np.sort([w[0] * (a + 0.5) + w[1] * (b + 0.5) for a in range(top)
                    for b in range(top)])


def test_shells_truncation_of_a_very_anisotropic_well_flags_the_levels_it_may_skip():
    # ω = (1, 30), N_max = 12: n_x ≤ 12, so the exact levels 13.5 + 15, … are missing and the
    # 14th "lowest" level would be (0,1) at 45.5; every level is exact or flagged (error bar
    # inf), and the warning names the setting
    w = [1.0, 30.0]
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": w}}])
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        s = solve_geometry(well, 2, geometry="cartesian", shells=12, levels=20)
    assert any("truncation='energy'" in str(w.message) for w in rec)
    exact = _exact(w)[:20]
    wrong = np.abs(s.energies - exact) > 1e-9
    assert np.any(wrong)
    assert np.all(s.incomplete[wrong]) and np.all(np.isinf(s.error_estimate[wrong]))
    assert not np.any(s.incomplete[:13])  # (0,0) … (12,0) are exact and complete
    # the energy truncation keeps the soft axis' quanta: the same request is right
    e = _quiet(solve_geometry, well, 2, geometry="cartesian", shells=12, levels=20,
               truncation="energy")
    np.testing.assert_allclose(e.energies, exact, atol=1e-9)


def test_a_block_that_misses_states_is_flagged_per_block():
    # the (+,+) block of ω = (1, 30) with a weak quartic at N_max = 12: its 8th level would be
    # (0,2) at 75.5 while (14,0) lies near 30
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [1.0, 30.0]}},
                               {"power": {"exponent": 4, "strength": 0.002}}])
    with pytest.warns(ah.ConvergenceWarning, match="lacks some oscillator states"):
        b = solve_blocks(well, 2, geometry="cartesian", shells=12, levels=10)
    i = b.labels.index("(+,+)")
    assert b.level_labels[i][7] == "(0,2)"
    assert b.incomplete[i, 7] and math.isinf(b.error_estimate[i, 7])
    assert not np.any(b.incomplete[i, :7])


def test_axial_shells_truncation_flags_skipped_states_too():
    # ω_⊥ = 30, ω_z = 1 (symmetric about z): Λ = 0, π = +, shells 6 holds n_z ≤ 6 only, so
    # its 5th level would be (n_ρ = 1) near 91.5 while n_z = 8 lies at 38.5
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [30.0, 30.0, 1.0]}}])
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        s = solve_geometry(well, 3, geometry="axial", omega=0, parity=1, shells=6,
                           levels=5)
    assert any("lacks some oscillator states" in str(w.message) for w in rec)
    exact = 30.0 + 1.0 * (np.arange(0, 10, 2) + 0.5)  # n_ρ = 0, n_z even
    wrong = np.abs(s.energies - exact) > 1e-9
    assert np.any(wrong) and np.all(s.incomplete[wrong])
    assert np.all(np.isinf(s.error_estimate[wrong]))


# ---------------------------------------------------------------- 4. the open line
def test_an_open_line_has_an_escape_barrier_and_judges_its_quasi_bound_levels():
    # V = −10 e^{−x²} + x falls without bound as x → −∞; the barrier is the local maximum of
    # V left of the minimum (V′ = 20 x e^{−x²} + 1 = 0, brentq on [−4, −1])
    well = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "range": 1.0}},
                               {"tilt": {"force": 1.0}}])
    with pytest.warns(ah.ConvergenceWarning) as rec:
        s = ah.solve(well, 1, None, levels=5)
    x = brentq(lambda t: 20.0 * t * math.exp(-t * t) + 1.0, -4.0, -1.0)
    barrier = -10.0 * math.exp(-x * x) + x
    assert s.barrier == pytest.approx(barrier, abs=1e-9)
    # quasi-bound: below the barrier and living on the well's side of the pass (more than
    # half the density there, measured here on a numpy grid of the wavefunctions); the two
    # deep resonances (−7.99, −4.38) are, a state of the open side below the pass is not
    below = s.energies < barrier
    grid = np.linspace(-40.0, 40.0, 16001)
    dens = s.wavefunctions(grid) ** 2
    inside = (dens[:, grid >= x].sum(axis=1) / dens.sum(axis=1)) > 0.5
    assert np.array_equal(s.quasi_bound, below & inside) and s.quasi_bound[:2].all()
    assert np.array_equal(s.converged, s.quasi_bound & (s.error_estimate <= s.tolerance))
    text = " ".join(str(w.message) for w in rec)
    assert "escape barrier" in text and ("above it" in text or "beyond the pass" in text)
    unconverged = [lab for lab, q, c in zip(s.labels, s.quasi_bound, s.converged,
                                            strict=True) if q and not c]
    assert unconverged and all(lab in text for lab in unconverged)


OPEN_LINE_CASE = """\
schema: 1
title: open line
units: oscillator
space: {dimension: 1}
well:
  - gaussian: {depth: 10.0, range: 1.0}
  - tilt: {force: 1.0}
levels: {count: 5}
output: line.nc
"""


def test_a_case_on_the_open_line_stores_its_barrier_and_judges_quasi_bound_levels(tmp_path,
                                                                                   capsys):
    err, ds = _run_case(tmp_path, "line", OPEN_LINE_CASE, capsys)
    x = brentq(lambda t: 20.0 * t * math.exp(-t * t) + 1.0, -4.0, -1.0)  # as above
    assert float(ds["escape_barrier"].values[0]) == pytest.approx(
        -10.0 * math.exp(-x * x) + x, abs=1e-9)
    q = ds["quasi_bound"].values.astype(bool)
    below = ds["energy"].values < ds["escape_barrier"].values[0]
    assert np.all(below[q]) and q[0, 0, :2].all()  # the two deep resonances, as in solve()
    assert "quasi-bound level(s) not converged" in err and "above the escape barrier" in err
