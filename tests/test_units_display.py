"""Units in the trade's spelling: one table for files and screens, display units of `show`,
rounding-level error estimates, hidden scan points, and axes named by the parameter."""

from __future__ import annotations

import math

import numpy as np
import pytest
import yaml
from scipy import constants as sc

from anharmony import units as U
from anharmony.cli import main
from anharmony.errors import InputError

RTOL_CONVERT = 1e-12  # products of two CODATA values: a few ulp of rounding
RTOL_TABLE = {2: 1e-7, 3: 1e-7, 4: 1e-4}  # columns printed to 8, 8 and 5 significant
# digits (energy, reference, shift), each side rounded once

TRAP = """\
schema: 1
title: Invented harmonic-plus-Gaussian trap for unit tests
units: trap
particle: {mass: 86.909180}
space: {dimension: 1, l: [0, 1]}
well:
  - gaussian: {depth: 100.0, waist: 0.9}
reference: {frequency: auto}
basis: {size: 24}
levels: {count: 3}
scan:
  parameter: well[0].depth
  values: {from: 50.0, to: 100.0, steps: 7}
convergence: {tolerance: 1.0e-6}
output: trap.nc
"""

QUARTIC = """\
schema: 1
title: Invented quartic oscillator for unit tests
units: oscillator
space: {dimension: 1, l: [0, 1]}
well:
  - harmonic: {frequency: 1.0}
  - power: {exponent: 4, strength: 0.0}
reference: {frequency: 1.0}
basis: {size: 16}
levels: {count: 2}
scan:
  parameter: well[1].strength
  values: [0.0, 0.1]
output: quartic.nc
"""


def _run(capsys, *argv) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def trap_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("trap")
    (d / "trap.yaml").write_text(TRAP)
    assert main(["run", "--progress", "off", str(d / "trap.yaml")]) == 0
    return d / "trap.nc"


def _rows(out: str, level: str) -> list[list[str]]:
    return [line.split() for line in out.splitlines() if line.split()[:1] == [level]]


# =========================================================================== one table
def test_file_units_are_cf_strings_and_screen_symbols_come_from_the_table(trap_file,
                                                                        monkeypatch, capsys):
    import xarray as xr

    from anharmony import plots

    ds = xr.load_dataset(trap_file)
    # CF/UDUNITS-2 spellings: "kHz" and "um" are UDUNITS prefixes of hertz and metre
    # (UDUNITS-2 prefix table; quoted from memory)
    assert ds.energy.units == "kHz" and ds.length.units == "um"
    assert "divided by the Planck constant h" in ds["shift"].long_name  # E/h, said so
    assert ds.scan_value.units == "kHz"  # a Gaussian depth is an energy
    assert ds.scan_value.display_units == U.UNIT_SYMBOLS["kHz"] == "h·kHz"
    # the same table decides the symbol of the table, the axis and the scan axis
    monkeypatch.setitem(U.UNIT_SYMBOLS, "kHz", "h·kHz*")
    monkeypatch.setitem(U.UNIT_SYMBOLS, "um", "µm*")
    code, out, _ = _run(capsys, "show", str(trap_file))
    assert code == 0 and "energies in h·kHz*" in out and "µm*" in out
    older = ds.copy()
    del older.scan_value.attrs["display_units"]  # a file of an older version: from the table
    fig = plots.make_figure(older, "flow")
    assert fig.axes[0].get_ylabel() == "energy E (h·kHz*)"
    assert fig.axes[0].get_xlabel() == "Gaussian depth V₀ (h·kHz*)"


@pytest.mark.parametrize("system", [s for s in U.SYSTEMS if s != "oscillator"])
@pytest.mark.parametrize(("e", "l"), [(1, 0), (0, 1), (1, -2), (1, -4), (0, -1)])
def test_symbols_of_composed_units_follow_the_file_string(system, e, l):
    # the screen symbol is the table's reading of the stored string, not a second spelling
    text = U.units_string(system, e, l)
    assert U.dimension_symbol(system, e, l) == U.units_symbol(text, system)
    for token in text.split():
        assert token.rstrip("-0123456789") in U.UNIT_SYMBOLS


def test_oscillator_symbols_are_hbar_omega_and_b():
    # H = ħω(a†a + ½) with lengths in b = sqrt(ħ/mω): common practice, no source
    assert U.dimension_symbol("oscillator", 1, -4) == "ħω/b⁴"
    assert U.units_string("oscillator", 1, -4) == "1"


# =========================================================================== display units
@pytest.mark.parametrize(("system", "unit", "expected"), [
    # CODATA 2018 relationships as tabulated in scipy.constants.physical_constants
    ("trap", "Hz", 1e3),  # SI prefix kilo
    ("trap", "uK", 1e3 / sc.physical_constants["kelvin-hertz relationship"][0] / 1e-6),
    ("trap", "nK", 1e3 / sc.physical_constants["kelvin-hertz relationship"][0] / 1e-9),
    ("nuclear", "keV", 1e3),
    ("molecular", "THz", 100 * sc.physical_constants["inverse meter-hertz relationship"][0]
     / 1e12),
    ("molecular", "meV", 100 / sc.physical_constants["electron volt-inverse meter "
                                                    "relationship"][0] * 1e3),
    ("atomic", "eV", sc.physical_constants["hartree-electron volt relationship"][0]),
    ("atomic", "cm-1", sc.physical_constants["hartree-inverse meter relationship"][0] / 100),
])
def test_display_factors_match_codata_relationships(system, unit, expected):
    factor, symbol = U.display_energy_factor(system, unit)
    assert factor == pytest.approx(expected, rel=RTOL_CONVERT)
    assert symbol == U.units_symbol(unit)  # the one table's symbol
    assert symbol != unit or unit in ("MeV", "keV", "eV", "meV")


