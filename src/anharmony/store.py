"""Result files (DESIGN §6): building, writing and reading the dataset of one case.

The runner fills a :class:`CaseResult` with plain numpy arrays; :func:`build_dataset` turns it
into an :class:`xarray.Dataset` with CF ``units`` and ``long_name`` on every variable and the
global attributes of DESIGN §6; :func:`write_dataset` writes it with netCDF4 to a temporary
file in the target folder and renames it into place; :func:`read_dataset` loads a file and
checks its result-schema version.

xarray and netCDF4 are imported inside the functions that need them, so that
``import anharmony`` stays free of them.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ._atomic import atomic_write
from .errors import ResultFileError

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

    from .cases import Case

__all__ = [
    "CORE_NAMES",
    "RESULT_SCHEMA",
    "CaseResult",
    "ResultFileError",
    "build_dataset",
    "read_dataset",
    "result_attrs",
    "sanitize_attrs",
    "scan_units",
    "write_dataset",
]

RESULT_SCHEMA = 1  # version of the result-file layout; stored as attribute `anharmony_schema`
CONVENTIONS = "CF-1.11"
TEMP_SUFFIX = ".nc.tmp"  # temporary files are ".<name>.<random>.nc.tmp" in the target folder

# Every name of DESIGN §6 that a result file carries.
CORE_NAMES = (
    "scan_value", "l", "label", "energy", "bound", "converged", "reference_energy", "shift",
    "series_coefficient", "series_partial_sum", "series_resummed", "error_estimate",
    "frequency", "length",
)




@dataclass(frozen=True, eq=False)
class CaseResult:
    """The numbers of one finished case, as plain arrays (S scan points, C channels, L levels).

    Attributes
    ----------
    scan_value : ndarray (S,)
    l : ndarray of int (C,)
        ``-1`` for the 1D basis without symmetry.
    j : ndarray (C,) or None
        Only with spin.
    label : list of str (C,)
    level_labels : list of list of str (C, L) or None
        Spectroscopic label of every level (``1d5/2``, ``v=3``); stored as ``level_label``.
    energy, reference_energy, error_estimate : ndarray (S, C, L)
    bound, converged : ndarray of bool (S, C, L)
    frequency, length : ndarray (S,)
        ħω and b of the basis used at each scan point.
    center, v_min, reference_frequency, reference_length : ndarray (S,)
        The reference oscillator of each scan point (its ħω and b default to the basis').
    reference_method, reference_reason : list of str (S,)
    threshold : ndarray (S, C)
    basis_size : int
    series_coefficient, series_partial_sum : ndarray (S, C, L, K+1), K+1 = 0 without series
    series_resummed : ndarray (S, C, L, M) for the methods in ``resum_methods``
    series_optimal, series_optimal_error : ndarray (S, C, L)
    series_optimal_order : ndarray of int (S, C, L), −1 where there is none
    convergence_sizes : ndarray of int (B,)
        The ``basis_size`` axis of the convergence study (empty without one).
    convergence : mapping
        Variables of the convergence study, ``name → (dims, values, attrs)`` with dims
        starting ``("scan", "channel")`` (empty without a study); ``attrs`` carry ``units``
        and ``long_name``.
    notes : list of str
        Remarks on how numbers were obtained (stored in the ``comment`` attribute).
    warnings : list of str
        One line per level that is not converged (stored in ``convergence_warnings``).
    """

    scan_value: np.ndarray
    l: np.ndarray
    j: np.ndarray | None
    label: Sequence[str]
    energy: np.ndarray
    bound: np.ndarray
    converged: np.ndarray
    reference_energy: np.ndarray
    error_estimate: np.ndarray
    frequency: np.ndarray
    length: np.ndarray
    center: np.ndarray
    v_min: np.ndarray
    reference_method: Sequence[str]
    reference_reason: Sequence[str]
    threshold: np.ndarray
    basis_size: int
    series_coefficient: np.ndarray
    series_partial_sum: np.ndarray
    series_resummed: np.ndarray
    resum_methods: Sequence[str]
    series_optimal: np.ndarray
    series_optimal_error: np.ndarray
    series_optimal_order: np.ndarray
    reference_frequency: np.ndarray | None = None
    reference_length: np.ndarray | None = None
    convergence_sizes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    convergence: Mapping[str, tuple[tuple[str, ...], np.ndarray, Mapping[str, Any]]] = field(
        default_factory=dict)
    notes: Sequence[str] = ()
    warnings: Sequence[str] = ()
    level_labels: Sequence[Sequence[str]] | None = None  # (C, L) spectroscopic labels


# --------------------------------------------------------------------------- attributes
def sanitize_attrs(attrs: Mapping[Any, Any]) -> dict[str, Any]:
    """Attributes netCDF4 can store: str keys; bool → 0/1; None dropped; dict → JSON text.

    numpy scalars become Python numbers, lists/tuples of numbers become arrays and lists of
    strings a single comma-separated string (netCDF4 has no list-of-strings attribute that
    every reader understands).
    """
    out: dict[str, Any] = {}
    for key, value in attrs.items():
        if value is None:
            continue
        k = str(key)
        if isinstance(value, (bool, np.bool_)):
            out[k] = int(value)
        elif isinstance(value, Mapping):
            out[k] = json.dumps(value, sort_keys=True, default=str)
        elif isinstance(value, np.generic):
            out[k] = value.item() if not isinstance(value, np.bool_) else int(value)
        elif isinstance(value, (list, tuple)):
            if all(isinstance(v, str) for v in value):
                out[k] = ", ".join(value)
            elif all(isinstance(v, (int, float, np.number)) and not isinstance(v, bool)
                     for v in value):
                out[k] = np.asarray(value)
            else:
                out[k] = json.dumps(list(value), default=str)
        elif isinstance(value, (str, int, float, np.ndarray, bytes)):
            out[k] = value
        else:
            out[k] = str(value)
    return out


def _power(unit: str, p: float) -> str:
    if p == 0:
        return ""
    q = int(p) if float(p).is_integer() else p
    return unit if q == 1 else f"{unit}{q}"


def _compose(energy: str, length: str, e: float, l_pow: float) -> str:
    if energy == "1" and length == "1":
        return "1"
    parts = [s for s in (_power(energy, e), _power(length, l_pow)) if s]
    return " ".join(parts) or "1"


def scan_units(case: Case) -> tuple[str, str]:
    """CF units and a long name of the scanned parameter."""
    u = case.units
    t = case.scan_target
    path = case.scan_parameter
    if t.kind == "coupling":
        return "1", "coupling lambda of H = H_ref + lambda (V - V_ref)"
    if t.kind == "setting":
        table = {("particle", "mass"): (u.mass, "particle mass"),
                 ("reference", "frequency"): (u.energy, "hbar*omega of the reference oscillator"),
                 ("reference", "length"): (u.length, "length of the reference oscillator"),
                 ("reference", "center"): (u.length, "centre of the reference oscillator"),
                 ("basis", "length"): (u.length, "oscillator length of the basis")}
        unit, name = table[t.keys]
        return ("1" if u.energy == "1" else unit), name
    term, name, *sub = t.keys
    params = case.model.well[t.term][term] or {}
    dims = {"depth": (1, 0), "frequency": (1, 0), "stiffness": (1, -2), "radius": (0, 1),
            "diffuseness": (0, 1), "range": (0, 1), "waist": (0, 1), "center": (0, 1),
            "r0": (0, 1), "length": (0, 1), "width": (0, -1), "mass_number": (0, 0),
            "charge": (0, 0), "exponent": (0, 0)}
    if name == "strength":
        dim = (1, 0) if term == "spin_orbit" else (1, -float(params.get("exponent", 0)))
    elif name == "coefficients":
        dim = (1, -float(sub[0]))
    elif name == "parameters":
        return "1", f"parameter {sub[0]} of the formula of {path.split('.')[0]}"
    else:
        dim = dims.get(name, (0, 0))
    return _compose(u.energy, u.length, *dim), f"{name} of the {term} term {path.split('.')[0]}"


# --------------------------------------------------------------------------- dataset
def _float_attrs(units: str, long_name: str, **extra: Any) -> dict[str, Any]:
    return {"units": units, "long_name": long_name, **extra}


def build_dataset(case: Case, result: CaseResult, *, history: str | None = None
                  ) -> xr.Dataset:
    """The dataset of DESIGN §6 for one case.

    Parameters
    ----------
    case
        The validated case (its text, units and settings go into the attributes).
    result
        The numbers.
    history
        One line of the ``history`` attribute after its ISO-8601 timestamp (default: the
        command that made it).
    """
    import xarray as xr

    from ._version import __version__

    u = case.units
    e_units, l_units = u.energy, u.length
    e_long = u.energy_long
    n = result.energy.shape[2]
    k = result.series_coefficient.shape[-1]
    methods = list(result.resum_methods)
    s_units, s_long = scan_units(case)

    coords: dict[str, Any] = {
        "scan_value": ("scan", np.asarray(result.scan_value, dtype=float),
                       _float_attrs(s_units, s_long, parameter=case.scan_parameter)),
        "l": ("channel", np.asarray(result.l, dtype=np.int64),
              {"units": "1", "long_name": "angular quantum number l (1D: parity 0 even, "
               "1 odd; -1 the basis without symmetry; 2D: |m|)"}),
        "label": ("channel", np.asarray([str(x) for x in result.label], dtype=str),
                  {"units": "1", "long_name": "channel label"}),
        "level": ("level", np.arange(n, dtype=np.int64),
                  {"units": "1", "long_name": "level index in the channel from 0 (the lowest); "
                   "spectroscopic n is this plus 1"}),
        "order": ("order", np.arange(k, dtype=np.int64),
                  {"units": "1", "long_name": "order k of the Rayleigh-Schroedinger series"}),
        "method": ("method", np.asarray(methods, dtype=str),
                   {"units": "1", "long_name": "resummation method"}),
    }
    if result.j is not None:
        coords["j"] = ("channel", np.asarray(result.j, dtype=float),
                       {"units": "1", "long_name": "total angular momentum j"})
    sizes = np.asarray(result.convergence_sizes, dtype=np.int64)
    if sizes.size:
        coords["basis_size"] = ("basis_size", sizes,
                                {"units": "1", "long_name": "number of basis states per channel"})

    lev = ("scan", "channel", "level")
    flag = {"units": "1", "flag_values": np.array([0, 1], dtype=np.int8)}
    data: dict[str, Any] = {
        "energy": (lev, result.energy, _float_attrs(e_units, f"eigenvalue of the full well; "
                                                    f"{e_long}")),
        "bound": (lev, np.asarray(result.bound, dtype=np.int8),
                  {**flag, "long_name": "level below the threshold (1) or a discretised-"
                   "continuum state (0)", "flag_meanings": "continuum bound"}),
        "converged": (lev, np.asarray(result.converged, dtype=np.int8),
                      {**flag, "long_name": "error_estimate below the case tolerance "
                       f"{case.model.convergence.tolerance:g}",
                       "flag_meanings": "not_converged converged"}),
        "reference_energy": (lev, result.reference_energy,
                             _float_attrs(e_units, "level of the reference oscillator, "
                                          "v_min + hbar*omega*(oscillator quantum number)")),
        "shift": (lev, result.energy - result.reference_energy,
                  _float_attrs(e_units, "anharmonic shift: energy - reference_energy")),
        "error_estimate": (lev, result.error_estimate,
                           _float_attrs(e_units, "estimated |energy - exact eigenvalue|",
                                        comment=_error_comment(result))),
        "series_coefficient": ((*lev, "order"), result.series_coefficient,
                               _float_attrs(e_units, "Rayleigh-Schroedinger coefficient E_k "
                                            "of the series in lambda")),
        "series_partial_sum": ((*lev, "order"), result.series_partial_sum,
                               _float_attrs(e_units, "partial sum of E_i for i <= k at "
                                            "lambda = 1")),
        "series_resummed": ((*lev, "method"), result.series_resummed,
                            _float_attrs(e_units, "resummed series at lambda = 1")),
        "series_optimal": (lev, result.series_optimal,
                           _float_attrs(e_units, "optimally truncated series at lambda = 1")),
        "series_optimal_error": (lev, result.series_optimal_error,
                                 _float_attrs(e_units, "smallest term of the series (error "
                                              "estimate of the optimal truncation)")),
        "series_optimal_order": (lev, np.asarray(result.series_optimal_order, dtype=np.int16),
                                 {"units": "1", "long_name": "order of the optimal truncation "
                                  "(-1: none)"}),
        "frequency": ("scan", result.frequency,
                      _float_attrs(e_units, "hbar*omega of the oscillator basis")),
        "length": ("scan", result.length,
                   _float_attrs(l_units, "oscillator length b of the basis")),
        "reference_frequency": ("scan", _or(result.reference_frequency, result.frequency),
                                _float_attrs(e_units, "hbar*omega of the reference oscillator")),
        "reference_length": ("scan", _or(result.reference_length, result.length),
                             _float_attrs(l_units, "length b of the reference oscillator")),
        "reference_center": ("scan", result.center,
                             _float_attrs(l_units, "centre of the reference oscillator")),
        "reference_v_min": ("scan", result.v_min,
                            _float_attrs(e_units, "value of the well at the reference centre")),
        "reference_method": ("scan", np.asarray(list(result.reference_method), dtype=str),
                             {"units": "1", "long_name": "how the reference was chosen: "
                              "harmonic, variational or given"}),
        "threshold": (("scan", "channel"), result.threshold,
                      _float_attrs(e_units, "threshold of the continuum, lim V at infinity")),
    }
    if result.level_labels is not None:
        data["level_label"] = (("channel", "level"),
                               np.asarray([[str(t) for t in row] for row in result.level_labels],
                                          dtype=str),
                               {"units": "1", "long_name": "spectroscopic label of the level "
                                "(1D: v, the oscillator quantum number)"})
    for name, (dims, values, var_attrs) in result.convergence.items():
        if name in data or name in coords:
            raise ValueError(f"{name}: a convergence variable may not replace a core variable")
        if "basis_size" in dims and not sizes.size:
            raise ValueError(f"{name}: has a basis_size axis but the result has no sizes")
        data[name] = (tuple(dims), values, dict(var_attrs))

    reasons = sorted(set(result.reference_reason))
    now = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()
    attrs = {
        "Conventions": CONVENTIONS,
        "title": case.model.title or Path(case.file).stem,
        "institution": "",
        "source": f"anharmony {__version__}",
        "history": f"{now} {history or 'anharmony run ' + case.name}",
        "references": "",
        "comment": "; ".join(result.notes),
        "anharmony_schema": RESULT_SCHEMA,
        "unit_system": u.name,
        "energy_units": e_units,
        "length_units": l_units,
        "particle_mass": case.mass if case.mass is not None else u.default_mass,
        "particle_mass_units": u.mass,
        "dimension": case.dimension,
        "basis_size": int(result.basis_size),
        "tolerance": case.model.convergence.tolerance,
        "convergence": _convergence_mode(case),
        "cross_check": int(bool(case.model.convergence.cross_check
                                and case.model.convergence.study)),
        "convergence_warnings": "\n".join(result.warnings),
        "reference_reason": " | ".join(reasons),
        "scan_parameter": case.scan_parameter,
        "case_file": case.file,
        "case_index": -1 if case.index is None else int(case.index),
        "case": case.text,
    }
    attrs = {k: v for k, v in attrs.items() if v != ""}
    ds = xr.Dataset(
        {name: (dims, np.asarray(val), sanitize_attrs(a)) for name, (dims, val, a) in data.items()},
        coords={name: (dims, np.asarray(val), sanitize_attrs(a))
                for name, (dims, val, a) in coords.items()},
        attrs=sanitize_attrs(attrs),
    )
    _check_no_object(ds)
    return ds


def _convergence_mode(case: Case) -> str:
    """How the case's levels were checked, in words (global attribute ``convergence``)."""
    conv = case.model.convergence
    if not conv.study:
        return {"smaller_basis": "quick estimate: changes from smaller bases",
                "none": "not estimated"}[conv.method]
    what = ("study, basis grown towards the tolerance" if conv.grows else
            "study of the case's basis" + ("" if conv.scans_lengths else " at its length"))
    if conv.method != "extrapolate":
        what += f"; error_estimate: {conv.method}"
    return what + ("; with cross-check" if conv.cross_check else "")


def _or(value: np.ndarray | None, default: np.ndarray) -> np.ndarray:
    return default if value is None else value


def _error_comment(result: CaseResult) -> str:
    for note in result.notes:
        if note.startswith("error_estimate"):
            return note
    return ""


def _check_no_object(ds: xr.Dataset) -> None:
    for name, var in ds.variables.items():
        if var.dtype == object:
            raise TypeError(f"{name}: object dtype cannot be stored; convert to str or numbers")


# --------------------------------------------------------------------------- writing
def _encoding(ds: xr.Dataset) -> dict[str, dict[str, Any]]:
    enc: dict[str, dict[str, Any]] = {}
    for name in ds.coords:
        enc[str(name)] = {"_FillValue": None}
    for name, var in ds.data_vars.items():
        if var.dtype.kind == "f":
            e: dict[str, Any] = {"zlib": True, "complevel": 4, "shuffle": True}
            if not bool(np.isnan(var.values).any()):
                e["_FillValue"] = None
            enc[str(name)] = e
        elif var.dtype.kind in "iu":
            enc[str(name)] = {"_FillValue": None}
    return enc


def write_dataset(ds: xr.Dataset, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write ``ds`` to ``path`` atomically: a temporary file in the same folder, then a rename.

    Raises
    ------
    FileExistsError
        If ``path`` exists and ``overwrite`` is false.
    OSError
        If the folder cannot be written; no temporary file is left behind.
    """
    target = Path(path)
    if target.exists() and not overwrite:
        raise FileExistsError(f"{target}: exists; pass overwrite=True (--overwrite) to "
                              "replace it")
    encoding = _encoding(ds)
    return atomic_write(target, lambda tmp: ds.drop_encoding().to_netcdf(
        tmp, engine="netcdf4", format="NETCDF4", encoding=encoding), TEMP_SUFFIX)


def read_dataset(path: str | Path) -> xr.Dataset:
    """Load a result file into memory and check its result-schema version.

    Raises
    ------
    ResultFileError
        If the file is missing, is not netCDF, is not an anharmony result, or was written with
        a newer result schema.
    """
    import xarray as xr

    p = Path(path)
    if not p.is_file():
        raise ResultFileError(f"{p}: no such result file")
    try:
        ds = xr.load_dataset(p, engine="netcdf4")
    except (OSError, ValueError, RuntimeError) as exc:
        raise ResultFileError(f"{p}: not a readable netCDF file ({exc})") from None
    version = ds.attrs.get("anharmony_schema")
    if version is None:
        raise ResultFileError(f"{p}: not an anharmony result file (no anharmony_schema "
                              "attribute)")
    if isinstance(version, (np.ndarray, list)) or not float(version).is_integer():
        raise ResultFileError(f"{p}: bad anharmony_schema attribute {version!r}")
    if int(version) > RESULT_SCHEMA:
        raise ResultFileError(f"{p}: written with result schema {int(version)}; this version "
                              f"of anharmony reads up to {RESULT_SCHEMA} (upgrade anharmony)")
    return ds


def result_attrs(path: str | Path) -> dict[str, Any] | None:
    """The global attributes of an existing result (no data read), or None if unreadable."""
    try:
        import netCDF4

        with netCDF4.Dataset(path) as f:
            return {k: f.getncattr(k) for k in f.ncattrs()}
    except (OSError, RuntimeError, ValueError, ImportError):
        return None


def empty_like_series(s: int, c: int, n: int, orders: int, methods: int
                      ) -> dict[str, np.ndarray]:
    """NaN-filled series arrays of the right shapes (``orders`` coefficients)."""
    nan = math.nan
    return {
        "series_coefficient": np.full((s, c, n, orders), nan),
        "series_partial_sum": np.full((s, c, n, orders), nan),
        "series_resummed": np.full((s, c, n, methods), nan),
        "series_optimal": np.full((s, c, n), nan),
        "series_optimal_error": np.full((s, c, n), nan),
        "series_optimal_order": np.full((s, c, n), -1, dtype=np.int16),
    }
