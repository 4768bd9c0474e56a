"""Every field of the case schema refuses a bad value with file, line and field (STYLE item 5).

The expectations are our own contract (DESIGN §4: "Validation happens before any work:
unknown keys, wrong types and out-of-range values stop the run with the file, line and field
path"); positions are 1-based lines of the YAML text (YAML 1.1 spec marks, PyYAML docs).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from anharmony.cases import CaseError, CaseModel, estimate_work, load_case, load_cases
from anharmony.cases.schema import Convergence

FULL = """\
schema: 1
title: Every field
units: oscillator
particle: {mass: 1.0, name: test}
space: {geometry: central, dimension: 3, l: [0, 1], spin: 1/2, j: [0.5, 1.5]}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.1}
reference: {frequency: auto, center: null}
basis: {size: 12, length: auto}
levels: {count: 2}
scan:
  parameter: well[1].strength
  values: {from: 0.0, to: 0.2, steps: 3}
perturbation: {orders: 4, exact: auto, resum: [pade]}
convergence:
  sizes: [8, 12]
  tolerance: 1.0e-6
  grow: false
  max_size: 12
  cross_check: false
  bounds: true
  ir_length: eigenvalue
  estimate: extrapolate
filling: {particles: 4}
output: every.nc
"""

# (field path, text in FULL, bad replacement): one bad value for every field of the schema
BAD = [
    ("schema", "schema: 1", "schema: 2"),
    ("title", "title: Every field", "title: [a]"),
    ("units", "units: oscillator", "units: imperial"),
    ("particle.mass", "mass: 1.0", "mass: -1.0"),
    ("particle.name", "name: test", "name: no"),
    ("space.geometry", "geometry: central", "geometry: round"),
    # shells and truncation belong to the other geometries: written here with a bad value
    ("space.shells", "geometry: central", "geometry: central, shells: -1"),
    ("space.truncation", "geometry: central", "geometry: central, truncation: states"),
    ("space.dimension", "dimension: 3", "dimension: 4"),
    ("space.l[1]", "l: [0, 1]", "l: [0, -1]"),
    ("space.spin", "spin: 1/2", "spin: 3/2"),
    ("space.j", "j: [0.5, 1.5]", "j: [0.5, 2.0]"),
    ("well", "well:\n  - harmonic: {frequency: 1.0}\n  - power: {exponent: 4, strength: 0.1}",
     "well: []"),
    ("well[0].frequency", "frequency: 1.0}", "frequency: -1.0}"),
    ("well[1].strength", "strength: 0.1", "strength: O.1"),
    ("reference.frequency", "frequency: auto", "frequency: fast"),
    ("reference.center", "center: null", "center: left"),
    ("reference.length", "center: null", "center: null, length: 0"),
    ("basis.size", "size: 12", "size: 0"),
    ("basis.length", "length: auto", "length: -2.0"),
    ("levels.count", "count: 2", "count: yes"),
    ("scan.parameter", "parameter: well[1].strength", "parameter: [1]"),
    ("scan.values", "values: {from: 0.0, to: 0.2, steps: 3}", "values: 3"),
    ("scan.values.steps", "steps: 3", "steps: 0"),
    ("scan.values.from", "from: 0.0", "from: zero"),
    ("scan.values.to", "to: 0.2", "to: end"),
    ("scan.linked", "values: {from: 0.0, to: 0.2, steps: 3}",
     "linked: []\n  values: {from: 0.0, to: 0.2, steps: 3}"),
    ("filling.particles", "particles: 4", "particles: -1"),
    ("perturbation.orders", "orders: 4", "orders: -1"),
    ("perturbation.exact", "exact: auto", "exact: sometimes"),
    ("perturbation.resum[0]", "resum: [pade]", "resum: [magic]"),
    ("convergence.sizes[1]", "sizes: [8, 12]", "sizes: [8, 0]"),
    ("convergence.lengths[0]", "sizes: [8, 12]", "sizes: [8, 12]\n  lengths: [0.0]"),
    ("convergence.frequencies", "sizes: [8, 12]", "sizes: [8, 12]\n  frequencies: left"),
    ("convergence.tolerance", "tolerance: 1.0e-6", "tolerance: 0.0"),
    ("convergence.grow", "grow: false", "grow: 1"),
    ("convergence.max_size", "max_size: 12", "max_size: 1"),
    ("convergence.cross_check", "cross_check: false", "cross_check: maybe"),
    ("convergence.bounds", "bounds: true", "bounds: 0"),
    ("convergence.ir_length", "ir_length: eigenvalue", "ir_length: eigenvalues"),
    ("convergence.estimate", "estimate: extrapolate", "estimate: guess"),
    ("output", "output: every.nc", "output: every.txt"),
]


def _line_of(text: str, fragment: str) -> int:
    first = fragment.splitlines()[-1 if fragment.startswith("sizes:") else 0]
    return next(i for i, line in enumerate(text.splitlines(), 1) if first in line)


def test_the_full_case_is_valid(tmp_path):
    p = tmp_path / "full.yaml"
    p.write_text(FULL)
    assert load_case(p).model.basis.size == 12


def test_the_bad_values_cover_every_field_of_the_schema():
    # every key of every model of the schema appears in BAD (terms: two parameters)
    def keys(model, prefix=""):
        for name, f in model.model_fields.items():
            key = prefix + (f.alias or name)
            sub = [a for a in getattr(f.annotation, "__args__", ()) or (f.annotation,)
                   if isinstance(a, type) and hasattr(a, "model_fields")]
            if sub and key != "scan.values":
                yield from keys(sub[0], key + ".")
            else:
                yield key
    from test_cases_fit import BAD_FIT  # the fit: block cannot join FULL's scan
    from test_cases_rotation import BAD_ROTATION  # neither can rotation:

    covered = {path.split("[")[0] for path, _, _ in [*BAD, *BAD_FIT, *BAD_ROTATION]}
    assert set(keys(CaseModel)) <= covered


@pytest.mark.parametrize(("path", "good", "bad"), BAD, ids=[b[0] for b in BAD])
def test_a_bad_value_names_file_line_and_field(tmp_path, path, good, bad):
    assert good in FULL
    text = FULL.replace(good, bad, 1)
    p = tmp_path / "bad.yaml"
    p.write_text(text)
    with pytest.raises(CaseError) as info:
        load_cases([p])
    problems = info.value.problems
    assert [q.path for q in problems] == [path], [str(q) for q in problems]
    (q,) = problems
    assert q.file == str(p) and q.line == _line_of(text, bad)
    assert str(q).startswith(f"{p}:{q.line}:{q.column}: {path}: ")


@pytest.mark.parametrize(("text", "hint"), [
    ("units: nuclaer", "did you mean 'nuclear'"), ("basis: {sise: 12}", "did you mean 'size'"),
    ("convergence: {tolerence: 1.0e-6}", "did you mean 'tolerance'"),
    ("convergence: {ir_length: eigenvalues}", "did you mean 'eigenvalue'"),
])
def test_misspelt_keys_and_choices_get_a_near_miss(tmp_path, text, hint):
    key = text.split(":")[0]
    start = FULL.index(key + ":")
    end = FULL.index("\n", start) if key != "convergence" else FULL.index("output:") - 1
    p = tmp_path / "near.yaml"
    p.write_text(FULL[:start] + text + FULL[end:])
    with pytest.raises(CaseError) as info:
        load_cases([p])
    (q,) = info.value.problems
    if hint:
        assert hint in q.message


# --------------------------------------------------------------------------- work estimate
def _case(tmp_path: Path, conv: str) -> object:
    block = FULL[FULL.index("convergence:"):FULL.index("output:")]
    text = FULL.replace(block, f"convergence: {conv}\n")
    p = tmp_path / "w.yaml"
    p.write_text(text)
    return load_case(p)


def test_work_of_a_case_without_study_is_one_solve_per_task_and_the_smaller_basis(tmp_path):
    case = _case(tmp_path, "{}")
    w = estimate_work(case)
    tasks = 3 * 3  # 3 scan points × channels s1/2, p1/2, p3/2
    assert w.tasks == tasks and w.solves == 2 * tasks and w.largest_size == 12
    assert not w.upper_bound and "9 task(s)" in w.summary()


def test_work_of_a_growing_study_counts_every_rescan_up_to_the_size_limit(tmp_path):
    case = _case(tmp_path, "{tolerance: 1.0e-6, max_size: 20, bounds: false}")
    w = estimate_work(case)
    # ladder 10, 14, 20 with 7 lengths: steps rescan 1, 2, 3 sizes -> 6 × 7 = 42 solves,
    # plus the case's own basis (1 solve): per task 43
    assert w.upper_bound and w.largest_size == 20
    assert w.solves == w.tasks * 43 and "at most" in w.summary()
    assert isinstance(Convergence().settings().work(2), tuple)
