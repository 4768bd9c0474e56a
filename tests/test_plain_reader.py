"""The xarray-free reader of result files (store.read_dataset(plain=True), used by ``show``).

Reference: xarray's own decoding of the same file (xarray.load_dataset, CF conventions:
``_FillValue`` masking, the ``dtype="bool"`` marker); every value, dimension and attribute
must agree (common practice, no source).
"""

from __future__ import annotations

import subprocess
import sys

import netCDF4
import numpy as np
import pytest
import xarray as xr

from anharmony.cases import load_case
from anharmony.runner import run_case
from anharmony.store import ResultFileError, read_dataset, write_dataset
from result_case import result_case

CASE = result_case("Plain reader test", "plain.nc")


def _same_attrs(a, b) -> bool:
    return set(a) == set(b) and all(np.array_equal(np.asarray(a[k]), np.asarray(b[k]))
                                    and type(a[k]) is type(b[k]) for k in a)


@pytest.fixture(scope="module")
def result_file(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plain")
    (folder / "plain.yaml").write_text(CASE)
    return write_dataset(run_case(load_case(folder / "plain.yaml")), folder / "plain.nc")


def test_both_readers_give_the_same_variables_values_and_attributes(result_file):
    ref = read_dataset(result_file)
    got = read_dataset(result_file, plain=True)
    assert dict(got.sizes) == dict(ref.sizes)
    assert _same_attrs(got.attrs, ref.attrs)
    assert set(got.variables) == set(ref.variables)
    for name, var in ref.variables.items():
        mine = got[name]
        assert mine.dims == var.dims, name
        assert _same_attrs(mine.attrs, var.attrs), name
        assert mine.dtype.kind == var.dtype.kind, name
        np.testing.assert_array_equal(mine.values, var.values, err_msg=name)  # NaN == NaN
        assert getattr(got, name) is mine


def test_fill_values_and_bool_markers_decode_as_xarray_decodes_them(tmp_path):
    path = tmp_path / "codes.nc"
    with netCDF4.Dataset(path, "w") as f:
        f.createDimension("n", 4)
        v = f.createVariable("counts", "i2", ("n",), fill_value=-1)
        v[:] = np.array([3, -1, 5, 7], dtype="i2")
        w = f.createVariable("flags", "i1", ("n",))
        w.setncattr("dtype", "bool")
        w[:] = np.array([1, 0, 0, 1], dtype="i1")
        x = f.createVariable("x", "f8", ("n",), fill_value=np.nan)
        x.units = "MeV"
        x[:] = np.array([1.0, np.nan, 2.5, 3.0])
    from anharmony._ncread import load_plain

    got = load_plain(path)
    ref = xr.load_dataset(path, engine="netcdf4")
    for name in ("counts", "flags", "x"):
        assert got[name].dtype == ref[name].dtype, name
        np.testing.assert_array_equal(got[name].values, ref[name].values, err_msg=name)
        assert _same_attrs(got[name].attrs, ref[name].attrs), name


def test_the_plain_reader_keeps_the_store_checks(tmp_path, result_file):
    junk = tmp_path / "junk.nc"
    junk.write_bytes(b"not a netCDF file")
    with pytest.raises(ResultFileError, match="not a readable netCDF file"):
        read_dataset(junk, plain=True)
    damaged = tmp_path / "damaged.nc"
    ds = read_dataset(result_file).drop_vars("energy")
    ds.to_netcdf(damaged, engine="netcdf4")
    with pytest.raises(ResultFileError, match="the variable energy is missing"):
        read_dataset(damaged, plain=True)


def test_show_does_not_import_xarray(result_file):
    code = ("import sys, io, contextlib\n"
            "from anharmony.cli import main\n"
            "out = io.StringIO()\n"
            "with contextlib.redirect_stdout(out):\n"
            f"    rc = main(['show', {str(result_file)!r}])\n"
            "print(rc, 'xarray' in sys.modules, 'Plain reader test' in out.getvalue())\n")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=120, check=False)
    assert run.stdout.split() == ["0", "False", "True"], run.stderr
