"""The command line: malformed cases, exit codes, help, check, show and the plot hook."""

from __future__ import annotations

import argparse
import subprocess
import sys
from pathlib import Path

import pytest

from anharmony import __version__
from anharmony.cli import _parser, main

DATA = Path(__file__).resolve().parent / "data"

BASE = """\
schema: 1
title: Base case for the malformed-case table
units: oscillator
particle: {mass: 1.0}
space: {dimension: 3, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.1}
reference: {frequency: auto}
basis: {size: 12}
levels: {count: 3}
scan:
  parameter: well[1].strength
  values: {from: 0.0, to: 0.2, steps: 3}
perturbation: {orders: 4, exact: auto, resum: [pade]}
convergence: {sizes: [8, 12], tolerance: 1.0e-6, grow: false}
output: base.nc
"""

# (id, text to replace, replacement, field named in the one-line message)
MALFORMED = [
    ("key-typo", "basis: {size: 12}", "basis: {sise: 12}", "basis.sise"),
    ("top-level-typo", "output: base.nc", "outptu: base.nc", "outptu"),
    ("unit-typo", "units: oscillator", "units: oscilator", "units"),
    ("letter-o-for-zero", "strength: 0.1", "strength: O.1", "well[1].strength"),
    ("number-as-text", "strength: 0.1", "strength: '0.1'", "well[1].strength"),
    ("negative-size", "size: 12", "size: -5", "basis.size"),
    ("fractional-size", "size: 12", "size: 12.5", "basis.size"),
    ("yes-for-a-number", "count: 3", "count: yes", "levels.count"),
    ("unknown-term", "- power:", "- pwer:", "well[1].pwer"),
    ("term-parameter-typo", "exponent: 4", "exponnt: 4", "well[1].exponnt"),
    ("unsafe-formula", "- power: {exponent: 4, strength: 0.1}",
     "- expression: {formula: \"__import__('os').system('true')\"}", "well[1].formula"),
    ("duplicate-key", "levels: {count: 3}", "levels: {count: 3}\nlevels: {count: 4}", "levels"),
    ("scan-missing-term", "parameter: well[1].strength", "parameter: well[5].strength",
     "scan.parameter"),
    ("scan-missing-parameter", "parameter: well[1].strength", "parameter: well[1].depth",
     "scan.parameter"),
    ("scan-unknown-setting", "parameter: well[1].strength", "parameter: particle.mas",
     "scan.parameter"),
    ("missing-output-folder", "output: base.nc", "output: no-such-folder/base.nc", "output"),
    ("output-under-a-file", "output: base.nc", "output: case.yaml/base.nc", "output"),
    ("schema-version", "schema: 1", "schema: 2", "schema"),
    ("dimension", "dimension: 3", "dimension: 4", "space.dimension"),
    ("negative-l", "l: [0, 1]", "l: [0, -1]", "space.l[1]"),
    ("spin-in-2d", "space: {dimension: 3, l: [0, 1]}",
     "space: {dimension: 2, l: [0, 1], spin: 1/2}", "space.spin"),
    ("reference-word", "frequency: auto", "frequency: fast", "reference.frequency"),
    ("zero-steps", "steps: 3", "steps: 0", "scan.values.steps"),
    ("text-in-values", "values: {from: 0.0, to: 0.2, steps: 3}", "values: [0.1, a]",
     "scan.values[1]"),
    ("negative-orders", "orders: 4", "orders: -1", "perturbation.orders"),
    ("resum-typo", "resum: [pade]", "resum: [padé]", "perturbation.resum[0]"),
    ("negative-tolerance", "tolerance: 1.0e-6", "tolerance: -1e-6", "convergence.tolerance"),
    ("zero-size-in-sizes", "sizes: [8, 12]", "sizes: [8, 0]", "convergence.sizes[1]"),
    ("convergence-key-typo", "grow: false", "grw: false", "convergence.grw"),
    ("grow-not-a-flag", "grow: false", "grow: maybe", "convergence.grow"),
    ("max-size-text", "grow: false", "grow: false, max_size: big", "convergence.max_size"),
    ("max-size-below-levels", "grow: false", "grow: false, max_size: 2",
     "convergence.max_size"),
    ("lengths-word", "grow: false", "grow: false, lengths: best", "convergence.lengths"),
    ("repeated-length", "grow: false", "grow: false, lengths: [1.0, 1.0]",
     "convergence.lengths"),
    ("lengths-and-frequencies", "grow: false", "grow: false, lengths: [1.0], frequencies: [2.0]",
     "convergence.frequencies"),
    ("negative-frequency", "grow: false", "grow: false, frequencies: [1.0, -2.0]",
     "convergence.frequencies[1]"),
    ("ir-length-word", "grow: false", "grow: false, ir_length: closed", "convergence.ir_length"),
    ("estimate-word", "grow: false", "grow: false, estimate: smaller", "convergence.estimate"),
    ("grow-without-the-study-estimate", "grow: false", "grow: true, estimate: none",
     "convergence.grow"),
    ("cross-check-word", "grow: false", "grow: false, cross_check: sometimes",
     "convergence.cross_check"),
    ("levels-above-size", "count: 3", "count: 30", "levels.count"),
    ("title-not-text", "title: Base case for the malformed-case table", "title: 5", "title"),
    ("empty-well", "well:\n  - harmonic: {frequency: 1.0}\n  - power: {exponent: 4, "
     "strength: 0.1}", "well: []", "well"),
    ("zero-mass", "mass: 1.0", "mass: 0", "particle.mass"),
    ("negative-depth", "  - power: {exponent: 4, strength: 0.1}",
     "  - power: {exponent: 4, strength: 0.1}\n  - gaussian: {depth: -3, range: 1}",
     "well[2].depth"),
    ("exact-word", "exact: auto", "exact: maybe", "perturbation.exact"),
    ("scan-point-out-of-range", "parameter: well[1].strength\n  values: {from: 0.0, to: 0.2, "
     "steps: 3}", "parameter: well[0].frequency\n  values: [1.0, -1.0]", "scan.values"),
    ("term-not-a-mapping", "  - harmonic: {frequency: 1.0}", "  - harmonic", "well[0]"),
    ("no-unit-systems-of-own", "units: oscillator", "units: meV", "units"),
    ("on-for-a-name", "units: oscillator", "units: on", "units"),
    ("no-for-a-resummation", "resum: [pade]", "resum: [no]", "perturbation.resum[0]"),
]


