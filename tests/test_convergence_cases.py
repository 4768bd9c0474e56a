"""Convergence studies run from case files: growth to a tolerance, flags, warnings, files.

The convergence subpackage itself is tested in test_convergence*.py; here the `convergence:`
block of a case goes through the runner, the result file and the command line, and the numbers
that come out are checked against outside references: a shooting solver written with scipy
(tests/refsolvers.py), the exact levels of the Morse oscillator (P. M. Morse, Phys. Rev. 34,
57 (1929)) and of the 3D harmonic oscillator (any QM textbook).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
import yaml

import anharmony as ah
from anharmony.cases import case_from_dict, load_case
from anharmony.cli import main
from anharmony.runner import plan_case, run_batch, run_case
from anharmony.store import read_dataset, write_dataset
from refsolvers import shooting_level

# A neutron in an A = 40 Woods–Saxon well with spin–orbit, as in the neutron demo (parameters
# typical of the trade: common practice, no source); s1/2, p1/2, p3/2, two levels each.
WS_CASE = """\
schema: 1
title: Neutron levels, A = 40, growing basis
units: nuclear
space: {{dimension: 3, l: [0, 1], spin: 1/2, j: [1/2, 3/2]}}
well:
  - woods_saxon: {{depth: 51.0, r0: 1.27, mass_number: 40, diffuseness: 0.67}}
  - spin_orbit: {{strength: 22.0, r0: 1.27, mass_number: 40, diffuseness: 0.67, length: 1.27}}
