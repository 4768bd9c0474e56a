"""Results never lost, doubled or orphaned: one writer per file, clean stops, stale leftovers.

The reference of every test here is the documented contract: the file safety of DESIGN §6 (an
existing result is kept unless asked to overwrite; a stopped run leaves every finished file
whole and nothing half-written) and the exit codes of DESIGN §7 (2 bad input, 1 a case not
produced, 128 + the signal after a stop). Every test that starts a process gives it a hard
timeout and kills its whole process group on expiry, so a hang fails instead of stalling.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import netCDF4
import pytest
import xarray as xr

from anharmony._atomic import (
    OutputHeldError,
    claim,
    lock_path,
    remove_stale_temporaries,
)
from anharmony.cases import CaseError
from anharmony.cli import main
from anharmony.errors import InputError
from anharmony.runner import run_batch
from anharmony.store import TEMP_SUFFIX, read_dataset, write_dataset

HARD_S = 60  # s: a hang guard for one child process, not a speed check (each takes ~1-3 s)
SRC = str(Path(__file__).resolve().parents[1] / "src")

TINY = """\
schema: 1
title: tiny {tag}
units: oscillator
space: {{dimension: 1}}
well:
  - harmonic: {{frequency: 1.0}}
  - power: {{exponent: 4, strength: 0.{tag}1}}
basis: {{size: 12}}
levels: {{count: 2}}
scan:
  parameter: well[1].strength
  values: {{from: 0.0, to: 0.1, steps: 3}}
