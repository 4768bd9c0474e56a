"""Hostile and careless input: one clear line at the file's line, never a traceback or a hang.

The reference is the command-line contract (DESIGN §7): exit 2 on bad input with one line per
problem naming the file, line and field, exit 1 on a failure of the computation, no traceback;
and whatever ``run`` refuses, ``check`` refuses. Every case here was once a traceback, a hang
or a ``run``-only refusal. A hang fails the test through the hard per-call alarm of
:func:`_call` (a bound, not a timing assertion).
"""

from __future__ import annotations

import contextlib
import io
import re
import shutil
import signal
import warnings

import numpy as np
import pytest

from anharmony.cli import main
from mutants import CASES, mutants

HARD_TIMEOUT_S = 60  # per call: far above any legitimate check (about 0.1 s), so only a hang
POSITION = re.compile(r"^(?P<file>\S+?):(?P<line>\d+):(?P<col>\d+): ")

MINI = """\
schema: 1
title: t
units: oscillator
space: {dimension: 1}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.1}
basis: {size: 20}
levels: {count: 3}
output: out.nc
"""

WS = """\
schema: 1
title: t
units: nuclear
space: {dimension: 3, l: [0]}
well:
  - woods_saxon: {depth: 50, r0: 1.25, mass_number: MASS, diffuseness: DIFF}
basis: {size: 20}
levels: {count: 3}
output: out.nc
"""


class _Hang(Exception):
    pass


def _call(*argv: str) -> tuple[int, str, str]:
    """``anharmony ARGV`` in this process: (exit code, stdout, stderr), a hang an error."""
    def alarm(*_):
        raise _Hang(f"anharmony {' '.join(argv)} ran beyond {HARD_TIMEOUT_S} s")

    old = signal.signal(signal.SIGALRM, alarm)
    out, err = io.StringIO(), io.StringIO()
    signal.alarm(HARD_TIMEOUT_S)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), \
                warnings.catch_warnings():
            warnings.simplefilter("default")  # as a user's shell has them (not as errors)
            code = main(list(argv))
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
    return code, out.getvalue(), err.getvalue()


def _bomb(levels: int) -> str:
    lines = ['a0: &a0 ["x","x","x","x","x","x","x","x","x"]']
    for i in range(1, levels):
        lines.append(f"a{i}: &a{i} [" + ",".join([f"*a{i - 1}"] * 9) + "]")
    return "\n".join(lines) + "\n"


# (name, case text, expected line, expected field ("" for none), words of the message)
REFUSED = [
    ("alias bomb of 7 levels", _bomb(7) + MINI, 6, "", "expands to more than"),
    ("alias bomb of 9 levels", _bomb(9) + MINI, 6, "", "expands to more than"),
    ("deep nesting", "a: " + "[" * 2000 + "]" * 2000 + "\n" + MINI, 1, "", "nesting deeper"),
    ("alias loop", "a: &x [*x]\n" + MINI, 1, "", "refers to a node that holds it"),
    ("NUL character", MINI.replace("title: t", "title: t\x00x"), 2, "", "#x0000"),
    ("escaped NUL in text", MINI.replace("title: t", 'title: "a\\0b"'), 2, "title",
     "control character"),
    ("lone surrogate in output", MINI.replace("output: out.nc", 'output: "out\\ud800.nc"'),
     10, "output", "half of a UTF-16 pair"),
    ("!!float abc", MINI.replace("strength: 0.1", "strength: !!float abc"), 7,
     "well[1].power.strength", "cannot read 'abc' as float"),
    ("!!int 12abc", MINI.replace("size: 20", "size: !!int 12abc"), 8, "basis.size",
     "cannot read '12abc' as int"),
    ("!!timestamp that is no date", MINI.replace("title: t", "title: !!timestamp 2001-13-45"),
     2, "title", "as timestamp"),
    ("!!timestamp that is no timestamp", MINI.replace("title: t", "title: !!timestamp soon"), 2,
     "title", "not in the form this tag reads"),
    ("5000-digit integer", MINI.replace("size: 20", "size: " + "9" * 5000), 8, "basis.size",
     "5000 characters"),
    ("integer beyond the float range", MINI.replace("frequency: 1.0", "frequency: 1" + "0" * 400),
     6, "well[0].frequency", "integer of 401 digits"),
    ("units given as a list", MINI.replace("units: oscillator", "units: [nuclear]"), 3, "units",
     "must be one of"),
    ("mass_number 1e300", WS.replace("MASS", "1e300").replace("DIFF", "0.65"), 6,
     "well[0].mass_number", "must be at most 1000"),
    ("diffuseness 1e-300", WS.replace("MASS", "40").replace("DIFF", "1e-300"), 6,
     "well[0].diffuseness", "a surface this sharp"),
    # a radius of 1e100 fm passes the fields; the run's first numbers fail: check says so
    ("radius 1e100", WS.replace("r0: 1.25, mass_number: MASS", "radius: 1e100")
     .replace("DIFF", "1e95"), 6, "well", "cannot be resolved"),
    ("exponent 1e6", MINI.replace("exponent: 4", "exponent: 1000000"), 7, "well[1].exponent",
     "must be at most 100"),
    ("particle mass 1e300", MINI.replace("space:", "particle: {mass: 1e300}\nspace:"), 4,
     "particle.mass", "must be at most"),
]


