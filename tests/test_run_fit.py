"""Running a case with a fit: block: the run fits the well, stores the fit, shows and plots it."""

from __future__ import annotations

from pathlib import Path

from anharmony.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"

# A 1D harmonic well in oscillator units (ħ = m = 1): E_n = ħω (n + ½) exactly (any quantum
# mechanics textbook, e.g. Griffiths, Introduction to Quantum Mechanics, §2.3). The data are
# those of ħω = 1.3; the fit starts at 1.0.
CASE = """\
schema: 1
title: Fit of a harmonic well
units: oscillator
space: {dimension: 1}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.0}
basis: {size: 20}
levels: {count: 3}
fit:
  parameters:
    well[0].frequency: {start: 1.0, bounds: [0.1, 10.0]}
  data:
    - {level: 0, value: 0.65, uncertainty: 0.01, name: ground}
    - {level: 1, value: 1.95, uncertainty: 0.01}
    - {levels: [0, 2], value: 2.6, uncertainty: 0.01}
output: fit.nc
"""


def test_a_fit_case_is_never_run_without_its_fit(tmp_path, capsys):
    # regression: the run once ignored the fit: block and wrote the starting well's levels
    (tmp_path / "c.yaml").write_text(CASE)
    code = main(["run", str(tmp_path / "c.yaml")])
    err = capsys.readouterr().err
    assert code == 2 and "fit" in err
    assert not (tmp_path / "fit.nc").exists()