output: tiny-{tag}.nc
"""


def _cases(folder: Path, n: int) -> list[Path]:
    paths = []
    for i in range(n):
        p = folder / f"t{i}.yaml"
        p.write_text(TINY.format(tag=i))
        paths.append(p)
    return paths


def _dotfiles(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


def _env() -> dict[str, str]:
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    env["PYTHONPATH"] = SRC + os.pathsep + env.get("PYTHONPATH", "")
    env.pop("CI", None)
    return env


def _default_sigint() -> None:  # in the child: SIGINT as in a terminal, whoever started us
    signal.signal(signal.SIGINT, signal.SIG_DFL)


def _popen(args: list[str], cwd: Path, **kw) -> subprocess.Popen:
    # a session of its own: on a hang the whole group (workers too) is killed
    return subprocess.Popen(args, cwd=cwd, env=_env(), text=True, start_new_session=True,
                            preexec_fn=kw.pop("preexec_fn", _default_sigint), **kw)


def _finish(proc: subprocess.Popen, timeout: float = HARD_S, **kw) -> tuple[str, str]:
    try:
        out, err = proc.communicate(timeout=timeout, **kw)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(timeout=HARD_S)
        pytest.fail(f"the process hung for {timeout} s")
    return out or "", err or ""


def _wait_for_line(proc: subprocess.Popen, stream, start: str) -> str:
    """Read ``stream`` until a line starts with ``start`` (hard deadline: the group is killed)."""
    import selectors

    sel = selectors.DefaultSelector()
    sel.register(stream, selectors.EVENT_READ)
    deadline = time.monotonic() + HARD_S
    seen = []
    while time.monotonic() < deadline:
        if not sel.select(timeout=max(0.0, deadline - time.monotonic())):
            break
        line = stream.readline()
        if not line:
            break
        seen.append(line)
        if line.startswith(start):
            return "".join(seen)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=HARD_S)
    pytest.fail(f"no line starting {start!r} within {HARD_S} s:\n" + "".join(seen))


HOLD = ("import sys; sys.path.insert(0, sys.argv[2]); from anharmony._atomic import claim; "
        "c = claim(sys.argv[1]); print('held', flush=True); sys.stdin.read()")


def _holder(target: Path) -> subprocess.Popen:
    """A process that claims ``target`` and keeps the claim until its stdin closes."""
    proc = _popen([sys.executable, "-c", HOLD, str(target), SRC], target.parent,
                  stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    _wait_for_line(proc, proc.stdout, "held")
    return proc


# --------------------------------------------------------------------------- one writer
def test_a_second_writer_of_the_same_output_fails_naming_the_holder(tmp_path, capsys):
    first, second = _cases(tmp_path, 2)
    holder = _holder(tmp_path / "tiny-0.nc")
    try:
        code = main(["run", "--progress", "off", str(first), str(second)])
        err = capsys.readouterr().err
        # the held case fails (exit 1: it was not produced), the other one is written
        assert code == 1, err
        assert f"pid {holder.pid} on host {socket.gethostname()}" in err
        assert "being written by another process" in err and ".tiny-0.nc.lock" in err
        assert "1 written, 0 up to date, 1 failed" in err
        assert not (tmp_path / "tiny-0.nc").exists() and (tmp_path / "tiny-1.nc").exists()
        # --overwrite does not let a second writer in either
        report = run_batch([first], overwrite=True)
        assert report.exit_code == 1 and "being written" in report.failed[0][1]
    finally:
        _finish(holder, input="")  # closes its stdin: it releases and exits
    assert _dotfiles(tmp_path) == []  # the holder's lock file went with it


def test_two_concurrent_runs_write_one_file_once(tmp_path):
    # the reproducer of the issue: two `run` processes on the same case, no --overwrite;
    # before, both reported success and the second silently replaced the first
    paths = _cases(tmp_path, 4)
    cmd = [sys.executable, "-m", "anharmony.cli", "run", "--progress", "lines",
           *map(str, paths)]
    procs = [_popen(cmd, tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
             for _ in range(2)]
    results = [(p, *_finish(p)) for p in procs]
    wrote = [line.split()[1] for _, _, err in results for line in err.splitlines()
             if line.startswith("wrote ")]
    assert sorted(wrote) == sorted({*wrote}) and len(wrote) == 4, results  # each once
    for proc, _, err in results:
        assert "Traceback" not in err
        # the other one either refused up front (exit 2: the files exist), or failed the
        # cases the first one held or had written meanwhile (exit 1)
        assert proc.returncode in (0, 1, 2), err
    for p in tmp_path.glob("tiny-*.nc"):
        read_dataset(p)
    assert _dotfiles(tmp_path) == []


def test_exclusive_write_never_replaces_a_file_that_appeared_meanwhile(tmp_path, monkeypatch):
    ds = xr.Dataset({"x": ("a", [1.0, 2.0])}, attrs={"anharmony_schema": 1})
    target = tmp_path / "r.nc"
    real = xr.Dataset.to_netcdf

    def racing(self, tmp, *args, **kwargs):
        target.write_bytes(b"the other writer's file")  # a writer that takes no claim
        return real(self, tmp, *args, **kwargs)

    monkeypatch.setattr(xr.Dataset, "to_netcdf", racing)
    with pytest.raises(FileExistsError, match="not replaced"):
        write_dataset(ds, target)
    assert target.read_bytes() == b"the other writer's file"
    assert _dotfiles(tmp_path) == []


def test_a_lock_left_by_a_killed_run_is_taken_over(tmp_path):
    (case,) = _cases(tmp_path, 1)
    target = tmp_path / "tiny-0.nc"
    holder = _holder(target)
    os.kill(holder.pid, signal.SIGKILL)  # kill -9: the lock file stays, its flock goes
    _finish(holder)
    assert lock_path(target).exists()
    with pytest.raises(OSError):  # a dead pid on this host is not a live process
        os.kill(holder.pid, 0)
    c = claim(target)
    try:
        assert c.took_over is not None and c.took_over["pid"] == holder.pid
    finally:
        c.release()
    assert run_batch([case]).exit_code == 0
    assert _dotfiles(tmp_path) == []


def test_a_live_holder_is_named_by_the_error(tmp_path):
    holder = _holder(tmp_path / "r.nc")
    try:
        with pytest.raises(OutputHeldError) as info:
            claim(tmp_path / "r.nc")
        assert info.value.holder["pid"] == holder.pid
    finally:
        _finish(holder, input="")  # closes its stdin: it releases and exits


# --------------------------------------------------------------------------- temporaries
KILLED_WRITE = """\
import sys, time
sys.path.insert(0, sys.argv[2])
import xarray as xr
from anharmony.store import write_dataset

def stuck(self, tmp, *args, **kwargs):
    with open(tmp, "wb") as f:
        f.write(b"half a file")
    print("writing", flush=True)
    time.sleep(HARD_S)

