"""The rotation: block of case files: validation (exit 2, field named), the run, the result
file and `show`, and the constants against Pekeris's rotating Morse oscillator."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc

import anharmony as ah
from anharmony.cases import CaseError, load_case, load_cases
from anharmony.cli import main
from anharmony.store import read_dataset
from test_cases_fit import _refused, _write  # refused by load_cases and by `anharmony check`

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMO = CASES / "diatomic-rotation.yaml"

HEAD = """\
schema: 1
title: rotating Morse
units: molecular
particle: {mass: 6.5}
well:
  - morse: {depth: 30000.0, width: 1.8, center: 1.25}
basis: {size: 80}
levels: {count: 6}
"""
NAMES = ("we", "wexe", "weye", "Be", "alpha_e", "De")


def _pekeris(depth: float, width: float, center: float, mass: float) -> dict[str, float]:
    """ωe, ωexe, ωeye, Be, αe, De (cm⁻¹) of a Morse well D(1 − e^{−a(r − re)})², from
    P. M. Morse, Phys. Rev. 34, 57 (1929) (ωe = a√(2D/μ), ωexe = ωe²/4D, ωeye = 0) and
    C. L. Pekeris, Phys. Rev. 45, 98 (1934) (Be = ħ²/2μre², αe = 6√(ωexe Be³)/ωe − 6Be²/ωe,
    De = 4Be³/ωe²); written from scipy.constants alone."""
    d_joule = depth * 100 * sc.h * sc.c
    mu = mass * sc.atomic_mass
    we = width * 1e10 / (2 * math.pi * sc.c) * math.sqrt(2 * d_joule / mu) / 100
    be = sc.hbar**2 / (2 * mu * (center * 1e-10) ** 2) / (sc.h * sc.c) / 100
    wexe = we**2 / (4 * depth)
    return {"we": we, "wexe": wexe, "weye": 0.0, "Be": be,
            "alpha_e": 6 * math.sqrt(wexe * be**3) / we - 6 * be**2 / we,
            "De": 4 * be**3 / we**2}


# --------------------------------------------------------------------------- the demo case
@pytest.fixture(scope="module")
def demo_result(tmp_path_factory):
    out = tmp_path_factory.mktemp("rotation")
    assert main(["run", str(DEMO), "-o", str(out), "--progress", "off"]) == 0
    return read_dataset(out / "diatomic-rotation.nc")


def test_demo_constants_agree_with_pekeris(demo_result):
    ds = demo_result
    case = load_case(DEMO)
    (spec,) = case.model.well
    ref = _pekeris(spec["morse"]["depth"], spec["morse"]["width"], spec["morse"]["center"],
                   case.mass)
    ratio = ref["Be"] / ref["we"]  # Be/ωe ≈ 1.7e-3 for the demo
    # ωe, ωexe, Be: Dunham's corrections Y10 − ωe, −Y20 − ωexe, Y01 − Be are of relative order
    # (Be/ωe)² (J. L. Dunham, Phys. Rev. 41, 721 (1932)); the fit itself is far below that
    for name in ("we", "wexe", "Be"):
        assert float(ds[f"constant_{name}"]) == pytest.approx(ref[name], rel=ratio**2)
    # αe, De: Pekeris expands the centrifugal term about re to second order, so his αe and De
    # carry relative corrections of order Be/ωe (Pekeris 1934; Dunham 1932)
    for name in ("alpha_e", "De"):
        assert float(ds[f"constant_{name}"]) == pytest.approx(ref[name], rel=ratio)
    # ωeye of a Morse well is zero (Morse 1929); the fit must find it within a few ulp-scale
    # standard errors of the cm⁻¹-sized levels (1e-6 cm⁻¹: far below ωexe² / ωe ~ 0.07)
    assert abs(float(ds.constant_weye)) < 1e-6
    for name in NAMES:  # every constant has a positive, finite standard error
        assert 0 < float(ds[f"constant_{name}_uncertainty"]) < 1e-6


def test_demo_levels_are_the_radial_channels_l_equal_J(demo_result):
    ds = demo_result
    assert ds.rovib_energy.dims == ("rovib_J", "rovib_v")
    assert ds.rovib_J.values.tolist() == [0, 1, 2, 3, 4]
    assert ds.rovib_energy.attrs["units"] == "cm-1"
    for name in NAMES:
        assert ds[f"constant_{name}"].attrs["units"] == "cm-1"
        assert ds[f"constant_{name}_uncertainty"].attrs["units"] == "cm-1"
    # independent check of each level: scipy's tridiagonal eigensolver on finite-difference
    # grids of the radial equation −ħ²/2μ u'' + [V + ħ²J(J+1)/2μr²] u = E u with the h² error
    # removed by Richardson extrapolation from h and h/2 (common practice, no source); what is
    # left is O(h⁴) ~ 1e-4 cm⁻¹ at these grids, hence 1e-2 cm⁻¹
    from scipy.linalg import eigh_tridiagonal

    case = load_case(DEMO)
    kin = sc.hbar**2 / (2 * case.mass * sc.atomic_mass * 1e-20) / (100 * sc.h * sc.c)

    def grid(j: int, points: int) -> np.ndarray:
        r = np.linspace(0.4, 4.0, points + 2)[1:-1]
        h = r[1] - r[0]
        pot = 30000.0 * (1 - np.exp(-1.8 * (r - 1.25))) ** 2 + kin * j * (j + 1) / r**2
        return eigh_tridiagonal(2 * kin / h**2 + pot, np.full(r.size - 1, -kin / h**2),
                                select="i", select_range=(0, 5))[0]

    for i, j in enumerate(ds.rovib_J.values):
        coarse, fine = grid(int(j), 3999), grid(int(j), 7999)  # h and h/2 on the same ends
        np.testing.assert_allclose(ds.rovib_energy.values[i], (4 * fine - coarse) / 3,
                                   atol=1e-2)
    # J = 0: the exact Morse levels ωe(v + ½) − ωexe(v + ½)² (Morse 1929), the well's value at
    # r = 0 (2e6 cm⁻¹) making the r > 0 boundary negligible; 1e-6 cm⁻¹: the case's basis error
    ref = _pekeris(30000.0, 1.8, 1.25, case.mass)
    x = np.arange(6) + 0.5
    np.testing.assert_allclose(ds.rovib_energy.values[0], ref["we"] * x - ref["wexe"] * x**2,
                               atol=1e-6)
    # the term values start at the lowest level
    assert float(ds.rovib_term_value.min()) == 0.0
    np.testing.assert_allclose(ds.rovib_term_value.values,
                               ds.rovib_energy.values - ds.rovib_energy.values[0, 0])


def test_demo_round_trip_and_show(demo_result, tmp_path, capsys):
    ds = demo_result
    # the stored levels are those of the core's call with the case's settings
    case = load_case(DEMO)
    rv = ah.rovibrational(case.well_at(None), J=[0, 1, 2, 3, 4], levels=6, units="molecular",
                          mass=case.mass, size=80)
    np.testing.assert_allclose(ds.rovib_energy.values, rv.energies, rtol=1e-12)
    path = tmp_path / "copy.nc"
    ds.to_netcdf(path)
    back = read_dataset(path)
    for name in ("rovib_energy", "rovib_term_value",
                 *(f"constant_{n}" for n in NAMES), *(f"constant_{n}_uncertainty" for n in NAMES)):
        np.testing.assert_array_equal(back[name].values, ds[name].values)
        assert back[name].attrs["units"] == ds[name].attrs["units"]
    capsys.readouterr()
    assert main(["show", str(path)]) == 0
    out = capsys.readouterr().out
    assert "rovibrational levels E(v, J) in cm⁻¹" in out
    assert "J=4" in out
    line = next(x for x in out.splitlines() if x.strip().startswith("Be "))
    assert f"{float(ds.constant_Be):.10g}" in line and "±" in line


# --------------------------------------------------------------------------- refused cases
def test_rotation_needs_3d(tmp_path, capsys):
    err = _refused(tmp_path, HEAD + "space: {dimension: 1}\nrotation: {J: [0, 1, 2]}\n", capsys)
    assert "case.yaml:" in err and "rotation" in err and "3D" in err


def test_rotation_refuses_spin_and_l(tmp_path, capsys):
    err = _refused(tmp_path, HEAD + "space: {dimension: 3, spin: 1/2}\nrotation: {J: [0, 1, 2]}\n",
                   capsys)
    assert "space.spin" in err and "no spin" in err
    err = _refused(tmp_path, HEAD + "space: {dimension: 3, l: 1}\nrotation: {J: [0, 1, 2]}\n",
                   capsys)
    assert "space.l" in err and "l = J" in err


def test_rotation_refuses_scan(tmp_path, capsys):
    err = _refused(tmp_path, HEAD + "rotation: {J: [0, 1, 2]}\n"
                   "scan: {parameter: coupling, values: [0.5, 1.0]}\n", capsys)
    assert "scan" in err and "does not combine" in err


@pytest.mark.parametrize("J, words", [
    ("[0, -1, 2]", "must be at least 0"),
    ("[0, 1.5, 2]", "must be an integer"),
    ("[0, 1, 1]", "twice"),
    ("[0, 1]", "at least 3 values of J"),
    ("{from: 0, to: 1}", "at least 3 values of J"),
    ("{from: 4, to: 2}", "to must not be below from"),
    ("[]", "at least one J"),
])
def test_rotation_refuses_bad_J(tmp_path, capsys, J, words):
    err = _refused(tmp_path, HEAD + f"rotation: {{J: {J}}}\n", capsys)
    assert "rotation.J" in err and words in err


def test_rotation_needs_four_levels(tmp_path, capsys):
    text = HEAD.replace("count: 6", "count: 3") + "rotation: {J: [0, 1, 2]}\n"
    err = _refused(tmp_path, text, capsys)
    assert "levels.count" in err and "at least 4" in err


def test_rotation_line_numbers(tmp_path, capsys):
    err = _refused(tmp_path, HEAD + "rotation:\n  J: [0, 1]\n", capsys)
    assert "case.yaml:10" in err  # the line of J


# (field path, text in HEAD + ROTATION, bad replacement): every key of the rotation: block
# (test_cases_fields checks that the schema's keys are covered; rotation cannot join its scan)
ROTATION = "rotation:\n  J: {from: 0, to: 4}\n"
BAD_ROTATION = [
    ("rotation.J.from", "from: 0", "from: -1"),
    ("rotation.J.to", "to: 4", "to: four"),
]


@pytest.mark.parametrize(("path", "good", "bad"), BAD_ROTATION, ids=[b[0] for b in BAD_ROTATION])
def test_a_bad_rotation_key_names_file_line_and_field(tmp_path, path, good, bad):
    assert load_case(_write(tmp_path, HEAD + ROTATION, "good.yaml")).model.rotation.values() \
        == [0, 1, 2, 3, 4]
    p = _write(tmp_path, HEAD + ROTATION.replace(good, bad))
    with pytest.raises(CaseError) as info:
        load_cases([p])
    (q,) = info.value.problems
    assert q.path == path and q.line == 10
    assert str(q).startswith(f"{p}:10:{q.column}: {path}: ")
