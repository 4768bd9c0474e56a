"""Result files: the dataset of DESIGN §6, attributes, atomic writes and the schema check."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys
from pathlib import Path

import netCDF4
import numpy as np
import pytest
import xarray as xr

import anharmony
from anharmony.cases import load_case
from anharmony.runner import run_case
from anharmony.store import (
    CORE_NAMES,
    RESULT_SCHEMA,
    TEMP_SUFFIX,
    ResultFileError,
    read_dataset,
    sanitize_attrs,
    write_dataset,
)
from result_case import result_case

CASE = result_case("Store test", "store.nc")


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    folder = tmp_path_factory.mktemp("store")
    path = folder / "store.yaml"
    path.write_text(CASE)
    case = load_case(path)
    return case, run_case(case)


# The core names of the result-file contract (design notes §6), written out here so that a
# name dropped from store.CORE_NAMES cannot pass unnoticed.
DESIGN_CORE_NAMES = {
    "scan_value", "l", "label", "energy", "bound", "converged", "reference_energy", "shift",
    "series_coefficient", "series_partial_sum", "series_resummed", "error_estimate",
    "frequency", "length",
}


def test_every_core_name_is_present(made):
    _, ds = made
    names = set(ds.variables)
    assert names >= DESIGN_CORE_NAMES
    assert set(CORE_NAMES) >= DESIGN_CORE_NAMES
    for name in DESIGN_CORE_NAMES:  # every variable carries units and long_name (§6)
        assert "units" in ds[name].attrs and "long_name" in ds[name].attrs, name
    assert "j" in names  # spin-orbit case
    assert ds.scan_value.attrs["parameter"] == "well[0].depth"
    assert ds.scan_value.attrs["units"] == "MeV"


def test_convergence_sizes_are_stored_and_feed_the_error_estimate(made):
    _, ds = made
    assert list(ds.basis_size.values) == [6, 8]
    # sizes at the case's basis length: no basis_length axis
    assert ds.convergence_energy.dims == ("scan", "channel", "level", "basis_size")
    np.testing.assert_array_equal(ds.convergence_length.values,
                                  np.broadcast_to(ds.length.values[:, None], (2, 3)))
    # estimate: smaller_basis — error_estimate is the change from the largest listed size below
    # N = 10 (here 8); the study diagonalises its own 8-state matrix, so the two agree to
    # rounding (eigenvalues ~50 MeV, eps * 50 ≈ 1e-14 MeV; atol 1e-12 leaves a margin of 100)
    expected = abs(ds.energy - ds.convergence_energy.sel(basis_size=8))
    xr.testing.assert_allclose(ds.error_estimate, expected.drop_vars("basis_size"),
                               rtol=0, atol=1e-12)
    # Rayleigh–Ritz: a smaller basis never lies lower; 1e-12 MeV for rounding
    assert (ds.convergence_energy.sel(basis_size=6) >= ds.energy - 1e-12).all()
    assert ds.error_estimate.attrs["comment"].startswith("error_estimate: |E(N) - E(M)|")
    assert ds.attrs["convergence"].endswith("error_estimate: smaller_basis")


def test_every_variable_has_units_and_long_name(made):
    _, ds = made
    for name, var in ds.variables.items():
        assert isinstance(var.attrs.get("units"), str), name
        assert isinstance(var.attrs.get("long_name"), str) and var.attrs["long_name"], name


def test_global_attributes_follow_cf(made):
    _, ds = made
    a = ds.attrs
    assert a["Conventions"].startswith("CF-")
    assert a["title"] == "Store test"
    assert a["source"] == f"anharmony {anharmony.__version__}"
    stamp = a["history"].split(" ")[0]
    # ISO 8601 (CF §2.6.2 asks history lines to start with a timestamp)
    assert dt.datetime.fromisoformat(stamp).tzinfo is not None
    assert a["unit_system"] == "nuclear"
    assert a["case"] == CASE
    assert a["anharmony_schema"] == RESULT_SCHEMA
    for key, value in a.items():
        assert isinstance(key, str) and not isinstance(value, (bool, dict, type(None)))


def test_no_object_dtype_and_int8_flags(made):
    _, ds = made
    assert all(v.dtype != object for v in ds.variables.values())
    assert ds.bound.dtype == np.int8 and ds.converged.dtype == np.int8


def test_round_trip_is_identical(made, tmp_path):
    _, ds = made
    path = write_dataset(ds, tmp_path / "r.nc")
    back = read_dataset(path)
    xr.testing.assert_identical(ds, back)


def test_file_has_no_fill_value_on_coordinates(made, tmp_path):
    _, ds = made
    path = write_dataset(ds, tmp_path / "r.nc")
    with netCDF4.Dataset(path) as f:
        for name in ds.coords:
            assert "_FillValue" not in f.variables[name].ncattrs(), name
        assert f.variables["bound"].dtype == np.int8
        assert f.getncattr("Conventions").startswith("CF-")


def test_existing_file_is_never_overwritten_without_asking(made, tmp_path):
    _, ds = made
    path = write_dataset(ds, tmp_path / "r.nc")
    before = path.read_bytes()
    with pytest.raises(FileExistsError):
        write_dataset(ds, path)
    assert path.read_bytes() == before
    write_dataset(ds.assign_attrs(title="new"), path, overwrite=True)
    assert read_dataset(path).attrs["title"] == "new"


def test_failed_write_keeps_old_file_and_leaves_no_temp(made, tmp_path, monkeypatch):
    _, ds = made
    path = write_dataset(ds, tmp_path / "r.nc")
    before = path.read_bytes()

    def broken(self, target, *args, **kwargs):
        Path(target).write_bytes(b"half a file")
        raise KeyboardInterrupt  # as if Ctrl-C arrived in the middle of the write

    monkeypatch.setattr(xr.Dataset, "to_netcdf", broken)
    with pytest.raises(KeyboardInterrupt):
        write_dataset(ds, path, overwrite=True)
    assert path.read_bytes() == before
    assert list(tmp_path.glob("*" + TEMP_SUFFIX)) == []


def test_write_into_missing_folder_fails_cleanly(made, tmp_path):
    _, ds = made
    with pytest.raises(OSError):
        write_dataset(ds, tmp_path / "nowhere" / "r.nc")
    assert list(tmp_path.rglob("*" + TEMP_SUFFIX)) == []


def test_read_checks_the_schema_version(made, tmp_path):
    _, ds = made
    newer = write_dataset(ds.assign_attrs(anharmony_schema=RESULT_SCHEMA + 1), tmp_path / "n.nc")
    with pytest.raises(ResultFileError, match="result schema"):
        read_dataset(newer)
    foreign = tmp_path / "f.nc"
    xr.Dataset({"x": ("a", np.arange(3.0))}).to_netcdf(foreign)
    with pytest.raises(ResultFileError, match="not an anharmony result"):
        read_dataset(foreign)
    text = tmp_path / "t.nc"
    text.write_text("not netCDF")
    with pytest.raises(ResultFileError, match="not a readable netCDF"):
        read_dataset(text)
    with pytest.raises(ResultFileError, match="no such result file"):
        read_dataset(tmp_path / "absent.nc")


def test_sanitize_attrs_makes_netcdf_storable(tmp_path):
    raw = {"flag": True, "np_flag": np.bool_(False), "none": None, "map": {"b": 1, "a": [1, 2]},
           "names": ["pade", "borel_pade"], "nums": (1, 2.5), "n": np.int64(3), 4: "key"}
    clean = sanitize_attrs(raw)
    assert clean["flag"] == 1 and clean["np_flag"] == 0 and "none" not in clean
    assert json.loads(clean["map"]) == {"a": [1, 2], "b": 1}
    assert clean["names"] == "pade, borel_pade" and clean["4"] == "key"
    # netCDF4 accepts every value (it rejects bool, None and dict: PITFALLS §1)
    xr.Dataset(attrs=clean).to_netcdf(tmp_path / "a.nc")
    back = xr.load_dataset(tmp_path / "a.nc")
    np.testing.assert_array_equal(back.attrs["nums"], [1.0, 2.5])


def test_import_anharmony_leaves_io_libraries_out():
    code = ("import sys, anharmony, anharmony.cases as _c, anharmony.runner as _r, "
            "anharmony.store as _s, anharmony.cli as _cli; "
            "bad = [m for m in ('xarray', 'matplotlib', 'netCDF4', 'distributed', 'dask') "
            "if m in sys.modules]; print(bad)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, timeout=120).stdout.strip()  # a hang fails
    assert out == "[]"
    out = subprocess.run([sys.executable, "-c", "import sys, anharmony; print("
                          "[m for m in ('xarray', 'yaml', 'matplotlib', 'pydantic') "
                          "if m in sys.modules])"], capture_output=True, text=True,
                         check=True, timeout=120).stdout.strip()
    assert out == "[]"


def test_a_nuclear_case_stores_the_shell_model_letters(tmp_path):
    # Nuclear units label orbits in the shell-model letters, j kept after i: l = 7, j = 15/2
    # is 1j15/2 (Bohr & Mottelson, "Nuclear Structure" vol. I (1969); Ring & Schuck, "The
    # Nuclear Many-Body Problem" (1980), ch. 2; quoted from memory as in tests/test_labels.py),
    # where the atomic letters would write 1k15/2.
    p = tmp_path / "j.yaml"
    p.write_text("""\
schema: 1
title: an l = 7 orbit
units: nuclear
space: {dimension: 3, l: [7], spin: 1/2}
well:
  - woods_saxon: {depth: 51.0, r0: 1.27, mass_number: 208, diffuseness: 0.67}
  - spin_orbit: {strength: 22.0, r0: 1.27, mass_number: 208, diffuseness: 0.67}
reference: {frequency: 6.9}
basis: {size: 20}
levels: {count: 1}
output: j.nc
""")
    case = load_case(p)
    ds = run_case(case)
    labels = dict(zip(ds.j.values.tolist(), ds.level_label.values[:, 0].tolist(), strict=True))
    assert labels == {7.5: "1j15/2", 6.5: "1j13/2"}
    assert sorted(ds.label.values.tolist()) == ["j13/2", "j15/2"]
    with pytest.warns(anharmony.ConvergenceWarning, match=r"^j15/2: level\(s\) 1j15/2 "):
        spec = anharmony.solve(case.well_at(None), 3, 7, 7.5, size=20, units="nuclear",
                               levels=1, reference={"frequency": 6.9})  # 20 states: too few
    assert spec.labels == ("1j15/2",)