xr.Dataset.to_netcdf = stuck
write_dataset(xr.Dataset(), sys.argv[1])
""".replace("HARD_S", str(HARD_S))


def test_the_next_run_removes_the_temporary_of_a_killed_write(tmp_path):
    (case,) = _cases(tmp_path, 1)
    proc = _popen([sys.executable, "-c", KILLED_WRITE, str(tmp_path / "tiny-0.nc"), SRC],
                  tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    _wait_for_line(proc, proc.stdout, "writing")
    os.kill(proc.pid, signal.SIGKILL)
    _finish(proc)
    left = _dotfiles(tmp_path)
    host = socket.gethostname()
    assert any(n.startswith(f".tiny-0.nc.{host}-{proc.pid}.") and n.endswith(TEMP_SUFFIX)
               for n in left), left  # the temporary names its writer
    assert run_batch([case]).exit_code == 0
    assert _dotfiles(tmp_path) == []
    read_dataset(tmp_path / "tiny-0.nc")


def test_only_provably_orphaned_temporaries_are_removed(tmp_path):
    target = tmp_path / "r.nc"
    host = socket.gethostname()
    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, timeout=HARD_S)
    dead = int(gone.stdout)  # a process that has exited
    live = subprocess.Popen([sys.executable, "-c", "import sys; sys.stdin.read()"],
                            stdin=subprocess.PIPE)
    try:
        names = {
            "dead": f".r.nc.{host}-{dead}.abcd1234{TEMP_SUFFIX}",
            "live": f".r.nc.{host}-{live.pid}.abcd1234{TEMP_SUFFIX}",
            "other host": f".r.nc.elsewhere.example-{dead}.abcd1234{TEMP_SUFFIX}",
            "old naming": f".r.nc.abcd1234{TEMP_SUFFIX}",
            "another file": f".q.nc.{host}-{dead}.abcd1234{TEMP_SUFFIX}",
        }
        for name in names.values():
            (tmp_path / name).write_bytes(b"x")
        removed = remove_stale_temporaries(target, TEMP_SUFFIX)
        assert [p.name for p in removed] == [names["dead"]]
        assert set(_dotfiles(tmp_path)) == set(names.values()) - {names["dead"]}
    finally:
        live.stdin.close()
        live.wait(timeout=HARD_S)


# --------------------------------------------------------------------------- resume
def test_resume_says_what_is_wrong_with_an_unreadable_result(tmp_path):
    (case,) = _cases(tmp_path, 1)
    out = tmp_path / "tiny-0.nc"
    out.write_text("not a netCDF file\n")
    with pytest.raises(CaseError) as info:
        run_batch([case], resume=True)
    text = str(info.value)
    assert "not a readable netCDF file" in text and "another case text" not in text
    assert "--overwrite" in text

    assert run_batch([case], overwrite=True).exit_code == 0
    whole = out.read_bytes()
    out.write_bytes(whole[: len(whole) // 2])  # truncated, e.g. copied from a full disk
    with pytest.raises(CaseError, match="not a readable netCDF file") as info:
        run_batch([case], resume=True)
    assert "another case text" not in str(info.value)

    with netCDF4.Dataset(out, "w") as f:  # the schema tag but none of the variables
        f.setncattr("anharmony_schema", 1)
        f.setncattr("case", case.read_text())
    with pytest.raises(CaseError, match=r"a damaged or incomplete result file: the variables "
                                        r"energy, .*scan_value.* are missing") as info:
        run_batch([case], resume=True)
    assert "another case text" not in str(info.value)


def test_resume_and_overwrite_together_are_refused(tmp_path, capsys):
    (case,) = _cases(tmp_path, 1)
    code = main(["run", "--resume", "--overwrite", str(case)])
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and "--resume and --overwrite contradict" in err
    with pytest.raises(InputError, match="contradict"):
        run_batch([case], resume=True, overwrite=True)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["t0.yaml"]


# --------------------------------------------------------------------------- stops
@pytest.fixture
def sigint_default():
    old = signal.signal(signal.SIGINT, signal.default_int_handler)
    yield
    signal.signal(signal.SIGINT, old)


def _signal_inside_first_write(monkeypatch, signum: int, times: int = 1) -> list[int]:
    real = xr.Dataset.to_netcdf
    calls: list[int] = []

    def signalled(self, *args, **kwargs):
        calls.append(1)
        if len(calls) == 1:
            for _ in range(times):
                os.kill(os.getpid(), signum)  # arrives inside the write (the hang window)
        return real(self, *args, **kwargs)

    monkeypatch.setattr(xr.Dataset, "to_netcdf", signalled)
    return calls


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM])
@pytest.mark.parametrize("times", [1, 2])
def test_a_signal_inside_a_write_stops_the_batch_after_the_file_is_whole(
        tmp_path, monkeypatch, sigint_default, signum, times):
    # Before, the exception raised by the signal inside xarray's write could leave its
    # HDF5 lock taken; its own clean-up then waited for that lock for ever (the reported
    # hang, with the temporary left behind). Now the write finishes, then the batch stops.
    paths = _cases(tmp_path, 3)
    calls = _signal_inside_first_write(monkeypatch, signum, times)
    report = run_batch(paths, handle_signals=True)
    assert report.interrupted == signum and report.exit_code == 128 + signum
    assert len(calls) == 1 and len(report.written) == 1 and len(report.not_run) == 2
    read_dataset(report.written[0][1])  # whole
    assert _dotfiles(tmp_path) == []
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler  # restored


def test_sigint_ignored_at_start_stays_ignored(tmp_path, monkeypatch):
    # a background job of a non-interactive shell inherits SIGINT ignored: honoured
    paths = _cases(tmp_path, 2)
    old = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        _signal_inside_first_write(monkeypatch, signal.SIGINT)
        report = run_batch(paths, handle_signals=True)
        assert signal.getsignal(signal.SIGINT) is signal.SIG_IGN
    finally:
        signal.signal(signal.SIGINT, old)
    assert report.interrupted is None and len(report.written) == 2


# (signal, the line of the run's output after which it is sent or None: at once, --jobs)
STOPS = [(signal.SIGTERM, None, "2"),  # start-up: before any handler (default action)
         (signal.SIGINT, "running ", "2"),  # planned, the jobs start
         (signal.SIGTERM, "3/", "1"),  # the first jobs are in, the others run
         (signal.SIGINT, "wrote ", "1"),  # just after the first write
         (signal.SIGINT, "wrote ", "2"),
         (signal.SIGTERM, "wrote ", "2")]


@pytest.mark.slow  # six short real runs, ~1 s each
def test_a_stop_at_any_moment_leaves_only_whole_files(tmp_path):
    # SIGINT or SIGTERM to the main process alone (as a batch scheduler sends it), at
    # moments from start-up to the writes: the run ends (or had finished), with no
    # traceback, every file readable and no temporary or lock file left
    import queue
    import threading

    stopped = 0
    for k, (signum, after, jobs) in enumerate(STOPS):
        folder = tmp_path / f"s{k}"
        folder.mkdir()
        paths = _cases(folder, 4)
        proc = _popen([sys.executable, "-m", "anharmony.cli", "run", "--progress", "lines",
                       "--jobs", jobs, *map(str, paths)], folder,
                      stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        lines: queue.Queue[str | None] = queue.Queue()

        def pump(stream=proc.stderr, lines=lines):
            for line in stream:
                lines.put(line)
            lines.put(None)

        reader = threading.Thread(target=pump, daemon=True)
        reader.start()
        seen: list[str] = []
        if after is None:
            proc.send_signal(signum)
        deadline = time.monotonic() + HARD_S
        try:
            while (line := lines.get(timeout=max(0.0, deadline - time.monotonic()))) is not None:
                seen.append(line)
                if after is not None and line.startswith(after):
                    proc.send_signal(signum)
                    after = "never again"
            proc.wait(timeout=max(0.0, deadline - time.monotonic()))
        except (queue.Empty, subprocess.TimeoutExpired):
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=HARD_S)
            pytest.fail(f"stop {k} hung for {HARD_S} s:\n" + "".join(seen))
        reader.join(timeout=HARD_S)
        err = "".join(seen)
        # stopped (128 + n, or killed by it before the handlers were set), or already done
        assert proc.returncode in (0, 128 + signum, -signum), (k, err)
        assert "Traceback" not in err, (k, err)
        for p in folder.glob("*.nc"):
            read_dataset(p)
        assert _dotfiles(folder) == [], (k, err)
        stopped += proc.returncode == 128 + signum and "stopped by" in err
    assert stopped >= 4  # the moments after a line of output reach a running batch