def _run(capsys, *argv) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_base_case_of_the_table_is_valid(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE)
    code, _, err = _run(capsys, "run", "--progress", "off", str(tmp_path / "case.yaml"))
    assert code == 0, err
    assert (tmp_path / "base.nc").exists()


@pytest.mark.parametrize(("old", "new", "field"), [m[1:] for m in MALFORMED],
                         ids=[m[0] for m in MALFORMED])
def test_malformed_case_gives_exit_2_and_one_line(tmp_path, capsys, old, new, field):
    assert old in BASE
    path = tmp_path / "case.yaml"
    path.write_text(BASE.replace(old, new, 1))
    code, out, err = _run(capsys, "run", "--progress", "off", str(path))
    lines = err.strip().splitlines()
    assert code == 2
    assert len(lines) == 1, err
    assert lines[0].startswith(f"{path}:"), lines[0]
    assert f": {field}: " in lines[0], lines[0]
    assert "Traceback" not in err + out
    assert list(tmp_path.glob("*.nc")) == [] and list(tmp_path.glob(".*")) == []
    if new.endswith(("on", "[no]")):
        assert "quote it" in lines[0]  # YAML 1.1 reads on/no as booleans


@pytest.mark.parametrize("name", ["duplicate-keys.yaml", "unsafe-formula.yaml",
                                  "python-tag.yaml", "not-a-mapping.yaml", "empty.yaml",
                                  "unclosed-flow.yaml", "missing.yaml"])
def test_bad_fixture_files_give_exit_2(tmp_path, capsys, name):
    code, out, err = _run(capsys, "run", "-o", str(tmp_path), str(DATA / name))
    lines = err.strip().splitlines()
    assert code == 2 and len(lines) == 1 and lines[0].startswith(str(DATA / name))
    assert "Traceback" not in err + out
    assert list(tmp_path.iterdir()) == []
    assert not (Path.cwd() / "hacked").exists()


def test_a_real_process_exits_2_without_traceback(tmp_path):
    path = tmp_path / "case.yaml"
    path.write_text(BASE.replace("strength: 0.1", "strength: O.1"))
    proc = subprocess.run([sys.executable, "-m", "anharmony.cli", "run", str(path)],
                          capture_output=True, text=True, timeout=120)  # a hang fails
    assert proc.returncode == 2
    assert proc.stderr.strip() == (f"{path}:8:36: well[1].strength: must be a number; "
                                   "got 'O.1'")