reference: {{frequency: 12.0}}
basis: {{size: 30}}
levels: {{count: 2}}
convergence: {convergence}
output: {output}
"""
WS_TERMS = yaml.safe_load(WS_CASE.format(convergence="{}", output="x.nc"))["well"]
WS_CHANNELS = [(0, 0.5), (1, 0.5), (1, 1.5)]  # (l, j) of the file's channels, in order
ATOL_SHOOT = 1e-10  # MeV: shooting at rtol 1e-12 vs 1e-13 differs by 2e-13 MeV; 500x margin
TOL_GROW = 1e-5  # MeV: the tolerance of the growing runs below

# Morse well in oscillator units (ħ = m = 1): ω = α sqrt(2D) = 2, E_n = ω(n+½) − ω²(n+½)²/4D
MORSE_D, MORSE_A = 8.0, 0.5
ATOL_XCHECK = 1e-9  # the cross-check mesh grows until levels settle; measured <= 2e-11 here
RTOL_SAME_H = 1e-10  # one Hamiltonian diagonalised along two code paths: rounding only


def morse_exact(n: np.ndarray) -> np.ndarray:
    """Morse levels (Morse 1929) for MORSE_D, MORSE_A, ħ = m = 1."""
    w = MORSE_A * np.sqrt(2.0 * MORSE_D)
    x = n + 0.5
    return w * x - (w * x) ** 2 / (4.0 * MORSE_D)


def shooting(l: int, j: float, level: int) -> float:
    """Woods–Saxon level number ``level`` of channel (l, j) from the independent shooting
    solver (it finds the level by counting nodes; nothing is taken from anharmony)."""
    well = ah.Well.from_terms(WS_TERMS, units="nuclear")
    ls = 0.5 * (j * (j + 1) - l * (l + 1) - 0.75)

    def v(r):
        return well.value(r) + ls * well.spin_orbit_value(r)

    c = ah.get_units("nuclear").hbar2_over_2m()
    return shooting_level(v, l, c, level, r_max=30.0)


def _write(folder: Path, convergence: str, name: str = "ws") -> Path:
    path = folder / f"{name}.yaml"
    path.write_text(WS_CASE.format(convergence=convergence, output=f"{name}.nc"))
    return path


# --------------------------------------------------------------------------- growth
@pytest.mark.slow  # grows three channels and shoots six references: ~3 s alone
def test_tolerance_driven_case_stops_growing_once_converged_and_records_the_size(tmp_path,
                                                                                capsys):
    path = _write(tmp_path, f"{{tolerance: {TOL_GROW:.1e}, max_size: 80}}")
    assert main(["run", "--progress", "off", str(path)]) == 0
    capsys.readouterr()
    ds = read_dataset(tmp_path / "ws.nc")
    sizes = ds.basis_size.values
    # the axis ends at the largest size any channel grew to (√2 ladder from 10 towards 80)
    assert sizes[-1] == ds.convergence_size.values.max() < 80
    for c, (l, j) in enumerate(WS_CHANNELS):
        size = int(ds.convergence_size.values[0, c])
        assert size < 80, "stopped before the size limit"
        assert str(ds.convergence_stopped.values[0, c]).startswith(f"converged at size {size}")
        conv = ds.convergence_energy.values[0, c]  # (level, basis_size, basis_length)
        assert np.isfinite(conv[:, sizes == size]).any()
        assert np.isnan(conv[:, sizes > size]).all(), "no size beyond the stop was computed"
        for n in range(2):
            e = float(ds.energy.values[0, c, n])
            err = float(ds.error_estimate.values[0, c, n])
            ref = shooting(l, j, n)
            assert int(ds.bound.values[0, c, n]) == 1 and int(ds.converged.values[0, c, n]) == 1
            assert err < TOL_GROW
            # what a converged flag promises: the level is within the tolerance
            assert abs(e - ref) < TOL_GROW
            assert e >= ref - ATOL_SHOOT  # Ritz values are upper bounds (Rayleigh–Ritz)
            # the stored energy is the study's Ritz value at the stopping size
            b = float(ds.energy_basis_length.values[0, c, n])
            # the study converged this size to the case's tolerance TOL_GROW, looser than
            # solve()'s default (1e-8 of the spacing): its warning is expected, not checked here
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ah.ConvergenceWarning)
                spec = ah.solve(ah.Well.from_terms(WS_TERMS, units="nuclear"), 3, l, j=j,
                                size=size, length=b, units="nuclear", levels=n + 1)
            assert e == pytest.approx(spec.energies[n], rel=RTOL_SAME_H)


def test_a_tighter_tolerance_grows_the_basis_further(tmp_path):
    loose = run_case(_write(tmp_path, "{tolerance: 1.0e-4, max_size: 80}", "loose"))
    tight = run_case(_write(tmp_path, "{tolerance: 1.0e-7, max_size: 80}", "tight"))
    s_loose = loose.convergence_size.values[0, 0]
    s_tight = tight.convergence_size.values[0, 0]
    assert s_tight > s_loose
    ref = shooting(0, 0.5, 1)
    # the 2s1/2 level: each run is within its own tolerance of the shooting value
    assert abs(loose.energy.values[0, 0, 1] - ref) < 1e-4 + ATOL_SHOOT
    assert abs(tight.energy.values[0, 0, 1] - ref) < 1e-7 + ATOL_SHOOT


def test_level_that_cannot_converge_is_flagged_and_named_by_the_cli(tmp_path, capsys):
    path = _write(tmp_path, "{tolerance: 1.0e-9, max_size: 14}")
    code = main(["run", "--progress", "off", str(path)])
    err = capsys.readouterr().err
    assert code == 0  # a warning, not a failure
    ds = read_dataset(tmp_path / "ws.nc")
    assert int(ds.convergence_size.values[0, 0]) == 14
    assert str(ds.convergence_stopped.values[0, 0]) == "size limit 14 reached"
    e = float(ds.energy.values[0, 0, 0])
    ref = shooting(0, 0.5, 0)
    assert abs(e - ref) > 1e-9  # the 1s1/2 level really is off by more than the tolerance
    assert int(ds.converged.values[0, 0, 0]) == 0 and int(ds.bound.values[0, 0, 0]) == 1
    warning = [ln for ln in err.splitlines()
               if ln.startswith(f"warning: {path}: level 1s1/2 (index 0) of channel s1/2")]
    assert len(warning) == 1, err
    assert "convergence.max_size (now 14)" in warning[0]
    assert "convergence warning(s)" in err.splitlines()[-1]
    assert "1s1/2" in ds.attrs["convergence_warnings"]
    code = main(["show", str(tmp_path / "ws.nc")])
    out = capsys.readouterr().out
    row = next(ln for ln in out.splitlines() if ln.split()[:1] == ["1s1/2"])
    assert code == 0 and "NO" in row.split()
    assert "basis grown per channel to: s1/2 14" in out


# --------------------------------------------------------------------------- files
BLOCKS = {
    "grown-with-cross-check": "{tolerance: 1.0e-5, max_size: 28, cross_check: true}",
    "sizes-at-the-basis-length": "{sizes: [10, 14, 20, 30]}",
    "explicit-lengths": "{sizes: [10, 20], lengths: [1.7, 1.9, 2.1], tolerance: 1.0e-3, "
                        "grow: false}",
}


@pytest.mark.parametrize("block", list(BLOCKS.values()), ids=list(BLOCKS))
def test_study_variables_round_trip_with_units_and_plain_strings(tmp_path, block):
    case = load_case(_write(tmp_path, block))
    ds = run_case(case)
    for name in ("convergence_energy", "convergence_size", "extrapolated_energy",
                 "extrapolation_uncertainty", "model_energy", "error_method", "error_reason",
                 "variance_sigma", "weinstein_lower", "kato_temple_lower",
                 "cross_check_difference", "convergence_stopped", "optimal_length"):
        assert name in ds, name
        assert ds[name].dims[:2] == ("scan", "channel"), name
    for name, var in ds.variables.items():
        assert var.dtype != object, name  # PITFALLS §1: never object dtype
        assert isinstance(var.attrs.get("units"), str), name  # CF §3.1
        assert isinstance(var.attrs.get("long_name"), str) and var.attrs["long_name"], name
    for name in ("error_method", "error_reason", "convergence_stopped"):
        assert ds[name].dtype.kind == "U", name
    assert ("basis_length" in ds.convergence_energy.dims) == case.model.convergence.scans_lengths
    back = read_dataset(write_dataset(ds, tmp_path / "r.nc"))
    xr.testing.assert_identical(ds, back)


def test_cross_check_difference_is_below_a_bound_against_the_morse_levels(tmp_path):
    data = {"schema": 1, "units": "oscillator", "space": {"dimension": 1},
            "well": [{"morse": {"depth": MORSE_D, "width": MORSE_A}}],
            "reference": {"frequency": "auto"}, "basis": {"size": 40}, "levels": {"count": 4},
            "convergence": {"cross_check": True}}
    ds = run_case(case_from_dict(data, folder=tmp_path))
    exact = morse_exact(np.arange(4))
    xc = ds.cross_check_energy.values[0, 0]
    np.testing.assert_allclose(xc, exact, rtol=0, atol=ATOL_XCHECK)
    assert (ds.cross_check_uncertainty.values[0, 0] < ATOL_XCHECK).all()
    diff = ds.cross_check_difference.values[0, 0]
    # exact: the file stores this very difference
    np.testing.assert_allclose(diff, ds.energy.values[0, 0] - xc, rtol=0, atol=0)
    # the difference is the basis error, so it lies within the level's error estimate
    assert (np.abs(diff) <= ds.error_estimate.values[0, 0] + ATOL_XCHECK).all()
    # each level is within its own error estimate of the exact one, and the estimates are
    # informative (measured 1e-12 … 2.7e-4 for n = 0 … 3, levels of order 1)
    err = ds.error_estimate.values[0, 0]
    assert (np.abs(ds.energy.values[0, 0] - exact) <= err + ATOL_XCHECK).all()
    assert (err < 1e-3).all()


def test_cross_check_flag_of_run_against_the_3d_oscillator(tmp_path, capsys):
    # H = p²/2 + r²/2 in a basis of another frequency: E = 2n + l + 3/2 (textbook)
    text = ("schema: 1\nunits: oscillator\nspace: {dimension: 3, l: [0, 1]}\n"
            "well:\n  - harmonic: {frequency: 1.0}\nreference: {frequency: 1.4}\n"
            "basis: {size: 30}\nlevels: {count: 3}\noutput: ho.nc\n")
    path = tmp_path / "ho.yaml"
    path.write_text(text)
    assert main(["run", "--progress", "off", str(path)]) == 0
    assert "cross_check_difference" not in read_dataset(tmp_path / "ho.nc")
    capsys.readouterr()
    code = main(["run", "--progress", "off", "--resume", "--cross-check", str(path)])
    assert code == 2 and "made without the cross-check" in capsys.readouterr().err
    assert main(["run", "--progress", "off", "--overwrite", "--cross-check", str(path)]) == 0
    ds = read_dataset(tmp_path / "ho.nc")
    assert ds.attrs["cross_check"] == 1
    exact = np.array([[2 * n + l + 1.5 for n in range(3)] for l in (0, 1)])
    np.testing.assert_allclose(ds.cross_check_energy.values[0], exact, rtol=0, atol=ATOL_XCHECK)
    assert (np.abs(ds.cross_check_difference.values[0]) < ATOL_XCHECK).all()
    capsys.readouterr()
    assert main(["run", "--progress", "off", "--resume", "--cross-check", str(path)]) == 0
    assert "up to date" in capsys.readouterr().err
    assert main(["show", str(tmp_path / "ho.nc")]) == 0
    out = capsys.readouterr().out
    assert "x-check" in out and "cross_check_difference" in out


# --------------------------------------------------------------------------- coupling scans
def test_study_of_a_coupling_scan_follows_lambda(tmp_path):
    # H(λ) = H_ref + λ(H − H_ref): λ = 0 is the reference oscillator, λ = 1 the Morse well
    data = {"schema": 1, "units": "oscillator", "space": {"dimension": 1},
            "well": [{"morse": {"depth": MORSE_D, "width": MORSE_A}}],
            "reference": {"frequency": "auto"}, "basis": {"size": 40}, "levels": {"count": 4},
            "scan": {"parameter": "coupling", "values": [0.0, 0.5, 1.0]},
            "convergence": {"sizes": [16, 24, 32, 40], "tolerance": 1.0e-4, "grow": False}}
    ds = run_case(case_from_dict(data, folder=tmp_path))
    w = float(ds.reference_frequency.values[0])
    v_min = float(ds.reference_v_min.values[0])
    np.testing.assert_allclose(ds.energy.values[0, 0], v_min + w * (np.arange(4) + 0.5),
                               rtol=RTOL_SAME_H)
    exact = morse_exact(np.arange(4))
    err = ds.error_estimate.values[2, 0]
    assert (np.abs(ds.energy.values[2, 0] - exact) <= err + 1e-12).all()  # + rounding, O(1)
    assert (err < 1e-3).all()  # informative: measured ≤ 7.5e-5
    ext, unc = ds.extrapolated_energy.values[2, 0], ds.extrapolation_uncertainty.values[2, 0]
    ok = np.isfinite(ext)
    assert ok.any()
    assert (np.abs(ext[ok] - exact[ok]) <= unc[ok] + 1e-12).all()  # + rounding of O(1) levels
    assert (unc[ok] < 1e-3).all()  # informative: measured ≤ 3.8e-5
    quick = dict(data)
    del quick["convergence"]  # the same λ-scan on the linear path (A + λB built once)
    plain = run_case(case_from_dict(quick, folder=tmp_path))
    np.testing.assert_allclose(ds.energy.values, plain.energy.values, rtol=RTOL_SAME_H)


# --------------------------------------------------------------------------- execution
def test_a_case_without_a_study_keeps_the_linear_path_and_a_study_splits_per_task(tmp_path):
    plain = load_case(_write(tmp_path, "{}", "plain"))
    assert [j.kind for j in plan_case(plain)] == ["points"]  # no scan: one point, all channels
    scanned = WS_CASE.format(convergence="{}", output="s.nc") + \
        "scan: {parameter: 'well[0].depth', values: [50.0, 51.0]}\n"
    (tmp_path / "s.yaml").write_text(scanned)
    assert [j.kind for j in plan_case(load_case(tmp_path / "s.yaml"))] == ["linear"] * 3
    (tmp_path / "t.yaml").write_text(scanned.replace("convergence: {}",
                                                     "convergence: {sizes: [10, 20]}")
                                     .replace("output: s.nc", "output: t.nc"))
    jobs = plan_case(load_case(tmp_path / "t.yaml"))
    assert sorted((j.points, j.channels) for j in jobs) == [
        ((k,), (c,)) for k in range(2) for c in range(3)]


def test_jobs_1_and_jobs_2_give_identical_study_files(tmp_path):
    path = _write(tmp_path, "{tolerance: 1.0e-5, max_size: 28, cross_check: true}")
    one, two = tmp_path / "one", tmp_path / "two"
    assert run_batch([path], out_dir=one, jobs=1).exit_code == 0
    assert run_batch([path], out_dir=two, jobs=2).exit_code == 0
    a, b = read_dataset(one / "ws.nc"), read_dataset(two / "ws.nc")
    del a.attrs["history"], b.attrs["history"]
    xr.testing.assert_identical(a, b)
