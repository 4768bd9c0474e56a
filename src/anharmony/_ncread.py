"""A plain, xarray-free reader of result files for the fast read-only paths (``show``).

:func:`load_plain` reads every variable and attribute of a netCDF file with netCDF4 alone
into a :class:`PlainDataset`, which offers the part of the :class:`xarray.Dataset` interface
that the read-only commands use: ``ds.sizes``, ``ds.attrs``, ``ds.variables``, ``name in ds``,
``ds[name]`` and ``ds.name``, each variable with ``values``, ``dims``, ``attrs``, ``dtype``,
``ndim`` and ``shape``. The values are decoded as xarray decodes the files the store writes
(CF ``_FillValue`` to NaN, the ``dtype="bool"`` marker to bool, no scaling), so both readers
give the same numbers. Only :func:`anharmony.store.read_dataset` calls it (the store stays the
only reader of result files).
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import numpy as np

__all__ = ["PlainDataset", "PlainVariable", "load_plain"]

# attributes xarray moves into a variable's encoding on read (not shown in .attrs)
_ENCODING_ATTRS = frozenset({"_FillValue", "missing_value", "dtype", "coordinates",
                             "_Unsigned", "_Encoding"})


class PlainVariable:
    """One variable: its values (a numpy array), dimension names and attributes."""

    __slots__ = ("attrs", "dims", "name", "values")

    def __init__(self, name: str, dims: tuple[str, ...], values: np.ndarray,
                 attrs: dict[str, Any]) -> None:
        self.name, self.dims, self.values, self.attrs = name, dims, values, attrs

    @property
    def dtype(self) -> np.dtype:
        return self.values.dtype

    @property
    def ndim(self) -> int:
        return self.values.ndim

    @property
    def shape(self) -> tuple[int, ...]:
        return self.values.shape

    def __array__(self, dtype=None, copy=None):
        return self.values if dtype is None else self.values.astype(dtype)

    def __float__(self) -> float:
        return float(self.values)

    def __int__(self) -> int:
        return int(self.values)

    def __len__(self) -> int:
        return len(self.values)

    def __repr__(self) -> str:
        return f"<PlainVariable {self.name} {self.dims} {self.dtype}>"


class PlainDataset:
    """Variables, dimension sizes and global attributes of one file, all in memory."""

    def __init__(self, variables: dict[str, PlainVariable], sizes: dict[str, int],
                 attrs: dict[str, Any]) -> None:
        self.variables, self.sizes, self.attrs = variables, sizes, attrs

    def __contains__(self, name: object) -> bool:
        return name in self.variables

    def __getitem__(self, name: str) -> PlainVariable:
        return self.variables[name]

    def __getattr__(self, name: str) -> PlainVariable:
        variables = self.__dict__.get("variables", {})
        if name in variables:
            return variables[name]
        raise AttributeError(name)

    def __iter__(self) -> Iterator[str]:
        return iter(self.variables)

    def __repr__(self) -> str:
        return f"<PlainDataset {dict(self.sizes)}: {', '.join(self.variables)}>"


def _decode(var: Any) -> tuple[np.ndarray, dict[str, Any]]:
    attrs = {k: var.getncattr(k) for k in var.ncattrs()}
    values = np.asarray(var[...])
    fill = attrs.get("_FillValue", attrs.get("missing_value"))
    if fill is not None and values.dtype.kind in "iuf":
        # xarray's CF masking: a variable with a fill value is floating point (float32 for
        # integers of up to 2 bytes, float64 otherwise) with NaN where it holds the fill
        hole = values == fill
        if values.dtype.kind != "f":
            values = values.astype(np.float32 if values.dtype.itemsize <= 2 else np.float64)
        elif hole.any():
            values = values.copy()
        values[hole] = np.nan
    if attrs.get("dtype") == "bool" and values.dtype.kind in "iu":
        values = values.astype(bool)
    if values.dtype == object and all(isinstance(v, str) for v in values.flat):
        values = values.astype(str)  # variable-length text: fixed-width, as xarray gives it
    return values, {k: v for k, v in attrs.items() if k not in _ENCODING_ATTRS}


def load_plain(path: Any) -> PlainDataset:
    """Read a whole netCDF file with netCDF4 (no xarray) into a :class:`PlainDataset`.

    Raises whatever netCDF4 raises on an unreadable file (OSError, RuntimeError, ValueError);
    :func:`anharmony.store.read_dataset` turns those into its one error.
    """
    import netCDF4

    with netCDF4.Dataset(path) as f:
        f.set_auto_mask(False)  # masking as xarray does it, in _decode
        sizes = {name: len(dim) for name, dim in f.dimensions.items()}
        variables = {}
        for name, var in f.variables.items():
            values, attrs = _decode(var)
            variables[name] = PlainVariable(name, tuple(var.dimensions), values, attrs)
        attrs = {k: f.getncattr(k) for k in f.ncattrs()}
    return PlainDataset(variables, sizes, attrs)
