"""Running Cartesian and axial case files: blocks as the channels of the result (DESIGN §10).

References: the anisotropic oscillator's exact levels E = Σ ħω_i (n_i + ½) and frequencies
(common practice, no source); rotational invariance — a spherical well in the axial basis of
N_max shells spans the same space as the central (l, j) channels of 2n + l ≤ N_max, so its
Ω^π blocks hold the central levels (anharmony.solve, checked against published values
elsewhere); Kramers degeneracy of ±Ω.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony.cli import main

OSCILLATOR = """\
schema: 1
title: anisotropic oscillator
units: oscillator
space: {dimension: 3, geometry: cartesian, shells: 4}
well:
  - anisotropic_harmonic: {frequencies: [1.0, 1.3, 1.7]}
levels: {count: 3}
output: osc.nc
"""

NUCLEUS = """\
schema: 1
title: deformed nucleus
units: nuclear
space: {dimension: 3, geometry: axial, shells: 4}
well:
  - deformed_woods_saxon: {depth: 50.0, r0: 1.25, mass_number: 40, diffuseness: 0.65}
  - deformed_spin_orbit: {strength: 20.0, r0: 1.25, mass_number: 40, diffuseness: 0.65}
levels: {count: 2}
scan:
  parameter: well[0].beta2
  values: [0.0, 0.2]
  linked: ['well[1].beta2']
output: nucleus.nc
"""


def _run(tmp_path, text, name):
    path = tmp_path / name
    path.write_text(text)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        assert main(["run", str(path), "--progress", "off"]) == 0
    return ah.read_dataset(path.with_suffix(".nc"))


def test_cartesian_blocks_hold_the_exact_oscillator_levels(tmp_path, capsys):
    ds = _run(tmp_path, OSCILLATOR, "osc.yaml")
    w = np.array([1.0, 1.3, 1.7])
    # every state of N ≤ 4 quanta, by parity triple (−1)^{n_i}: the exact levels per block
    expected = {}
    for n in np.ndindex(5, 5, 5):
        if sum(n) <= 4:
            key = "(" + ",".join("+-"[q % 2] for q in n) + ")"
            expected.setdefault(key, []).append(float(np.dot(w, np.add(n, 0.5))))
    labels = [str(x) for x in ds.label.values]
    assert sorted(labels) == sorted(expected)
    for c, label in enumerate(labels):
        exact = sorted(expected[label])[:3]
        got = ds.energy.values[0, c, :len(exact)]
        np.testing.assert_allclose(got, exact, rtol=1e-12)  # polynomial terms: exact matrices
    np.testing.assert_allclose(ds.trap_frequency.values[0], w, rtol=1e-6)  # Hessian, numeric
    err = ds.error_estimate.values[0]
    finite = np.isfinite(err)  # inf: the level has no partner at shells - 2 (no error bar)
    assert np.all(err[finite] < 1e-12) and np.all(ds.converged.values[0][finite] == 1)
    assert np.all(ds.converged.values[0][~finite & np.isfinite(ds.energy.values[0])] == 0)
    capsys.readouterr()
    assert main(["show", str(tmp_path / "osc.nc")]) == 0
    out = capsys.readouterr().out
    assert "(+,+,+)" in out and "(0,0,0)" in out  # block and dominant quanta of the level


def test_axial_blocks_of_a_spherical_nucleus_hold_its_central_levels(tmp_path, capsys):
    ds = _run(tmp_path, NUCLEUS, "nucleus.yaml")
    b = float(ds.basis_lengths.values[0, 0])
    assert ds.basis_lengths.values[0, 1] == b  # one length: the undeformed well's
    well = ah.Well.from_terms([
        {"woods_saxon": {"depth": 50.0, "r0": 1.25, "mass_number": 40, "diffuseness": 0.65}},
        {"spin_orbit": {"strength": 20.0, "r0": 1.25, "mass_number": 40,
                        "diffuseness": 0.65}}], "nuclear")
    central = []
    for l in range(5):
        size = (4 - l) // 2 + 1
        for j in (l - 0.5, l + 0.5):
            if j > 0:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", ah.ConvergenceWarning)
                    s = ah.solve(well, 3, l, j, size=size, length=b, units="nuclear",
                                 levels=size)
                central += [(float(e), j) for e in s.energies]
    # at β₂ = 0 each Ω^π block's levels are central levels with j ≥ Ω, same parity
    for c, label in enumerate(str(x) for x in ds.label.values):
        omega = float(label[:-1].split("/")[0]) / 2
        for e in ds.energy.values[0, c]:
            if np.isfinite(e):
                assert min(abs(e - ec) for ec, j in central if j >= omega) < 1e-8
    assert set(ds.block_degeneracy.values) == {2}  # ±Ω
    # the deformation splits the spherical 1p3/2 into Ω = 1/2 and 3/2 (not degenerate)
    p32 = {str(x): ds.energy.values[1, c, 0] for c, x in enumerate(ds.label.values)}
    assert abs(p32["1/2-"] - p32["3/2-"]) > 0.1
    labels = ds.level_asymptotic_label.values[1]
    assert any(str(x).startswith("1/2-[1") for x in labels.ravel())
    capsys.readouterr()
    assert main(["plot", str(tmp_path / "nucleus.nc"), "--kind", "flow", "-o",
                 str(tmp_path / "f.png")]) == 0


@pytest.mark.parametrize("bad,field,words", [
    ("perturbation: {orders: 4}\n", "perturbation", "not run from case files"),
    ("convergence: {sizes: [10, 20]}\n", "convergence.sizes", "only convergence.tolerance"),
])
def test_what_the_geometries_do_not_run_is_refused_at_its_line(tmp_path, capsys, bad, field,
                                                               words):
    path = tmp_path / "bad.yaml"
    path.write_text(OSCILLATOR + bad)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert f"{path}:9:" in err and f"{field}: " in err and words in err


BEAM = """\
schema: 1
title: tilted beam
units: trap
particle: {mass: 40.0}
space: {dimension: 3, geometry: axial, shells: 8, truncation: energy}
well:
  - focused_beam: {depth: 200.0, waist: 1.0, wavelength: 1.064}
  - tilt: {force: 0.98304, axis: z}
