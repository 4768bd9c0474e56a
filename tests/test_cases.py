"""Case files: safe YAML reading, the schema, error positions, round trips and expansion."""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
import yaml

from anharmony.cases import (
    Case,
    CaseError,
    CaseModel,
    StrictLoader,
    case_from_dict,
    expand,
    load_case,
    load_cases,
    parse_yaml,
)
from anharmony.spectrum import reference_oscillator

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMOS = sorted(CASES.glob("*.yaml"))
RTOL_LINSPACE = 1e-15  # scan points are a+i*step, the last one set exactly: ~1 ulp from linspace

BASE = """\
schema: 1
title: Base case
units: oscillator
space: {dimension: 3, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.1}
basis: {size: 12}
levels: {count: 3}
scan:
  parameter: well[1].strength
  values: {from: 0.0, to: 0.2, steps: 3}
output: base.nc
"""


def _write(tmp_path: Path, text: str, name: str = "case.yaml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def _problems(path: Path) -> list:
    with pytest.raises(CaseError) as info:
        load_cases([path])
    return info.value.problems


# --------------------------------------------------------------------------- YAML
@pytest.mark.parametrize("text", ["1e-3", "1E+3", "-1e-3", "1.0e3", "+1.5E-10", "3.", "1_0.5"])
def test_scientific_notation_without_dot_or_sign_reads_as_float(text):
    data, _, problems = parse_yaml(f"x: {text}")
    assert problems == []
    # Python's own float() is the reference reading of these literals (underscores removed).
    assert data["x"] == float(text.replace("_", ""))
    assert isinstance(data["x"], float)


def test_plain_safe_loader_is_left_untouched():
    # PyYAML's YAML 1.1 resolver reads 1e-3 as a string (yaml/pyyaml#173); our subclass must not
    # change SafeLoader itself.
    assert yaml.safe_load("x: 1e-3")["x"] == "1e-3"
    assert yaml.load("x: 1e-3", Loader=StrictLoader)["x"] == 0.001


@pytest.mark.parametrize(("text", "expected"), [("017", 15), ("0x1F", 31), ("12", 12),
                                                 ("1_000", 1000)])
def test_integers_keep_their_yaml_1_1_meaning(text, expected):
    # YAML 1.1 integer forms (yaml.org/type/int.html): octal 017, hex 0x1F, underscores.
    data, _, _ = parse_yaml(f"x: {text}")
    assert data["x"] == expected and isinstance(data["x"], int)


def test_unsafe_tags_are_refused():
    _, _, problems = parse_yaml("x: !!python/object/apply:os.system ['true']")
    assert len(problems) == 1 and "YAML" in problems[0].message


def test_duplicate_keys_are_reported_with_both_lines():
    text = "a: 1\nb:\n  c: 2\n  c: 3\na: 4\n"
    _, _, problems = parse_yaml(text, "dup.yaml")
    by_path = {p.path: p for p in problems}
    assert set(by_path) == {"a", "b.c"}
    assert (by_path["a"].line, by_path["a"].column) == (5, 1)
    assert "line 1" in by_path["a"].message
    assert (by_path["b.c"].line, by_path["b.c"].column) == (4, 3)


def test_error_position_points_at_the_bad_value(tmp_path):
    text = BASE.replace("strength: 0.1", "strength: O.1")
    p = _write(tmp_path, text)
    (prob,) = _problems(p)
    line_no = next(i for i, line in enumerate(text.splitlines(), 1) if "O.1" in line)
    col = text.splitlines()[line_no - 1].index("O.1") + 1
    assert (prob.line, prob.column) == (line_no, col)
    assert str(prob) == (f"{p}:{line_no}:{col}: well[1].strength: must be a number; "
                         "got 'O.1'")


def test_all_problems_of_all_files_are_collected(tmp_path):
    a = _write(tmp_path, BASE.replace("size: 12", "sise: 12").replace("units: oscillator",
                                                                     "units: nuclaer"), "a.yaml")
    b = _write(tmp_path, BASE.replace("count: 3", "count: yes"), "b.yaml")
    with pytest.raises(CaseError) as info:
        load_cases([a, b, tmp_path / "missing.yaml"])
    lines = [str(p) for p in info.value.problems]
    assert len(lines) == 4
    assert any("units" in s and "did you mean 'nuclear'" in s for s in lines)
    assert any("basis.sise" in s and "did you mean 'size'" in s for s in lines)
    assert any(s.startswith(f"{b}:") and "levels.count" in s and "yes/no" in s for s in lines)
    assert any("missing.yaml" in s and "no such case file" in s for s in lines)


def test_union_errors_give_one_message_per_field(tmp_path):
    p = _write(tmp_path, BASE + "reference: {frequency: fast}\n")
    (prob,) = _problems(p)
    assert prob.path == "reference.frequency"
    assert prob.message == "must be a number or 'auto'; got 'fast'"


def test_unknown_term_and_parameter_suggest_the_near_name(tmp_path):
    p = _write(tmp_path, BASE.replace("- power:", "- powr:"))
    (prob,) = _problems(p)
    assert prob.path == "well[1].powr" and "did you mean 'power'" in prob.message
    p = _write(tmp_path, BASE.replace("exponent: 4", "exponnet: 4"))
    (prob,) = _problems(p)
    assert prob.path == "well[1].exponnet" and "did you mean 'exponent'" in prob.message


def test_flow_mapping_with_brackets_gets_a_quoting_hint(tmp_path):
    text = BASE.replace("scan:\n  parameter: well[1].strength\n",
                        "scan: {parameter: well[1].strength,\n")
    text = text.replace("  values: {from: 0.0, to: 0.2, steps: 3}\n",
                        "  values: [0.0, 0.1]}\n")
    (prob,) = _problems(_write(tmp_path, text))
    assert "YAML syntax" in prob.message and "quote" in prob.message


# --------------------------------------------------------------------------- schema
@pytest.mark.parametrize("path", DEMOS, ids=[p.name for p in DEMOS])
def test_demo_round_trip_case_model_dict_model(path):
    for case in load_cases([path]):
        data = case.to_dict()
        again = CaseModel.model_validate(data)
        assert again == case.model
        # and through YAML text, as a user would write the dict back out
        text = yaml.safe_dump(data, sort_keys=False)
        assert CaseModel.model_validate(yaml.load(text, Loader=StrictLoader)) == case.model


def test_case_from_dict_matches_the_file(tmp_path):
    case = load_case(_write(tmp_path, BASE))
    other = case_from_dict(yaml.safe_load(BASE), folder=tmp_path)
    assert other.model == case.model
    with pytest.raises(CaseError) as info:
        case_from_dict({"schema": 1, "well": [{"harmonic": {"frequency": -1.0}}]})
    assert info.value.problems[0].path == "well[0].frequency"


def test_scan_range_matches_numpy_linspace(tmp_path):
    case = load_case(_write(tmp_path, BASE.replace("steps: 3", "steps: 7")))
    np.testing.assert_allclose(case.scan_values(), np.linspace(0.0, 0.2, 7),
                               rtol=RTOL_LINSPACE, atol=0)
    assert case.scan_values()[-1] == 0.2


def test_case_without_scan_is_the_physical_well_once(tmp_path):
    text = BASE.split("scan:")[0] + "output: base.nc\n"
    case = load_case(_write(tmp_path, text))
    assert case.scan_parameter == "coupling" and case.scan_values() == [1.0]


def test_output_is_relative_to_the_case_folder(tmp_path):
    sub = tmp_path / "deep"
    sub.mkdir()
    case = load_case(_write(sub, BASE))
    assert case.output == sub.resolve() / "base.nc"


def test_cases_list_gives_each_case_its_own_text(tmp_path):
    one = "\n".join("    " + line if line else line for line in BASE.splitlines())
    text = "cases:\n  -" + one[3:] + "\n  -" + one.replace("base.nc", "other.nc")[3:] + "\n"
    cases = load_cases([_write(tmp_path, text)])
    assert [c.index for c in cases] == [0, 1]
    # each stored text is a document of its own that reads back to the same case
    for c in cases:
        assert CaseModel.model_validate(yaml.safe_load(c.text)) == c.model


def test_two_cases_writing_one_file_is_an_error(tmp_path):
    a = _write(tmp_path, BASE, "a.yaml")
    b = _write(tmp_path, BASE, "b.yaml")
    problems = _problems_of([a, b])
    assert len(problems) == 1 and "would both write" in problems[0].message


def _problems_of(paths):
    with pytest.raises(CaseError) as info:
        load_cases(paths)
    return info.value.problems


def test_spin_channels_and_ls_follow_the_coupling_rule(tmp_path):
    text = BASE.replace("space: {dimension: 3, l: [0, 1]}",
                        "space: {dimension: 3, l: [0, 1, 2], spin: 1/2}")
    case = load_case(_write(tmp_path, text))
    labels = [c.label for c in case.channels()]
    assert labels == ["s1/2", "p1/2", "p3/2", "d3/2", "d5/2"]
    for c in case.channels():
        # <l.s> = [j(j+1) - l(l+1) - 3/4]/2 (angular-momentum coupling, any QM textbook)
        j = Fraction(round(2 * c.j), 2)
        assert Fraction(c.ls).limit_denominator(8) == (j * (j + 1) - c.l * (c.l + 1)
                                                       - Fraction(3, 4)) / 2


def test_j_filter_selects_channels(tmp_path):
    text = BASE.replace("space: {dimension: 3, l: [0, 1]}",
                        "space: {dimension: 3, l: [1, 2], spin: 1/2, j: [3/2, '5/2']}")
    case = load_case(_write(tmp_path, text))
    assert [(c.l, c.j) for c in case.channels()] == [(1, 1.5), (2, 1.5), (2, 2.5)]


def test_spin_orbit_without_spin_is_an_error(tmp_path):
    text = BASE.replace("  - power: {exponent: 4, strength: 0.1}\n",
                        "  - power: {exponent: 4, strength: 0.1}\n"
                        "  - spin_orbit: {strength: 1.0, radius: 2.0, diffuseness: 0.5}\n")
    (prob,) = _problems(_write(tmp_path, text))
    assert prob.path == "space" and "spin: 1/2" in prob.message


def test_scan_paths_resolve_to_linear_or_not(tmp_path):
    case = load_case(_write(tmp_path, BASE))
    assert case.scan_target.linear
    assert case.settings_at(0.3)["well"][1]["power"]["strength"] == 0.3
    text = BASE.replace("parameter: well[1].strength", "parameter: well[0].frequency")
    text = text.replace("{from: 0.0, to: 0.2, steps: 3}", "[1.0, 2.0]")
    case = load_case(_write(tmp_path, text, "f.yaml"))
    assert not case.scan_target.linear  # k = m ω²: quadratic in the frequency
    text = BASE.replace("parameter: well[1].strength", "parameter: particle.mass")
    text = text.replace("{from: 0.0, to: 0.2, steps: 3}", "[1.0, 2.0]")
    case = load_case(_write(tmp_path, text, "m.yaml"))
    assert case.mass_at(2.0) == 2.0


def test_expand_gives_points_times_channels_with_reference(tmp_path):
    case = load_case(_write(tmp_path, BASE))
    tasks = expand(case)
    assert len(tasks) == 3 * 2
    assert {(t.scan_index, t.channel.l) for t in tasks} == {(k, l) for k in range(3)
                                                            for l in (0, 1)}
    for t in tasks:
        well = case.well_at(t.scan_value)
        assert t.reference == reference_oscillator(well, 3, l=0, levels=3)


def test_case_is_frozen(tmp_path):
    case = load_case(_write(tmp_path, BASE))
    assert isinstance(case, Case)
    with pytest.raises(Exception):  # noqa: B017 - pydantic raises ValidationError
        case.model.basis.size = 4  # type: ignore[misc]


# --------------------------------------------------------------------------- convergence
# How a `convergence:` block is read (the rules of anharmony.cases.Convergence, our own
# design): (block, estimate used, study runs, basis grows, study has a length axis)
CONVERGENCE_RULES = [
    (None, "smaller_basis", False, False, False),
    ("{}", "smaller_basis", False, False, False),
    ("{estimate: none}", "none", False, False, False),
    ("{tolerance: 1.0e-6, estimate: smaller_basis}", "smaller_basis", False, False, False),
    ("{tolerance: 1.0e-6}", "extrapolate", True, True, True),
    ("{tolerance: 1.0e-6, grow: false}", "extrapolate", True, False, False),
    ("{sizes: [8, 12]}", "extrapolate", True, False, False),
    ("{sizes: [8, 12], estimate: smaller_basis}", "smaller_basis", True, False, False),
    ("{sizes: [8, 12], lengths: auto}", "extrapolate", True, False, True),
    ("{frequencies: [0.8, 1.0]}", "extrapolate", True, False, True),
    ("{grow: true}", "extrapolate", True, True, True),
    ("{cross_check: true}", "extrapolate", True, False, False),
    ("{estimate: extrapolate}", "extrapolate", True, False, False),
]


@pytest.mark.parametrize(("block", "method", "study", "grows", "lengths"), CONVERGENCE_RULES)
def test_convergence_block_selects_the_study(tmp_path, block, method, study, grows, lengths):
    text = BASE if block is None else BASE + f"convergence: {block}\n"
    conv = load_case(_write(tmp_path, text)).model.convergence
    assert (conv.method, conv.study, conv.grows, conv.scans_lengths) == (method, study, grows,
                                                                         lengths)


def test_study_settings_keep_the_case_tolerance_and_end_at_the_basis_size(tmp_path):
    case = load_case(_write(tmp_path, BASE + "convergence: {cross_check: true}\n"))
    s = case.study_settings()
    assert s.tolerance == 1e-6 and s.grow is False and s.cross_check
    assert s.size_axis(3)[-1] == 12  # no sizes, no growth: the ladder ends at basis.size
    grown = load_case(_write(tmp_path, BASE + "convergence: {tolerance: 1.0e-9, max_size: "
                             "60}\n", "g.yaml")).study_settings()
    assert grown.grow is True and grown.tolerance == 1e-9 and grown.size_axis(3)[-1] == 60
    assert load_case(_write(tmp_path, BASE, "q.yaml")).study_settings() is None


def test_cross_check_copy_keeps_the_text(tmp_path):
    case = load_case(_write(tmp_path, BASE))
    copy = case.with_cross_check()
    assert copy.text == case.text and copy.model.convergence.cross_check
    assert copy.model.convergence.study and not case.model.convergence.study


def test_convergence_problems_name_file_line_and_field(tmp_path):
    text = BASE + "convergence: {lengths: [1.0, 1.0], ir_length: closed}\n"
    found = {p.path: p for p in _problems(_write(tmp_path, text))}
    assert set(found) == {"convergence.ir_length"}  # the schema first; the study's checks
    assert found["convergence.ir_length"].line == 14  # follow once the types are right
    text = BASE + "convergence: {lengths: [1.0, 1.0]}\n"
    (p,) = _problems(_write(tmp_path, text, "b.yaml"))
    assert (p.path, p.line) == ("convergence.lengths", 14) and "distinct" in p.message


def test_study_of_a_coupling_scan_with_an_expression_term_is_refused(tmp_path):
    text = BASE.replace("  - power: {exponent: 4, strength: 0.1}",
                        "  - expression: {formula: '0.1*r**4'}").replace(
        "parameter: well[1].strength", "parameter: coupling")
    assert load_case(_write(tmp_path, text)).model.convergence.study is False  # fine alone
    (p,) = _problems(_write(tmp_path, text + "convergence: {sizes: [8, 12]}\n", "b.yaml"))
    assert p.path == "convergence" and "expression term well[1]" in p.message