def test_unwritable_output_dir_is_bad_input(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE)
    blocker = tmp_path / "file"
    blocker.write_text("x")
    code, _, err = _run(capsys, "run", "-o", str(blocker / "sub"), str(tmp_path / "case.yaml"))
    assert code == 2 and len(err.strip().splitlines()) == 1 and "-o" in err


def test_existing_result_needs_resume_or_overwrite(tmp_path, capsys):
    case = tmp_path / "case.yaml"
    case.write_text(BASE)
    assert _run(capsys, "run", "--progress", "off", str(case))[0] == 0
    code, _, err = _run(capsys, "run", "--progress", "off", str(case))
    assert code == 2 and "--resume" in err and "output" in err
    code, _, err = _run(capsys, "run", "--progress", "off", "--resume", str(case))
    assert code == 0 and "up to date" in err
    code, _, err = _run(capsys, "run", "--progress", "lines", "--overwrite", str(case))
    assert code == 0 and "wrote" in err and "6/6 tasks" in err


def test_a_well_that_run_cannot_solve_is_refused_by_check_and_run_alike(tmp_path, capsys):
    # A pure cubic is unbounded below: no minimum for the reference oscillator. Whatever run
    # would refuse, check refuses, at the file's line (DESIGN §7: exit 2 for bad input).
    case = tmp_path / "bad.yaml"
    case.write_text("schema: 1\nspace: {dimension: 1}\nwell:\n  - power: {exponent: 3, "
                    "strength: 1.0}\nbasis: {size: 8}\nlevels: {count: 2}\n")
    for command in ("check", "run"):
        code, out, err = _run(capsys, command, str(case))
        assert code == 2 and f"{case}:4:3: well: the reference oscillator" in err, command
        assert "Traceback" not in err + out
    assert not (tmp_path / "bad.nc").exists()


def test_computation_failure_exits_1(tmp_path, capsys, monkeypatch):
    # A failure inside the computation (here made to happen in the core's scan) fails the
    # case with exit 1 and one line, and writes nothing (DESIGN §7).
    import anharmony.runner.compute as compute
    from anharmony.errors import NumericalError

    def fails(*args, **kwargs):
        raise NumericalError("the eigensolver did not converge")

    monkeypatch.setattr(compute, "scan", fails)
    case = tmp_path / "case.yaml"
    case.write_text(BASE)
    code, out, err = _run(capsys, "run", "--progress", "off", str(case))
    assert code == 1 and "failed" in err and "did not converge" in err
    assert "Traceback" not in err + out


def test_bad_jobs_and_usage_errors_are_one_line(capsys, tmp_path):
    (tmp_path / "case.yaml").write_text(BASE)
    code, _, err = _run(capsys, "run", "--jobs", "0", str(tmp_path / "case.yaml"))
    assert code == 2 and len(err.strip().splitlines()) == 1
    with pytest.raises(SystemExit) as info:
        main(["run", "--jobs", "two", "x.yaml"])
    assert info.value.code == 2
    assert len(capsys.readouterr().err.strip().splitlines()) == 1