def test_display_units_refuse_what_the_system_has_not():
    with pytest.raises(InputError, match="expected one of MeV, keV"):
        U.display_energy_factor("nuclear", "uK")
    with pytest.raises(InputError, match="no other energy unit"):
        U.display_energy_factor("oscillator", "Hz")


def test_show_converts_every_energy_column(trap_file, capsys):
    code, out_khz, _ = _run(capsys, "show", "--scan", "0", str(trap_file))
    assert code == 0
    code, out_uk, _ = _run(capsys, "show", "--scan", "0", "--units", "uK", str(trap_file))
    assert code == 0 and "energies in k_B·µK" in out_uk
    # E/k_B = (E/h) · h/k_B; h/k_B from CODATA (scipy.constants)
    to_uk = 1e3 * sc.h / sc.k / 1e-6
    for khz, uk in zip(_rows(out_khz, "v=0") + _rows(out_khz, "v=1"),
                       _rows(out_uk, "v=0") + _rows(out_uk, "v=1"), strict=True):
        for col in (2, 3, 4):  # energy, reference, shift
            assert float(uk[col]) == pytest.approx(float(khz[col]) * to_uk, rel=RTOL_TABLE[col])
    code, _, err = _run(capsys, "show", "--units", "MeV", str(trap_file))
    assert code == 2 and "--units: 'MeV'" in err and "Hz" in err


def test_the_convergence_tolerance_is_shown_in_the_display_units(trap_file, capsys):
    # the `conv` column compares the error with the tolerance: both in the same unit on screen
    import xarray as xr

    tol = float(xr.load_dataset(trap_file).attrs["tolerance"])  # in h·kHz
    _, out_khz, _ = _run(capsys, "show", str(trap_file))
    _, out_hz, _ = _run(capsys, "show", "--units", "Hz", str(trap_file))
    assert f"converged = error below {tol:g} h·kHz" in out_khz
    assert f"converged = error below {tol * 1e3:g} h·Hz" in out_hz  # SI prefix kilo


# =========================================================================== show details
def test_show_says_how_many_scan_points_it_hides(trap_file, capsys):
    code, out, _ = _run(capsys, "show", str(trap_file))
    assert code == 0
    shown = out.count("well[0].depth = ")
    assert shown == 3  # first, middle, last of 7
    assert "4 of 7 scan points not shown" in out and "--scan all" in out
    code, out, _ = _run(capsys, "show", "--scan", "all", str(trap_file))
    assert out.count("well[0].depth = ") == 7 and "not shown" not in out


def test_error_estimates_at_rounding_level_are_not_printed_as_numbers(tmp_path, capsys):
    import xarray as xr

    from anharmony.store import write_dataset

    (tmp_path / "q.yaml").write_text(QUARTIC)
    assert main(["run", "--progress", "off", str(tmp_path / "q.yaml")]) == 0
    ds = xr.load_dataset(tmp_path / "quartic.nc")
    err = ds.error_estimate.values.copy()
    err[:, 0, 0] = 0.0  # exact zero: "0.0e+00" would claim a measured exact answer
    err[:, 0, 1] = 2.3e-13  # rounding noise, below the floor stored next
    err[:, 1, :] = 1e-6  # a genuine estimate, far above rounding
    ds["error_estimate"] = ds.error_estimate.copy(data=err)
    ds["rounding_floor"] = (("scan", "channel"), np.full((ds.sizes["scan"], 2), 1e-12))
    write_dataset(ds, tmp_path / "edited.nc")
    code, out, _ = _run(capsys, "show", str(tmp_path / "edited.nc"))
    assert code == 0
    assert "0.0e+00" not in out and "2.3e-13" not in out
    assert "1.0e-06" in out and "<rounding" in out and "rounding floor" in out
    # the harmonic point of the unedited file: E = v + 1/2 exactly (textbook oscillator), and
    # the estimate there is pure rounding of the eigensolver
    code, out, _ = _run(capsys, "show", "--scan", "0", str(tmp_path / "quartic.nc"))
    rows = _rows(out, "v=0")
    assert float(rows[0][2]) == pytest.approx(0.5, abs=1e-12)  # eigh rounding at N = 16
    assert rows[0][6] == "<rounding"


# =========================================================================== axis labels
def test_axes_name_the_parameter_and_its_unit(tmp_path):
    import xarray as xr

    from anharmony import plots

    (tmp_path / "q.yaml").write_text(QUARTIC)
    assert main(["run", "--progress", "off", str(tmp_path / "q.yaml")]) == 0
    ds = xr.load_dataset(tmp_path / "quartic.nc")
    # g x⁴ has g in energy/length⁴: ħω/b⁴ in oscillator units (dimensional analysis)
    for kind in ("flow", "shift"):
        fig = plots.make_figure(ds, kind)
        assert fig.axes[0].get_xlabel() == "quartic strength g (ħω/b⁴)"
    data = yaml.safe_load(QUARTIC)
    data["units"] = "nuclear"
    data["reference"] = {"frequency": 10.0}
    data["well"][0] = {"harmonic": {"frequency": 10.0}}
    data["output"] = "nuclear.nc"
    (tmp_path / "n.yaml").write_text(yaml.safe_dump(data))
    assert main(["run", "--progress", "off", str(tmp_path / "n.yaml")]) == 0
    ds = xr.load_dataset(tmp_path / "nuclear.nc")
    assert ds.scan_value.units == "MeV fm-4"  # UDUNITS product and power
    fig = plots.make_figure(ds, "flow")
    assert fig.axes[0].get_xlabel() == "quartic strength g (MeV/fm⁴)"
    assert math.isfinite(float(ds.energy.values[-1, 0, 0]))
