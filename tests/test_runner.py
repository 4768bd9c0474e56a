"""The runner: demo cases, numbers against exact solutions, jobs, resume, interruption."""

from __future__ import annotations

import math
import os
import queue
import shutil
import signal
import subprocess
import sys
import threading
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
import yaml
from scipy import constants as sc

import anharmony as ah
from anharmony.cases import CaseError, case_from_dict, load_case, load_cases
from anharmony.runner import plan_case, run_batch, run_case
from anharmony.store import CORE_NAMES, TEMP_SUFFIX, read_dataset

ROOT = Path(__file__).resolve().parents[1]
DEMOS = sorted((ROOT / "cases").glob("*.yaml"))
RTOL_EXACT = 1e-12  # polynomial wells use exact banded matrices: eigenvalues to rounding
RTOL_SAME = 1e-10  # one Hamiltonian assembled two ways (A + sB vs rebuilt): rounding of sums
ATOL_MORSE = 1e-5  # cm^-1; the demo's own error estimate is below 1e-7 cm^-1 for n <= 3

SMALL = """\
schema: 1
title: small {tag}
units: oscillator
space: {{dimension: 3, l: [0, 1]}}
well:
  - harmonic: {{frequency: 1.0}}
  - power: {{exponent: 4, strength: {g}}}
basis: {{size: 16}}
levels: {{count: 3}}
scan:
  parameter: well[1].strength
  values: {{from: 0.0, to: {g}, steps: 4}}
output: small-{tag}.nc
"""

SLOW = """\
schema: 1
title: slow {tag}
units: trap
particle: {{mass: 6.0151}}
space: {{dimension: 1, l: [0, 1]}}
well:
  - gaussian: {{depth: 300.0, waist: {w}}}
basis: {{size: 60}}
levels: {{count: 4}}
scan:
  parameter: well[0].waist
  values: {{from: {w}, to: {w2}, steps: 20}}
output: slow-{tag}.nc
"""


def _cases(folder: Path, template: str, n: int, **kw) -> list[Path]:
    paths = []
    for i in range(n):
        p = folder / f"c{i}.yaml"
        p.write_text(template.format(tag=i, **{k: v(i) for k, v in kw.items()}))
        paths.append(p)
    return paths


def _without_history(ds: xr.Dataset) -> xr.Dataset:
    return ds.drop_attrs(deep=False).assign_attrs(
        {k: v for k, v in ds.attrs.items() if k != "history"})


