"""Case files with ``space: {geometry: cartesian | axial}``: validated, checked and run."""

from __future__ import annotations

import textwrap
import warnings
from pathlib import Path

import numpy as np
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


def test_run_stores_the_blocks_of_a_geometry_case(tmp_path, capsys):
    # the blocks are the channels of the result (DESIGN §10); the same levels as solve_blocks
    from anharmony.geometry.by_block import solve_blocks

    path = _write(tmp_path, BEAM)
    assert main(["run", str(path), "-o", str(tmp_path), "--progress", "off"]) == 0
    ds = ah.read_dataset(tmp_path / "case.nc")
    well = ah.Well.from_terms([{"focused_beam": {"depth": 100.0, "waist": 1.0,
                                                 "rayleigh_length": 3.0}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        direct = solve_blocks(well, 3, geometry="axial", shells=10, truncation="energy",
                              levels=4)
    assert [str(x) for x in ds.label.values] == direct.labels
    np.testing.assert_array_equal(ds.energy.values[0], direct.energies)
    assert set(ds.l.values) == {-1} and "block_degeneracy" in ds


def test_check_describes_the_blocks(tmp_path, capsys):
    path = _write(tmp_path, BEAM)
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "geometry   axial" in out and "N_max = 10 (energy truncation)" in out