def test_version(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert capsys.readouterr().out.strip() == f"anharmony {__version__}"


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


@pytest.mark.parametrize("command", ["run", "check", "show", "plot"])
def test_help_documents_every_option(command, capsys):
    sub = _subparsers(_parser())[command]
    with pytest.raises(SystemExit):
        main([command, "--help"])
    text = capsys.readouterr().out
    for action in sub._actions:
        for opt in action.option_strings:
            assert opt in text, opt
        if action.option_strings and action.help is not argparse.SUPPRESS:
            assert action.help, action.option_strings


def test_check_prints_the_resolved_case(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE)
    code, out, _ = _run(capsys, "check", str(tmp_path / "case.yaml"))
    assert code == 0
    assert "units      oscillator" in out
    assert "hbar*omega = 1" in out and "harmonic" in out
    assert "channels   s, p (2)" in out
    assert "tasks      6 (3 scan point(s) × 2 channel(s))" in out
    assert "(per point and channel, for the convergence study)" in out
    assert "study      sizes 8, 12, at the basis length; error_estimate: extrapolate; " \
           "converged below 1e-06 hbar*omega" in out
    assert list(tmp_path.glob("*.nc")) == []
    quick = BASE.replace("convergence: {sizes: [8, 12], tolerance: 1.0e-6, grow: false}\n", "")
    (tmp_path / "quick.yaml").write_text(quick)
    code, out, _ = _run(capsys, "check", str(tmp_path / "quick.yaml"))
    assert code == 0 and "linear: matrices built once" in out
    assert "errors     change from 9 to 12 states; converged below 1e-06 hbar*omega" in out


def test_check_reports_problems_like_run(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE.replace("size: 12", "size: -1"))
    code, _, err = _run(capsys, "check", str(tmp_path / "case.yaml"))
    assert code == 2 and "basis.size" in err


def test_show_prints_levels_and_verdict(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE)
    assert _run(capsys, "run", "--progress", "off", str(tmp_path / "case.yaml"))[0] == 0
    code, out, _ = _run(capsys, "show", str(tmp_path / "base.nc"))
    assert code == 0
    assert "well[1].strength = 0.2" in out and "1s" in out and "2p" in out
    assert "order 0 within" in out  # at strength 0 the series is exact at order 0
    code, out, _ = _run(capsys, "show", "--scan", "1", "--channel", "p", str(tmp_path / "base.nc"))
    assert code == 0 and "1p" in out and "1s" not in out
    code, _, err = _run(capsys, "show", "--channel", "q", str(tmp_path / "base.nc"))
    assert code == 2 and "no channel 'q'" in err


def test_show_rejects_files_that_are_not_results(tmp_path, capsys):
    bad = tmp_path / "x.nc"
    bad.write_text("no")
    code, _, err = _run(capsys, "show", str(bad))
    assert code == 2 and str(bad) in err and len(err.strip().splitlines()) == 1


def test_plot_hook_draws_and_refuses_a_bad_format(tmp_path, capsys):
    (tmp_path / "case.yaml").write_text(BASE)
    assert _run(capsys, "run", "--progress", "off", str(tmp_path / "case.yaml"))[0] == 0
    code, _, err = _run(capsys, "plot", str(tmp_path / "base.nc"), "--kind", "shift", "-o",
                        str(tmp_path / "f.png"))
    # matplotlib is a hard dependency: the figure must be drawn (no branch for a missing one)
    assert code == 0, err
    assert (tmp_path / "f.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG magic
    code, _, err = _run(capsys, "plot", str(tmp_path / "base.nc"), "--kind", "shift",
                        "-o", str(tmp_path / "f.bmp"))
    assert code == 2 and err.startswith("plot:") and len(err.strip().splitlines()) == 1


def test_no_command_prints_help_and_exits_2(capsys):
    assert main([]) == 2
    assert "run" in capsys.readouterr().err


class _Terminal:
    """A stderr stand-in that says it is a terminal."""

    def __init__(self) -> None:
        self.parts: list[str] = []

    def write(self, text: str) -> int:
        self.parts.append(text)
        return len(text)

    def flush(self) -> None:
        pass

    def isatty(self) -> bool:
        return True


def test_progress_is_a_bar_on_a_terminal_and_lines_elsewhere(monkeypatch):
    from anharmony.cli import _Progress

    monkeypatch.delenv("CI", raising=False)
    term = _Terminal()
    bar = _Progress("auto", term)
    bar("start", tasks=4, cases=1)
    bar("tasks", n=2)
    bar.close()
    assert bar.mode == "bar" and "/4 [" in "".join(term.parts)  # tqdm draws "k/4 [time"
    monkeypatch.setenv("CI", "true")  # CI logs get plain lines even on a pseudo-terminal
    term = _Terminal()
    lines = _Progress("auto", term)
    lines("start", tasks=40, cases=2)
    for _ in range(40):
        lines("tasks", n=1)
    text = "".join(term.parts)
    assert lines.mode == "lines" and "\r" not in text
    assert text.count(" tasks\n") == 20 and "40/40 tasks" in text


LADDER = """\
schema: 1
units: oscillator
space: {dimension: 1, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
basis: {size: 12}
levels: {count: 3}
output: ladder.nc
"""


def _run_and_show(capsys, folder, text, output):
    """Write a case, run it (exit 0) and show its result: (exit code, stdout of show)."""
    (folder / "case.yaml").write_text(text)
    assert _run(capsys, "run", "--progress", "off", str(folder / "case.yaml"))[0] == 0
    code, out, _ = _run(capsys, "show", str(folder / output))
    return code, out


def test_show_prints_one_ladder_in_energy_order_for_a_symmetric_1d_well(tmp_path, capsys):
    code, out = _run_and_show(capsys, tmp_path, LADDER, "ladder.nc")
    assert code == 0
    rows = [line.split() for line in out.splitlines() if line.strip().startswith("v=")]
    assert [r[0] for r in rows] == [f"v={v}" for v in range(6)]
    # oscillation theorem (Courant & Hilbert, Methods of Mathematical Physics I, ch. VI): the
    # v-th level of a symmetric 1D well has v nodes and parity (-1)^v
    assert [r[1] for r in rows] == ["even", "odd"] * 3
    # 1D oscillator E_v = v + 1/2 in units of hbar*omega (any QM textbook); the basis holds
    # the eigenstates exactly, so the printed 8 significant digits are exact
    assert [float(r[2]) for r in rows] == pytest.approx([v + 0.5 for v in range(6)], abs=1e-7)


GAUSS_STUDY = """\
schema: 1
units: oscillator
space: {dimension: 3, l: [0]}
well:
  - gaussian: {depth: 40.0, range: 2.0}
basis: {size: 20, length: 0.8}
levels: {count: 2}
output: gauss.nc
"""


def test_show_names_the_reference_oscillator_apart_from_the_basis(tmp_path, capsys):
    # The harmonic approximation of −V₀ e^{−r²/a²} at r = 0: m ω² = 2 V₀/a², so with
    # ħ = m = 1 ħω = sqrt(2 V₀)/a = sqrt(80)/2 (calculus); the table's first line must give
    # that as the reference, beside the basis' own b = 0.8 (both are printed).
    code, out = _run_and_show(capsys, tmp_path, GAUSS_STUDY, "gauss.nc")
    head = next(line for line in out.splitlines() if "hbar*omega = " in line)
    first = float(head.split("hbar*omega = ")[1].split(",")[0])
    assert code == 0 and "harmonic" in head
    assert first == pytest.approx(80**0.5 / 2, rel=1e-5)  # 6 significant digits printed
    assert "basis hbar*omega = " in head and "b = 0.8" in head


SLOW_LEVELS = """\
schema: 1
units: oscillator
space: {dimension: 3, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 1.0}
reference: {frequency: 1.0}
basis: {size: 12}
levels: {count: 3}
output: slow.nc
"""


def test_run_names_every_level_whose_quick_estimate_misses_the_tolerance(tmp_path, capsys):
    import anharmony as ah
    from anharmony.hamiltonian import level_label

    (tmp_path / "case.yaml").write_text(SLOW_LEVELS)
    code, _, err = _run(capsys, "run", "--progress", "off", str(tmp_path / "case.yaml"))
    assert code == 0
    warnings = [line for line in err.splitlines() if line.startswith("warning:")]
    assert len(warnings) == 1 and "raise basis.size" in warnings[0]
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 1.0}}])
    named = 0
    for l in (0, 1):
        # an independent pair of solves: the change from 9 (= 12 - 12 // 4) to 12 states
        with pytest.warns(ah.ConvergenceWarning):  # N = 12 is deliberately too small
            big = ah.solve(well, 3, l, size=12, levels=3, reference={"frequency": 1.0})
            small = ah.solve(well, 3, l, size=9, levels=3, reference={"frequency": 1.0})
        for n in range(3):
            label = level_label(3, l, None, n)
            # 1e-6 is the default tolerance; a level within rounding of it is not tested
            change = abs(big.energies[n] - small.energies[n])
            if change > 1.1e-6:
                assert label in warnings[0], label
                named += 1
            elif change < 0.9e-6:
                assert label not in warnings[0], label
    assert named >= 2  # the strong quartic leaves several levels unconverged at N = 12


def test_check_states_the_estimated_work_of_a_case(capsys):
    # The contract: `check` says how much a case will cost before it runs (counts
    # from cases.estimate_work, which tests/test_cases_fields.py checks against a counted run).
    from anharmony.cases import estimate_work, load_cases

    path = Path(__file__).parent.parent / "cases" / "quartic-3d.yaml"
    code, out, _ = _run(capsys, "check", str(path))
    assert code == 0
    expected = estimate_work(load_cases([path])[0]).summary()
    assert f"estimated work: {expected}" in out