# --------------------------------------------------------------------------- demo cases
@pytest.fixture(scope="module")
def demo_results(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    report = run_batch(DEMOS, out_dir=out, jobs=1)
    assert report.failed == [] and report.exit_code == 0
    return {c.output.name: read_dataset(p) for c, p in report.written}


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_every_demo_case_runs_and_has_every_core_name(demo_results):
    expected = {c.output.name for c in load_cases(DEMOS)}
    assert set(demo_results) == expected
    for name, ds in demo_results.items():
        assert set(CORE_NAMES) <= set(ds.variables), name
        bound = ds.bound.values == 1
        if "escape_barrier" in ds:  # an open well (gravity): quasi-bound levels, none bound
            assert not bound.any(), name
            bound = ds.energy.values < ds.escape_barrier.values[:, None, None]
        assert bound.any() and np.isfinite(ds.energy.values[bound]).all(), name
        assert ds.attrs["case"], name


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_quartic_demo_at_zero_strength_is_the_3d_oscillator(demo_results):
    ds = demo_results["quartic-3d.nc"].isel(scan=0)
    assert float(ds.scan_value) == 0.0
    for c, l in enumerate(ds.l.values):
        # 3D isotropic oscillator: E = 2n + l + 3/2 in units of ħω (any QM textbook)
        exact = 2 * np.arange(ds.sizes["level"]) + l + 1.5
        np.testing.assert_allclose(ds.energy.values[c], exact, rtol=RTOL_EXACT)
        # the shift is zero: atol = RTOL_EXACT × levels of order 10
        np.testing.assert_allclose(ds["shift"].values[c], 0.0, atol=RTOL_EXACT * 10)


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_quartic_series_starts_with_first_order_perturbation(demo_results):
    ds = demo_results["quartic-3d.nc"]
    g = ds.scan_value.values
    # E_1 = g <n l|r^4|n l> for the 3D oscillator ground state: <r^4> = 15/4 b^4
    # (Gaussian moment, b = 1): the λ-series coefficient of order 1 in the s channel.
    # atol 1e-15 for the g = 0 point, where the coefficient is zero
    np.testing.assert_allclose(ds.series_coefficient.values[:, 0, 0, 1], 3.75 * g,
                               rtol=RTOL_EXACT, atol=1e-15)


def _morse_demo_constants() -> tuple[float, float]:
    """(ħω, D) of the Morse demo in cm⁻¹, from its case file and scipy.constants."""
    case = load_cases([ROOT / "cases" / "diatomic-morse.yaml"])[0]
    (term,) = case.model.well
    depth, width = term["morse"]["depth"], term["morse"]["width"]
    mu = case.model.particle.mass * sc.physical_constants["atomic mass constant"][0]
    wavenumber = sc.h * sc.c * 100.0
    # Morse, Phys. Rev. 34, 57 (1929): E_n = ħω(n+½) − (ħω)²(n+½)²/(4D), ħω = ħα√(2D/μ)
    hw = sc.hbar * (width / sc.angstrom) * math.sqrt(2 * depth * wavenumber / mu) / wavenumber
    return hw, depth


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_morse_demo_matches_the_exact_morse_levels(demo_results):
    ds = demo_results["diatomic-morse.nc"]
    hw, depth = _morse_demo_constants()
    n = np.arange(4) + 0.5
    exact = hw * n - hw**2 * n**2 / (4 * depth)
    full = ds.sel(scan=ds.sizes["scan"] - 1)
    assert float(full.scan_value) == 1.0
    np.testing.assert_allclose(full.energy.values[0, :4], exact, rtol=0, atol=ATOL_MORSE)
    # at λ = 0 the Hamiltonian is the reference oscillator itself (harmonic at the minimum)
    start = ds.sel(scan=0)
    # rtol 1e-9: ħω from the case's constants via scipy.constants vs the package's own
    # CODATA products, and V'' at the Newton-polished minimum (~1e-10)
    np.testing.assert_allclose(start.energy.values[0, :4], hw * n, rtol=1e-9)
    # the reference oscillator is the harmonic one at the minimum (the basis ħω, `frequency`,
    # may differ: its length is matched to the requested levels)
    assert abs(float(ds.reference_frequency[0]) - hw) < 1e-9 * hw


ATOL_ROUND_CM = 1e-10  # cm^-1: levels ~1e4 cm^-1 to eps (2e-12) and CODATA products (~1e-11)


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_morse_demo_error_estimates_cover_the_exact_errors(demo_results):
    ds = demo_results["diatomic-morse.nc"]
    hw, depth = _morse_demo_constants()  # Morse (1929), for all eight levels of the demo
    n = np.arange(ds.sizes["level"]) + 0.5
    exact = hw * n - hw**2 * n**2 / (4 * depth)
    full = ds.isel(scan=-1)
    err = full.error_estimate.values[0]
    assert (np.abs(full.energy.values[0] - exact) <= err + ATOL_ROUND_CM).all()
    # the flags follow the demo's tolerance, 1e-4 cm^-1
    np.testing.assert_array_equal(full.converged.values[0], (err < 1e-4).astype(np.int8))
    ext, unc = full.extrapolated_energy.values[0], full.extrapolation_uncertainty.values[0]
    ok = np.isfinite(ext)
    assert ok.sum() >= 6
    assert (np.abs(ext[ok] - exact[ok]) <= unc[ok] + ATOL_ROUND_CM).all()


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_quartic_demo_holds_a_size_scan_for_the_convergence_figure(demo_results):
    ds = demo_results["quartic-3d.nc"]
    assert list(ds.basis_size.values) == [10, 14, 20, 28, 40]
    assert ds.convergence_energy.dims == ("scan", "channel", "level", "basis_size")
    zero = ds.isel(scan=0)
    for c, l in enumerate(zero.l.values):
        # at zero strength the b = 1 basis holds the 3D oscillator's eigenstates: every size
        # gives E = 2n + l + 3/2 (any QM textbook)
        exact = 2 * np.arange(ds.sizes["level"]) + l + 1.5
        np.testing.assert_allclose(zero.convergence_energy.values[c],
                                   np.repeat(exact[:, None], 5, axis=1), rtol=RTOL_EXACT)


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_neutron_demo_grows_within_its_limit_and_names_what_is_not_converged(demo_results):
    from anharmony.hamiltonian import level_label

    for name in ("neutron-ws-a16.nc", "neutron-ws-a40.nc", "neutron-ws-a90.nc"):
        ds = demo_results[name]
        assert "grown" in ds.attrs["convergence"]
        assert (ds.convergence_size.values <= 40).all()  # max_size of the demo
        text = ds.attrs.get("convergence_warnings", "")
        for c in range(ds.sizes["channel"]):
            for n in range(ds.sizes["level"]):
                if not int(ds.converged.values[0, c, n]):
                    label = level_label(3, int(ds.l.values[c]), float(ds.j.values[c]), n)
                    assert label in text, (name, label)


@pytest.mark.slow  # shares the demo run (~9 s alone)
def test_linear_scan_equals_a_solve_at_every_point(demo_results):
    ds = demo_results["proton-coulomb.nc"]
    case = load_cases([ROOT / "cases" / "proton-coulomb.yaml"])[0]
    assert all(job.kind == "linear" for job in plan_case(case))
    for k, z in enumerate(ds.scan_value.values):
        well = case.well_at(float(z))
        for c, (l, j) in enumerate(zip(ds.l.values, ds.j.values, strict=True)):
            with warnings.catch_warnings():  # the case's own basis; its flags are the runner's
                warnings.simplefilter("ignore", ah.ConvergenceWarning)
                spec = ah.solve(well, 3, int(l), float(j), size=case.model.basis.size,
                                units="nuclear", mass=case.mass,
                                levels=case.model.levels.count,
                                reference={"frequency": case.model.reference.frequency})
            np.testing.assert_allclose(ds.energy.values[k, c], spec.energies, rtol=RTOL_SAME)
            np.testing.assert_array_equal(ds.bound.values[k, c], spec.bound.astype(np.int8))


def test_banded_linear_scan_equals_a_solve_at_every_point(tmp_path):
    text = SMALL.format(tag=0, g=0.4) + "reference: {frequency: 1.0}\n"
    case = case_from_dict(yaml.safe_load(text), folder=tmp_path)
    jobs = plan_case(case)
    assert [j.kind for j in jobs] == ["linear", "linear"]
    ds = run_case(case)
    for k, g in enumerate(ds.scan_value.values):
        for c, l in enumerate(ds.l.values):
            with warnings.catch_warnings():  # the case's small basis, compared as it is
                warnings.simplefilter("ignore", ah.ConvergenceWarning)
                spec = ah.solve(case.well_at(float(g)), 3, int(l), size=16, levels=3,
                                reference={"frequency": 1.0})
            np.testing.assert_allclose(ds.energy.values[k, c], spec.energies, rtol=RTOL_SAME)


def test_error_estimate_is_the_estimate_of_solve(tmp_path):
    # The default error_estimate of a result file is solve()'s (nested_error_estimate), so a
    # level carries the same error bar in a file as from solve() (common practice, no source).
    # It was |E(N) - E(N - N/4)| before; the nested estimate extrapolates the changes of the
    # nested bases to E(N) - E(inf), checked here against a basis of 80 states taken as exact
    # (Rayleigh-Ritz: a larger basis never lies higher; Hylleraas-Undheim-MacDonald 1930).
    p = tmp_path / "c0.yaml"
    p.write_text(SMALL.format(tag=0, g=0.3))
    case = load_case(p)
    ds = run_case(case)
    n = 16
    well = case.well_at(0.3)
    b = float(ds.length.values[-1])  # one basis length per scan point, shared by the channels
    with warnings.catch_warnings():  # bases of 16 and 80 states: compared, not judged, here
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        big = ah.solve(well, 3, 1, size=n, length=b, levels=3)
        exact = ah.solve(well, 3, 1, size=80, length=b, levels=3).energies
    # the same rule on matrices equal up to rounding: rtol 1e-6 (differences of nearly equal
    # levels keep ~6 digits), atol 1e-13 for levels converged to rounding
    np.testing.assert_allclose(ds.error_estimate.values[-1, 1], big.error_estimate, rtol=1e-6,
                               atol=1e-13)
    assert (ds.error_estimate.values[-1, 1] >= big.energies - exact).all()
    assert (big.energies - exact >= -1e-12).all()  # variational; 1e-12: rounding of levels ~10
    assert "nested_error_estimate" in ds.error_estimate.attrs["comment"]
    np.testing.assert_allclose(ds.energy.values[-1, 1], big.energies, rtol=RTOL_SAME)
    assert (ds.converged.values == (ds.error_estimate.values < 1e-6)).all()  # default tolerance


def test_run_case_writes_nothing(tmp_path):
    p = tmp_path / "c0.yaml"
    p.write_text(SMALL.format(tag=0, g=0.1))
    run_case(p)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["c0.yaml"]


def test_nonlinear_scan_rebuilds_per_point(tmp_path):
    text = SMALL.format(tag=0, g=0.1).replace("parameter: well[1].strength",
                                              "parameter: well[0].frequency")
    text = text.replace("{from: 0.0, to: 0.1, steps: 4}", "[1.0, 2.0]")
    case = case_from_dict(yaml.safe_load(text), folder=tmp_path)
    assert all(job.kind == "points" for job in plan_case(case))
    ds = run_case(case)
    # the harmonic part sets the reference: ħω follows the scanned frequency
    # rtol 1e-12: ħω from V'' at the minimum, found to rounding
    np.testing.assert_allclose(ds.reference_frequency.values, [1.0, 2.0], rtol=1e-12)


# --------------------------------------------------------------------------- batches
def test_jobs_1_and_jobs_2_give_identical_files(tmp_path):
    paths = _cases(tmp_path, SMALL, 3, g=lambda i: 0.1 * (i + 1))
    one, two = tmp_path / "one", tmp_path / "two"
    r1 = run_batch(paths, out_dir=one, jobs=1)
    r2 = run_batch(paths, out_dir=two, jobs=2)
    assert r1.exit_code == r2.exit_code == 0
    for p in sorted(one.glob("*.nc")):
        xr.testing.assert_identical(_without_history(read_dataset(p)),
                                    _without_history(read_dataset(two / p.name)))


def test_resume_skips_same_text_and_refuses_changed_text(tmp_path):
    paths = _cases(tmp_path, SMALL, 2, g=lambda i: 0.1 * (i + 1))
    assert run_batch(paths).exit_code == 0
    with pytest.raises(CaseError, match="exists; use --resume"):
        run_batch(paths)
    report = run_batch(paths, resume=True)
    assert len(report.skipped) == 2 and report.written == []
    paths[1].write_text(paths[1].read_text().replace("title: small 1", "title: changed"))
    with pytest.raises(CaseError, match="another case text"):
        run_batch(paths, resume=True)
    report = run_batch(paths, overwrite=True)
    assert len(report.written) == 2
    assert read_dataset(tmp_path / "small-1.nc").attrs["title"] == "changed"


def test_a_failing_case_does_not_stop_the_others(tmp_path):
    good, bad = _cases(tmp_path, SMALL, 2, g=lambda i: 0.1)
    # a pure cubic has no local minimum: the reference oscillator cannot be found
    bad.write_text("schema: 1\nspace: {dimension: 1}\nwell:\n  - power: {exponent: 3, "
                   "strength: 1.0}\nbasis: {size: 8}\nlevels: {count: 2}\noutput: bad.nc\n")
    report = run_batch([good, bad], jobs=1)
    assert report.exit_code == 1
    assert [c.name for c, _ in report.failed] == [str(bad)]
    assert (tmp_path / "small-0.nc").exists() and not (tmp_path / "bad.nc").exists()


def test_distributed_executor_matches_serial(tmp_path):
    distributed = pytest.importorskip("distributed")
    paths = _cases(tmp_path, SMALL, 2, g=lambda i: 0.1 * (i + 1))
    serial = run_batch(paths, out_dir=tmp_path / "serial")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        dist = run_batch(paths, out_dir=tmp_path / "dist", scheduler=client)
    assert serial.exit_code == dist.exit_code == 0
    for p in sorted((tmp_path / "serial").glob("*.nc")):
        xr.testing.assert_identical(_without_history(read_dataset(p)),
                                    _without_history(read_dataset(tmp_path / "dist" / p.name)))


def _start(paths, cwd, *extra):
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    env.pop("CI", None)
    # a session of its own (a hang kills the whole group, workers too), and SIGINT as in a
    # terminal whoever started the tests: a background job inherits it ignored, honoured
    return subprocess.Popen([sys.executable, "-m", "anharmony.cli", "run", "--progress",
                             "lines", *extra, *map(str, paths)], cwd=cwd, env=env,
                            stderr=subprocess.PIPE, stdout=subprocess.PIPE, text=True,
                            start_new_session=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))