@pytest.mark.parametrize("name,text,line,field,words", REFUSED, ids=[r[0] for r in REFUSED])
def test_check_and_run_refuse_hostile_input_at_its_line(tmp_path, name, text, line, field,
                                                        words):
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    for command in ("check", "run"):
        code, out, err = _call(command, "--allow-long", str(path))
        assert code == 2, (command, err)
        assert "Traceback" not in out + err and "internal error" not in err
        first = next(ln for ln in err.strip().splitlines() if not ln.startswith("warning: "))
        m = POSITION.match(first)
        assert m and m["file"] == str(path) and int(m["line"]) == line, first
        assert first[m.end():].startswith(f"{field}: " if field else ""), first
        assert words in first, first
    assert not (tmp_path / "out.nc").exists()


def test_a_case_far_beyond_the_usual_work_is_refused_unless_insisted_on(tmp_path):
    # 3000 channels of 2000 states: about a day of diagonalisation (estimate of
    # cases.estimate_work); check names the setting to change and the option that insists
    ls = ", ".join(str(i) for i in range(3000))
    path = tmp_path / "big.yaml"
    path.write_text(f"schema: 1\nspace: {{dimension: 3, l: [{ls}]}}\nwell: [harmonic: "
                    "{frequency: 1.0}]\nbasis: {size: 2000}\noutput: big.nc\n")
    for command in ("check", "run"):
        code, _, err = _call(command, str(path))
        assert code == 2 and f"{path}:2:" in err and "space.l:" in err, err
        assert "--allow-long" in err and "h on one core" in err
    code, out, err = _call("check", "--allow-long", "--no-reference", str(path))
    assert code == 0 and "3000 task(s)" in out, err


def test_a_ladder_of_thousands_of_sizes_and_lengths_names_the_convergence_setting(tmp_path):
    sizes = ", ".join(str(s) for s in range(10, 4000, 2))
    lengths = ", ".join(f"{0.5 + i / 1000:.3f}" for i in range(1000))
    path = tmp_path / "ladder.yaml"
    path.write_text(MINI + f"convergence: {{sizes: [{sizes}], lengths: [{lengths}]}}\n")
    code, _, err = _call("check", str(path))
    assert code == 2 and f"{path}:11:" in err and "convergence.sizes:" in err, err


@pytest.mark.parametrize("damage", ["energy", "bound", "label", "scan_value", "dims", "text",
                                    "empty"])
def test_show_and_plot_refuse_a_damaged_result_file_by_name(tmp_path, damage):
    import xarray as xr

    case = tmp_path / "case.yaml"
    case.write_text(MINI)
    assert _call("run", "--progress", "off", str(case))[0] == 0
    good = tmp_path / "out.nc"
    ds = xr.load_dataset(good)
    for v in ds.variables.values():
        v.encoding = {}
    if damage == "dims":
        ds["energy"] = ds.energy.isel(level=0)
    elif damage == "text":
        ds["energy"] = ds.energy.astype(str)
    elif damage == "empty":
        ds = ds.isel(level=slice(0, 0))
    else:
        ds = ds.drop_vars(damage)
    bad = tmp_path / "bad.nc"
    ds.to_netcdf(bad)
    assert "anharmony_schema" in ds.attrs  # it carries the schema tag, so only its content
    figure = str(tmp_path / "f.png")
    for command in (("show", str(bad)), ("plot", str(bad), "--kind", "flow", "-o", figure)):
        code, out, err = _call(*command)
        assert code == 2 and err.startswith(f"{bad}: a damaged or incomplete result file"), err
        assert "Traceback" not in out + err
    assert np.isfinite(xr.load_dataset(good).energy).any()  # the good file is untouched


def test_an_internal_error_is_one_line_with_exit_1(tmp_path, monkeypatch):
    # a bug of ours must not print a traceback either: one line, exit 1 (DESIGN §7)
    import anharmony.cli as cli

    def broken(args):
        raise KeyError("a bug")

    monkeypatch.setitem(cli._COMMANDS, "check", broken)
    code, out, err = _call("check", "x.yaml")
    assert code == 1 and "internal error" in err and len(err.strip().splitlines()) == 1
    assert "Traceback" not in out + err


FUZZ_COUNT = 300  # mutants per run: about 5 s in-process (most are refused at validation)


def test_fuzzed_demo_cases_never_escape_or_hang(tmp_path):
    # Seeded mutants of the demo cases (tests/mutants.py) through `check` in-process: every
    # one ends with exit 0 or 2, never an exception, an internal error or a hang, and every
    # refusal line names the file and line of the problem.
    for f in CASES.iterdir():  # the CSV files of the fit demos travel with them
        shutil.copy(f, tmp_path)
    outcomes = {0: 0, 2: 0}
    for i, (demo, text) in enumerate(mutants(FUZZ_COUNT, seed=20261204)):
        path = tmp_path / f"m{i}-{demo}"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        code, out, err = _call("check", str(path))
        assert code in (0, 2), (path.name, text, err)
        assert "internal error" not in err and "Traceback" not in out + err, (text, err)
        if code == 2:
            for line in err.strip().splitlines():
                if line.startswith("warning: "):  # a warning of the preflight's numbers
                    continue
                assert POSITION.match(line) and line.startswith(str(path)), (text, line)
        outcomes[code] += 1
        path.unlink()
    assert outcomes[2] > FUZZ_COUNT // 2  # the mutants do reach the checks (most are bad)
