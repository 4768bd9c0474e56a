"""Case files with ``space: {geometry: cartesian | axial}``: validated, refused by run."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

import anharmony as ah
from anharmony.cases import CaseError, load_cases
from anharmony.cli import main

BEAM = """\
schema: 1
title: One atom in a focused beam
space: {geometry: axial, shells: 10, truncation: energy}
well:
  - focused_beam: {depth: 100.0, waist: 1.0, rayleigh_length: 3.0}
levels: {count: 4}
"""


def _write(tmp_path: Path, text: str, name: str = "case.yaml") -> Path:
    p = tmp_path / name
    p.write_text(textwrap.dedent(text), encoding="utf-8")
    return p


def _problems(path: Path) -> list[str]:
    with pytest.raises(CaseError) as err:
        load_cases(path)
    return [str(p) for p in err.value.problems]


def test_geometry_case_is_valid_and_keeps_its_settings(tmp_path):
    (case,) = load_cases(_write(tmp_path, BEAM))
    space = case.model.space
    assert (space.geometry, space.shells, space.truncation) == ("axial", 10, "energy")


def test_central_is_the_default_geometry(tmp_path):
    text = "schema: 1\nwell:\n  - harmonic: {frequency: 1.0}\n"
    (case,) = load_cases(_write(tmp_path, text))
    assert case.model.space.geometry == "central"


def _at(text: str, needle: str) -> str:
    """``:line:col:`` of the first character of ``needle`` in ``text`` (1-based)."""
    before = text[:text.index(needle)]
    return f":{before.count(chr(10)) + 1}:{len(before) - before.rfind(chr(10))}:"


@pytest.mark.parametrize(("old", "new", "needle", "field"), [
    # each problem named at its file:line:col and field path (DESIGN §4)
    ("geometry: axial,", "geometry: axial, dimension: 2,", "2,", "space.dimension: the axial"),
    ("geometry: axial,", "geometry: axial, l: [0, 1],", "[0, 1]", "space.l: the axial"),
    ("geometry: axial,", "geometry: axial, spin: 1/2,", "1/2", "space.spin: the axial"),
    ("geometry: axial,", "geometry: spherical,", "spherical", "space.geometry: must be one"),
    ("shells: 10", "shells: -1", "-1", "space.shells:"),
    ("shells: 10", "shells: 4.5", "4.5", "space.shells:"),
    ("truncation: energy", "truncation: states", "states", "space.truncation:"),
    ("levels: {count: 4}", "basis: {size: 30}", "30", "basis.size: the axial basis"),
    ("levels: {count: 4}", "reference: {frequency: 1.0}", "{frequency", "reference: the"),
    ("geometry: axial,", "geometry: central,", "10", "space.shells: applies to"),
])
def test_bad_geometry_settings_are_named_with_their_position(tmp_path, old, new, needle,
                                                             field):
    assert old in BEAM
    text = BEAM.replace(old, new)
    problems = _problems(_write(tmp_path, text))
    where = _at(text, needle) + " " + field
    assert any(where in p for p in problems), (where, problems)


def test_a_term_that_breaks_the_axial_symmetry_is_named(tmp_path):
    text = BEAM.replace("  - focused_beam: {depth: 100.0, waist: 1.0, rayleigh_length: 3.0}",
                        "  - harmonic: {frequency: 1.0}\n  - tilt: {force: 0.3, axis: x}")
    problems = _problems(_write(tmp_path, text))
    assert any("well[1].tilt.axis: only a term along z" in p for p in problems), problems


def test_run_refuses_a_geometry_case_with_exit_2(tmp_path, capsys):
    # never run silently as central: the result file holds (l, j) channels only (DESIGN §6)
    path = _write(tmp_path, BEAM)
    assert main(["run", str(path), "-o", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "space.geometry: axial cases are checked but not run" in err
    assert "anharmony.solve(well, 3, geometry='axial', shells=10)" in err
    assert not list(tmp_path.glob("*.nc"))
    with pytest.raises(CaseError, match=r"space\.geometry"):
        ah.run_case(path)


def test_check_describes_the_blocks(tmp_path, capsys):
    # check describes the blocks and refuses as run does (not run from case files yet)
    path = _write(tmp_path, BEAM)
    assert main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert f"{path}:" in err and "space.geometry: axial cases are checked but not run" in err
    assert "geometry   axial" in out and "N_max = 10 (energy truncation)" in out