WAIT_S = 120  # s: a hang guard, not a speed check; the whole batch takes ~5 s alone


def _kill(proc) -> None:
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=WAIT_S)


def _stop_after_first_file(proc, signum) -> str:
    # stderr is read by a thread, so that a child that hangs without printing cannot block
    # the test: the queue read times out, the child is killed and the test fails.
    lines: queue.Queue[str | None] = queue.Queue()

    def pump():
        for line in proc.stderr:
            lines.put(line)
        lines.put(None)

    reader = threading.Thread(target=pump, daemon=True)
    reader.start()
    seen, sent = [], False
    deadline = time.monotonic() + WAIT_S
    try:
        while True:
            line = lines.get(timeout=max(0.0, deadline - time.monotonic()))
            if line is None:
                break
            seen.append(line)
            if line.startswith("wrote ") and not sent:
                proc.send_signal(signum)
                sent = True
                deadline = time.monotonic() + WAIT_S  # now wait for the clean stop
        proc.wait(timeout=max(0.0, deadline - time.monotonic()))
    except (queue.Empty, subprocess.TimeoutExpired):
        _kill(proc)
        pytest.fail(f"the batch hung (no output for {WAIT_S} s):\n" + "".join(seen))
    reader.join(timeout=WAIT_S)
    return "".join(seen)