levels: {count: 2}
output: beam.nc
"""


def test_a_tilted_trap_is_open_and_its_levels_are_quasi_bound_below_the_barrier(tmp_path,
                                                                                capsys):
    # Gravity along the beam makes V → −∞ downwards: no level is bound (DESIGN §2), and the
    # escape barrier is the on-axis maximum of −U₀/(1 + z²/z_R²) + F z below the minimum,
    # z_R = π w₀²/λ (Grimm, Weidemüller & Ovchinnikov 2000), found here by scipy alone
    from scipy.optimize import minimize_scalar

    ds = _run(tmp_path, BEAM, "beam.yaml")
    u0, w0, lam, force = 200.0, 1.0, 1.064, 0.98304
    z_r = np.pi * w0**2 / lam

    def v(z):
        return -u0 / (1 + (z / z_r) ** 2) + force * z

    z_min = minimize_scalar(v, bounds=(-5, 5), method="bounded").x
    top = -minimize_scalar(lambda z: -v(z), bounds=(-1e4, z_min), method="bounded",
                           options={"xatol": 1e-10}).fun
    assert float(ds.escape_barrier.values[0]) == pytest.approx(top, abs=1e-6)  # h·kHz
    assert int(ds.bound.values.sum()) == 0
    assert np.all(ds.energy.values[0][np.isfinite(ds.energy.values[0])] < top)
    capsys.readouterr()
    assert main(["show", str(tmp_path / "beam.nc")]) == 0
    assert "quasi-bound" in capsys.readouterr().out


def test_a_scan_of_the_basis_length_sets_the_lengths_of_every_point(tmp_path):
    text = OSCILLATOR.replace("levels: {count: 3}", "levels: {count: 3}\n"
                              "scan: {parameter: basis.length, values: [0.7, 1.0]}")
    ds = _run(tmp_path, text, "osc.yaml")
    np.testing.assert_array_equal(ds.basis_lengths.values, [[0.7] * 3, [1.0] * 3])
    # the levels are those of each length (a truncated basis away from the oscillator's own
    # lengths is not exact, so the two points differ; the ground level stays a variational
    # upper bound of the exact 0.5 (1.0 + 1.3 + 1.7) = 2.0)
    assert not np.allclose(ds.energy.values[0], ds.energy.values[1], equal_nan=True)
    assert np.all(np.nanmin(ds.energy.values, axis=(1, 2)) >= 2.0 - 1e-12)


def test_a_count_of_states_cuts_the_cartesian_basis_at_whole_shells(tmp_path, capsys):
    # basis.size in a Cartesian case: the smallest N_max with at least that many states; the
    # 3D shells hold C(N + 3, 3) states up to N (common practice, no source): 50 → N_max = 5
    # (56 states), and the exact oscillator levels stay exact
    from math import comb

    from anharmony.geometry import shells_for_count

    assert shells_for_count(50, "cartesian", np.ones(3)) == 5 and comb(5 + 3, 3) == 56
    text = OSCILLATOR.replace("space: {dimension: 3, geometry: cartesian, shells: 4}",
                              "space: {dimension: 3, geometry: cartesian}\nbasis: {size: 50}")
    ds = _run(tmp_path, text, "osc.yaml")
    assert int(ds.attrs["basis_size"]) == 5
    assert float(np.nanmin(ds.energy.values)) == pytest.approx(2.0, rel=1e-12)
    bad = tmp_path / "bad.yaml"
    bad.write_text(text.replace("geometry: cartesian}", "geometry: cartesian, shells: 4}"))
    assert main(["check", str(bad)]) == 2
    assert "give space.shells or basis.size" in capsys.readouterr().err


def test_asymptotic_labels_separate_numbers_of_two_digits():
    # Ω^π[N n_z Λ] (Nilsson, Mat. Fys. Medd. Dan. Vid. Selsk. 29, no. 16 (1955); common
    # practice) is written without separators while every quantum number has one digit;
    # N = 10, n_z = 1, Λ = 9 would read [1019], so two-digit numbers are separated.
    from anharmony.geometry.solve import _label

    assert _label("axial", (0.5, -1), (0, 1, 0)) == "1/2-[101]"  # N = 1, n_z = 0, Λ = 1
    assert _label("axial", (9.5, 1), (0, 9, 1)) == "19/2+[10,1,9]"
    assert _label("cartesian", None, (1, 0, 2)) == "(1,0,2)"
