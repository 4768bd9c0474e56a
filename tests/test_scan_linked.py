"""`scan.linked`: more parameters set to the scanned value at every point.

Reference: the same levels solved point by point with both parameters set by hand
(anharmony.solve, itself checked against published Woods–Saxon levels elsewhere); the
contract of DESIGN §4 for the refusals (file, line, field).
"""

from __future__ import annotations

import warnings

import numpy as np

import anharmony as ah
from anharmony.cli import main

CASE = """\
schema: 1
title: linked radius
units: nuclear
space: {dimension: 3, l: [1], j: [3/2], spin: 1/2}
well:
  - woods_saxon: {depth: 50.0, radius: 4.0, diffuseness: 0.65}
  - spin_orbit: {strength: 20.0, radius: 4.0, diffuseness: 0.65}
reference: {frequency: 12.0}
basis: {size: 20}
levels: {count: 2}
scan:
  parameter: well[0].radius
  values: [4.0, 5.0]
  linked: LINKED
output: linked.nc
"""


def test_a_linked_scan_sets_every_named_parameter(tmp_path):
    path = tmp_path / "linked.yaml"
    path.write_text(CASE.replace("LINKED", "['well[1].radius']"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        ds = ah.run_case(path)
        for k, radius in enumerate((4.0, 5.0)):
            well = ah.Well.from_terms(
                [{"woods_saxon": {"depth": 50.0, "radius": radius, "diffuseness": 0.65}},
                 {"spin_orbit": {"strength": 20.0, "radius": radius, "diffuseness": 0.65}}],
                "nuclear")
            alone = ah.solve(well, 3, 1, 1.5, size=20, units="nuclear", levels=2,
                             length=float(ds.length.values[k]))
            np.testing.assert_allclose(ds.energy.values[k, 0], alone.energies, rtol=1e-12)
    # without the link the spin–orbit radius stays 4 fm: a different level at R = 5 fm
    path.write_text(CASE.replace("  linked: LINKED\n", ""))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        unlinked = ah.run_case(path)
    assert abs(unlinked.energy.values[1, 0, 0] - ds.energy.values[1, 0, 0]) > 1e-3


def test_linked_paths_are_checked_at_their_line(tmp_path, capsys):
    path = tmp_path / "bad.yaml"
    path.write_text(CASE.replace("LINKED", "['well[0].radius', coupling, 'well[3].x']"))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err[0].startswith(f"{path}:14:") and "scan.linked[0]: " in err[0]
    assert "already scanned" in err[0]
    assert "scan.linked[1]: the coupling" in err[1]
    assert "scan.linked[2]: 'well[3].x': the well has 2 term(s)" in err[2]