@pytest.mark.slow  # two real batches of five cases each: 4–5 s per case alone
@pytest.mark.parametrize(("signum", "code", "jobs"), [(signal.SIGINT, 130, "1"),
                                                      (signal.SIGTERM, 143, "2")])
def test_interrupted_batch_leaves_whole_files_and_resume_finishes(tmp_path, signum, code, jobs):
    paths = _cases(tmp_path, SLOW, 5, w=lambda i: 0.8 + 0.05 * i, w2=lambda i: 1.2 + 0.05 * i)
    # the first case is quick, so that the signal arrives while a later one is running
    paths[0].write_text(paths[0].read_text().replace("steps: 20", "steps: 2"))
    proc = _start(paths, tmp_path, "--jobs", jobs)
    err = _stop_after_first_file(proc, signum)
    assert proc.returncode == code, err
    assert "Traceback" not in err and "stopped by" in err
    done = sorted(tmp_path.glob("*.nc"))
    assert 1 <= len(done) < 5, err
    for p in done:
        assert read_dataset(p).sizes["scan"] in (2, 20)
    assert list(tmp_path.glob("*" + TEMP_SUFFIX)) == [] and list(tmp_path.glob(".*")) == []
    proc = _start(paths, tmp_path, "--resume")
    try:
        _, err = proc.communicate(timeout=WAIT_S)
    except subprocess.TimeoutExpired:
        _kill(proc)
        pytest.fail(f"the resumed batch hung for {WAIT_S} s")
    assert proc.returncode == 0, err
    assert err.count("up to date:") == len(done)
    assert len(list(tmp_path.glob("*.nc"))) == 5


