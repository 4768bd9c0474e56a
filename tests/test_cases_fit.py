"""The fit: block of case files: validation (exit 2, field named), CSV data, the fit itself."""

from __future__ import annotations

from pathlib import Path

import pytest

import anharmony as ah
from anharmony.cases import CaseError, load_case, load_cases
from anharmony.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"

# A 1D harmonic well in oscillator units (ħ = m = 1): E_n = ħω (n + ½) exactly (any quantum
# mechanics textbook, e.g. Griffiths, Introduction to Quantum Mechanics, §2.3). The data are
# those of ħω = 1.3; the fit starts at 1.0.
TRUE_FREQUENCY = 1.3
HEAD = """\
schema: 1
title: Fit of a harmonic well
units: oscillator
space: {dimension: 1}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.0}
basis: {size: 20}
levels: {count: 3}
"""
FIT = """\
fit:
  parameters:
    well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}
  data:
    - {level: 0, value: 0.65, uncertainty: 0.01}
    - {level: 1, value: 1.95, uncertainty: 0.01}
    - {levels: [0, 2], value: 2.6, uncertainty: 0.01}
"""
TOL_FIT = 1e-7  # exact data, polynomial well: the matrices are exact and the fit reaches xtol


def _write(tmp_path: Path, text: str, name: str = "case.yaml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def _refused(tmp_path: Path, text: str, capsys, *files: tuple[str, str]) -> str:
    """The case is refused by load_cases and by ``anharmony check`` (exit 2); the messages."""
    for name, content in files:
        _write(tmp_path, content, name)
    path = _write(tmp_path, text)
    with pytest.raises(CaseError):
        load_cases([path])
    capsys.readouterr()
    assert main(["check", "--no-reference", str(path)]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return err


# --------------------------------------------------------------------------- valid fits
def test_case_fit_recovers_the_oscillator_frequency(tmp_path):
    case = load_case(_write(tmp_path, HEAD + FIT))
    res = ah.fit(**case.fit_arguments())
    assert res.values["well[0].frequency"] == pytest.approx(TRUE_FREQUENCY, rel=TOL_FIT)
    assert res.dof == 2
    assert res.chi2 < 1e-8  # exact data


def test_csv_data_give_the_same_fit_arguments_as_data_in_the_file(tmp_path):
    csv = ("# invented data: E_n = 1.3 (n + 1/2)\n"
           "level,levels,value,uncertainty,name\n"
           "0,,0.65,0.01,ground\n"
           "1,,1.95,0.01,\n"
           ",0 2,2.6,0.01,second\n")
    _write(tmp_path, csv, "levels.csv")
    inline = load_case(_write(tmp_path, HEAD + FIT, "inline.yaml")).fit_arguments()
    text = (HEAD + "fit:\n  parameters:\n"
            "    well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}\n  data: levels.csv\n")
    from_csv = load_case(_write(tmp_path, text, "csv.yaml")).fit_arguments()
    strip = [{k: v for k, v in d.items() if k != "name"} for d in from_csv["data"]]
    assert strip == [{k: v for k, v in d.items() if k != "name"} for d in inline["data"]]
    assert [d.get("name") for d in from_csv["data"]] == ["ground", None, "second"]


def test_datum_channel_defaults_and_explicit_l_in_3d(tmp_path):
    # 3D oscillator: E = ħω (2n + l + 3/2) (Griffiths §4.2 / any textbook): l = 1, n = 0 is
    # 2.5 ħω. The case has two channels, so each datum names its l.
    text = """\
schema: 1
units: oscillator
space: {dimension: 3, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
basis: {size: 12}
levels: {count: 2}
fit:
  parameters: {'well[0].frequency': 1.2}
  data:
    - {level: 0, l: 0, value: 1.95, uncertainty: 0.01}
    - {level: 0, l: 1, value: 3.25, uncertainty: 0.01}
"""
    case = load_case(_write(tmp_path, text))
    res = ah.fit(**case.fit_arguments())
    assert res.values["well[0].frequency"] == pytest.approx(TRUE_FREQUENCY, rel=TOL_FIT)


@pytest.mark.parametrize("demo", ["trap-fit.yaml", "morse-fit.yaml", "ws-fit.yaml"])
def test_fit_demos_validate(demo):
    case = load_case(CASES / demo)
    assert case.model.fit is not None and case.fit_rows()


# --------------------------------------------------------------------------- refusals
# (field path, text in HEAD + FIT, bad replacement): a bad value of every key of fit: (the
# schema-coverage test of test_cases_fields.py counts these)
BAD_FIT = [
    ("fit.parameters", "parameters:\n    well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}",
     "parameters: {}"),
    ("fit.parameters.well[0].frequency.start", "start: 1.0", "start: one"),
    ("fit.data", "  data:\n    - {level: 0, value: 0.65, uncertainty: 0.01}",
     "  data: 3\n  other:\n    - {level: 0, value: 0.65, uncertainty: 0.01}"),
    ("fit.scale_covariance", "  data:", "  scale_covariance: maybe\n  data:"),
]


@pytest.mark.parametrize(("path", "good", "bad"), BAD_FIT, ids=[b[0] for b in BAD_FIT])
def test_a_bad_fit_key_names_file_line_and_field(tmp_path, path, good, bad):
    assert good in HEAD + FIT
    text = (HEAD + FIT).replace(good, bad, 1)
    p = _write(tmp_path, text)
    with pytest.raises(CaseError) as info:
        load_cases([p])
    problems = [q for q in info.value.problems if q.path == path]
    assert problems, [str(q) for q in info.value.problems]
    first = bad.splitlines()[0].strip()
    assert problems[0].line == next(i for i, line in enumerate(text.splitlines(), 1)
                                    if first in line)


@pytest.mark.parametrize(("edit", "field"), [
    (("well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}", "well[3].frequency: 1.0"),
     "fit.parameters.well[3].frequency"),
    (("well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}", "well[0].frequence: 1.0"),
     "fit.parameters.well[0].frequence"),
    (("well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}", "depth: 1.0"),
     "fit.parameters.depth"),
    (("bounds: [0.1, 10.0]", "bounds: [5.0, 10.0]"), "fit.parameters.well[0].frequency"),
    (("bounds: [0.1, 10.0]", "bounds: [10.0, 0.1]"), "fit.parameters.well[0].frequency.bounds"),
    (("value: 1.95, uncertainty: 0.01", "value: 1.95, uncertainty: 0.0"),
     "fit.data[1].uncertainty"),
    (("value: 1.95, uncertainty: 0.01", "value: 1.95, uncertainty: -0.01"),
     "fit.data[1].uncertainty"),
    (("{level: 1,", "{level: 50,"), "fit.data[1]"),
    (("{level: 1,", "{l: 1, level: 1,"), "fit.data[1].l"),
    (("{level: 1,", "{level: -1,"), "fit.data[1].level"),
    (("{levels: [0, 2],", "{levels: [2, 2],"), "fit.data[2].levels"),
    (("uncertainty: 0.01}\n    - {level: 1", "sigma: 0.01}\n    - {level: 1"),
     "fit.data[0].sigma"),
    (("  data:", "  scale_covariance: maybe\n  data:"), "fit.scale_covariance"),
    (("  data:", "  weights: 1\n  data:"), "fit.weights"),
])
def test_bad_fit_input_is_refused_naming_the_field(tmp_path, capsys, edit, field):
    old, new = edit
    assert old in FIT
    err = _refused(tmp_path, HEAD + FIT.replace(old, new, 1), capsys)
    assert f": {field}: " in err, err


def test_a_level_the_well_does_not_bind_is_refused(tmp_path, capsys):
    # A shallow Gaussian well holds few bound levels; level 6 is a continuum state.
    text = """\
schema: 1
units: oscillator
space: {dimension: 1}
well:
  - gaussian: {depth: 3.0, range: 1.0}
basis: {size: 30}
fit:
  parameters: {'well[0].depth': 3.0}
  data:
    - {level: 0, value: -2.0, uncertainty: 0.01}
    - {level: 6, value: -0.1, uncertainty: 0.01}
"""
    err = _refused(tmp_path, text, capsys)
    assert ": fit.data[1]: level 6" in err and "not a bound level" in err


def test_more_parameters_than_data_is_refused(tmp_path, capsys):
    text = HEAD + """\
fit:
  parameters: {'well[0].frequency': 1.0, 'well[1].strength': 0.01}
  data:
    - {level: 0, value: 0.65, uncertainty: 0.01}
"""
    err = _refused(tmp_path, text, capsys)
    assert ": fit.parameters: 2 parameters cannot be fixed by 1 data" in err


def test_scale_covariance_without_spare_data_is_refused(tmp_path, capsys):
    text = HEAD + """\
fit:
  parameters: {'well[0].frequency': 1.0}
  scale_covariance: true
  data:
    - {level: 0, value: 0.65, uncertainty: 0.01}
"""
    assert ": fit.scale_covariance: needs more data" in _refused(tmp_path, text, capsys)


def test_a_channel_must_be_named_when_the_case_has_several(tmp_path, capsys):
    text = HEAD.replace("space: {dimension: 1}", "space: {dimension: 3, l: [0, 1]}") + FIT
    assert ": fit.data[0]: name the channel with l" in _refused(tmp_path, text, capsys)


def test_fit_with_scan_is_refused(tmp_path, capsys):
    text = HEAD + FIT + "scan: {parameter: 'well[1].strength', values: [0.0, 0.1]}\n"
    err = _refused(tmp_path, text, capsys)
    assert ": fit: a fit does not combine with scan:" in err


FIT_CSV = HEAD + """\
fit:
  parameters: {'well[0].frequency': 1.0}
  data: levels.csv
"""


@pytest.mark.parametrize(("csv", "where", "field"), [
    ("level,value\n0,0.65\n1,1.95\n", "levels.csv:1:1", "fit.data: missing column(s) uncertainty"),
    ("level,value,sigma\n0,0.65,0.01\n", "levels.csv:1:13", "fit.data: unknown column 'sigma'"),
    ("level,value,uncertainty\n0,0.65,0.01\n1,abc,0.01\n", "levels.csv:3:3",
     "fit.data[1].value: must be a finite number; got 'abc'"),
    ("level,value,uncertainty\n0,0.65,0.01\n1,1.95,-0.01\n", "levels.csv:3:8",
     "fit.data[1].uncertainty: must be a positive number"),
    ("level,value,uncertainty\n0,0.65,0.01\n1,1.95\n", "levels.csv:3:1",
     "fit.data[1]: row has 2 cell(s)"),
    ("level,value,uncertainty\n0,0.65,0.01\n1,,0.01\n", "levels.csv:3:3",
     "fit.data[1].value: is empty"),
    ("level,value,uncertainty\n", "levels.csv:1:1", "fit.data: the data file 'levels.csv' has"),
])
def test_bad_csv_is_reported_at_its_file_and_row(tmp_path, capsys, csv, where, field):
    err = _refused(tmp_path, FIT_CSV, capsys, ("levels.csv", csv))
    assert f"{tmp_path / where}: {field}" in err, err


def test_missing_csv_is_reported_at_the_case_field(tmp_path, capsys):
    err = _refused(tmp_path, FIT_CSV.replace("levels.csv", "nothere.csv"), capsys)
    assert "case.yaml:" in err and ": fit.data: no such data file 'nothere.csv'" in err