def test_demo_folder_is_left_clean():
    # the tests write into temporary folders only
    leftovers = [p for p in (ROOT / "cases").iterdir() if p.suffix != ".yaml"]
    assert leftovers == [] or all(p.name == "__pycache__" for p in leftovers)


def test_demo_cases_can_be_copied_and_run_elsewhere(tmp_path):
    src = ROOT / "cases" / "quartic-3d.yaml"
    shutil.copy(src, tmp_path / src.name)
    ds = run_case(tmp_path / src.name)
    assert ds.attrs["case"] == src.read_text()


@pytest.mark.parametrize(("parameter", "values"), [("particle.mass", [1.0, 4.0]),
                                                    ("reference.frequency", [0.5, 2.0]),
                                                    ("basis.length", [0.7, 1.4])])
def test_scans_of_settings_match_the_oscillator_formula(tmp_path, parameter, values):
    text = ("schema: 1\nspace: {dimension: 1}\nwell:\n  - harmonic: {stiffness: 1.0}\n"
            "basis: {size: 30}\nlevels: {count: 3}\n"
            f"scan: {{parameter: {parameter}, values: {values}}}\n")
    case = case_from_dict(yaml.safe_load(text), folder=tmp_path)
    ds = run_case(case)
    mass = np.array(values) if parameter == "particle.mass" else np.ones(2)
    # 1D oscillator of stiffness k: E_n = ħ sqrt(k/m) (n + 1/2), ħ = 1 in oscillator units
    exact = np.sqrt(1.0 / mass)[:, None] * (np.arange(3) + 0.5)
    # a basis length far from the well's own converges more slowly (N = 30): 1e-9 is ample
    np.testing.assert_allclose(ds.energy.values[:, 0, :], exact, rtol=1e-9)
    if parameter == "reference.frequency":  # rtol 1e-14: b = 1/√(ħω) and back, a few ulp
        np.testing.assert_allclose(ds.frequency.values, values, rtol=1e-14)
    if parameter == "basis.length":
        np.testing.assert_allclose(ds.length.values, values, rtol=1e-14)
