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

import dataclasses
import datetime as _dt
import json
from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ._atomic import OutputHeldError, atomic_write, claim, remove_stale_temporaries
from .axes import (  # noqa: F401  (re-exported: the store's public names)
    ScanAxis,
    energy_attrs,
    parameter_axis,
    parameter_units,
    scan_axis,
    scan_units,
)
from .errors import InputError, ResultFileError
from .results import (  # noqa: F401  (re-exported)
    CONSTANT_NAMES,
    CaseResult,
    FitOutcome,
    RotationOutcome,
    empty_like_series,
)

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

    from .cases import Case

__all__ = [
    "CORE_NAMES",
    "RESULT_SCHEMA",
    "CaseResult",
    "FitOutcome",
    "OutputHeldError",
    "ResultFileError",
    "RotationOutcome",
    "ScanAxis",
    "build_dataset",
    "energy_attrs",
    "parameter_units",
    "read_dataset",
    "result_attrs",
    "sanitize_attrs",
    "scan_axis",
    "scan_units",
    "write_dataset",
]

RESULT_SCHEMA = 1  # version of the result-file layout; stored as attribute `anharmony_schema`
CONVENTIONS = "CF-1.11"
TEMP_SUFFIX = ".nc.tmp"  # temporaries: ".<name>.<host>-<pid>.<random>.nc.tmp" beside the target



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


# Trade words of the parameters, for axis labels: "quartic strength g" (``display_name``).

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
    scan = scan_axis(case)
    if case.scan_target.kind == "coupling" and any(o != 1 for o in case.well_at(None).orders):
        scan = dataclasses.replace(scan, long_name=(
            "coupling lambda of H = H_ref + sum_k lambda**k W_k (W_1 = V_1 - V_ref, W_k = "
            "V_k the terms at perturbation order k: series_term_order)"))

    def _float_attrs(units: str, long_name: str, **extra: Any) -> dict[str, Any]:
        return energy_attrs(u, units, long_name, **extra)

    coords: dict[str, Any] = {
        "scan_value": ("scan", np.asarray(result.scan_value, dtype=float),
                       _float_attrs(scan.units, scan.long_name, parameter=case.scan_parameter,
                                    display_name=scan.display_name,
                                    display_units=scan.display_units)),
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
    for name, (dims, values, var_attrs) in {**result.convergence, **result.extra}.items():
        if name in data or name in coords:
            raise InputError(f"{name}: a convergence variable may not replace a core variable")
        if "basis_size" in dims and not sizes.size:
            raise InputError(f"{name}: has a basis_size axis but the result has no sizes")
        data[name] = (tuple(dims), values, dict(var_attrs))

    fit_attrs: dict[str, Any] = {}
    if result.fit is not None:
        fit_coords, fit_data, fit_attrs = _fit_variables(case, result.fit)
        coords.update(fit_coords)
        data.update(fit_data)
    rot_attrs: dict[str, Any] = {}
    if result.rotation is not None:
        rot_coords, rot_data, rot_attrs = _rotation_variables(u, result.rotation)
        coords.update(rot_coords)
        data.update(rot_data)

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
        **fit_attrs,
        **rot_attrs,
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


def _fit_variables(case: Case, fit: FitOutcome) -> tuple[dict, dict, dict]:
    """Coordinates, variables and global attributes of the ``fit_*`` part of a result."""
    e_units = case.units.energy

    def _float_attrs(units: str, long_name: str, **extra: Any) -> dict[str, Any]:
        return energy_attrs(case.units, units, long_name, **extra)

    units, names = [], []
    for path in fit.parameters:
        i, name = path.split("].")
        unit, long_name = parameter_units(case, int(i.removeprefix("well[")), name)
        units.append(unit)
        names.append(long_name)
    same = len(set(units)) == 1
    in_units = ({"units": units[0]} if same else {})
    where = ("" if same else "; the parameters have different units, which one CF units "
             "attribute cannot express: each is in its entry of fit_parameter_units")
    par, dat = ("fit_parameter",), ("fit_datum",)
    # a datum is an energy, a spacing (energy) or an rms radius (length)
    datum_units = [case.units.length if q == "rms_radius" else e_units for q in fit.quantities]
    one = len(set(datum_units)) == 1
    d_units = datum_units[0] if one else None
    d_where = ("" if one else "; the data have different units (energies and radii), which one "
               "CF units attribute cannot express: each is in its entry of fit_datum_units")

    def _datum_attrs(long_name: str) -> dict[str, Any]:
        if d_units is None:
            return {"long_name": long_name + d_where}
        return _float_attrs(d_units, long_name)

    coords = {
        "fit_parameter": (par, np.asarray(fit.parameters, dtype=str),
                          {"units": "1", "long_name": "path of the fitted parameter in the "
                           "case file"}),
        "fit_parameter_b": (("fit_parameter_b",), np.asarray(fit.parameters, dtype=str),
                            {"units": "1", "long_name": "path of the fitted parameter (second "
                             "axis of fit_correlation)"}),
        "fit_datum": (dat, np.asarray(fit.names, dtype=str),
                      {"units": "1", "long_name": "name of the datum (data[k] where the case "
                       "gives none)"}),
    }
    data = {
        "fit_parameter_units": (par, np.asarray(units, dtype=str),
                                {"units": "1", "long_name": "units of each fitted parameter "
                                 "(one CF units attribute per variable cannot hold mixed "
                                 "units, so fit_value and fit_uncertainty refer here)"}),
        "fit_parameter_name": (par, np.asarray(names, dtype=str),
                               {"units": "1", "long_name": "what the fitted parameter is"}),
        "fit_value": (par, np.asarray(fit.values, dtype=float),
                      {**in_units, "long_name": "best value of the fitted parameter" + where}),
        "fit_uncertainty": (par, np.asarray(fit.uncertainties, dtype=float),
                            {**in_units, "long_name": "standard uncertainty of the fitted "
                             "parameter (inf: the data cannot fix it)" + where}),
        "fit_correlation": (("fit_parameter", "fit_parameter_b"),
                            np.asarray(fit.correlation, dtype=float),
                            {"units": "1", "long_name": "correlation of the fitted parameters"}),
        "fit_quantity": (dat, np.asarray(fit.quantities, dtype=str),
                         {"units": "1", "long_name": "measured quantity: level (E_a), "
                          "spacing (E_b - E_a) or rms_radius (sqrt<r^2> of level a)"}),
        "fit_datum_units": (dat, np.asarray(datum_units, dtype=str),
                            {"units": "1", "long_name": "units of each datum (fit_measured, "
                             "fit_sigma, fit_prediction, fit_basis_error)"}),
        "fit_level_a": (dat, np.asarray(fit.levels[:, 0], dtype=np.int64),
                        {"units": "1", "long_name": "0-based index a of the level in its "
                         "channel"}),
        "fit_level_b": (dat, np.asarray(fit.levels[:, 1], dtype=np.int64),
                        {"units": "1", "long_name": "0-based index b of the upper level of a "
                         "spacing (-1 for a level)"}),
        "fit_l": (dat, np.asarray(fit.l, dtype=np.int64),
                  {"units": "1", "long_name": "l of the datum's channel (-1: the 1D basis "
                   "without symmetry)"}),
        "fit_j": (dat, np.asarray(fit.j, dtype=float),
                  {"units": "1", "long_name": "j of the datum's channel (NaN without spin)"}),
        "fit_measured": (dat, np.asarray(fit.measured, dtype=float),
                         _datum_attrs("measured value of the datum")),
        "fit_sigma": (dat, np.asarray(fit.sigma, dtype=float),
                      _datum_attrs("standard uncertainty of the measured value")),
        "fit_prediction": (dat, np.asarray(fit.prediction, dtype=float),
                           _datum_attrs("value of the datum computed with the fitted "
                                        "parameters")),
        "fit_residual": (dat, np.asarray(fit.residual, dtype=float),
                         _float_attrs("1", "(fit_prediction - fit_measured) / fit_sigma, in "
                                      "standard uncertainties")),
        "fit_basis_error": (dat, np.asarray(fit.basis_error, dtype=float),
                            _datum_attrs("basis error of fit_prediction: change in a basis "
                                         "half as large again, or the solver's estimate if "
                                         "larger")),
    }
    attrs = {"fit_chi2": float(fit.chi2), "fit_dof": int(fit.dof),
             "fit_evaluations": int(fit.evaluations),
             "fit_undetermined": "; ".join(fit.undetermined),
             "fit_warnings": "\n".join(fit.warnings)}
    return coords, data, attrs


def _rotation_variables(u: Any, rot: RotationOutcome) -> tuple[dict, dict, dict]:
    """Coordinates, variables and global attributes of the ``rovib_*`` and ``constant_*``
    part of a result (DESIGN §6)."""
    e_units = u.energy
    dims = ("rovib_J", "rovib_v")
    coords = {
        "rovib_J": (("rovib_J",), np.asarray(rot.J, dtype=np.int64),
                    {"units": "1", "long_name": "rotational quantum number J (the radial "
                     "channel l = J)"}),
        "rovib_v": (("rovib_v",), np.asarray(rot.v, dtype=np.int64),
                    {"units": "1", "long_name": "vibrational quantum number v"}),
    }
    data: dict[str, Any] = {
        "rovib_energy": (dims, np.asarray(rot.energy, dtype=float),
                         energy_attrs(u, e_units, "rovibrational level E(v, J); NaN where "
                                      "not bound")),
        "rovib_term_value": (dims, np.asarray(rot.term_value, dtype=float),
                             energy_attrs(u, e_units, "term value E(v, J) - E(0, 0) from "
                                          "the lowest level")),
    }
    for name, value, err in zip(rot.constants, rot.values, rot.uncertainties, strict=True):
        long = CONSTANT_NAMES.get(name, name)
        data[f"constant_{name}"] = ((), np.float64(value), energy_attrs(
            u, e_units, f"{long}, from a Dunham fit of rovib_energy"))
        data[f"constant_{name}_uncertainty"] = ((), np.float64(err), energy_attrs(
            u, e_units, f"standard error of constant_{name}: least-squares, Dunham "
                        "truncation and level errors in quadrature"))
    attrs = {"rovib_well_bottom": float(rot.bottom),
             "rovib_warnings": "\n".join(rot.warnings)}
    return coords, data, attrs


def _convergence_mode(case: Case) -> str:
    """How the case's levels were checked, in words (global attribute ``convergence``)."""
    conv = case.model.convergence
    if case.model.space.geometry != "central":
        return "error bar of each level from the nested truncations below shells"
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

    The file is claimed for the write (the lock file ``.<name>.lock`` beside it; a batch holds
    the claim for the whole run of the case), so two processes never write one file at once;
    temporaries of writers that were killed are removed first (``anharmony._atomic``).
    Without ``overwrite`` the final name is created exclusively: a file that appeared
    meanwhile is never replaced.

    Raises
    ------
    FileExistsError
        If ``path`` exists (or appears during the write) and ``overwrite`` is false.
    OutputHeldError
        If another process holds the claim on ``path`` (an ``OSError``; pid and host named).
    OSError
        If the folder cannot be written; no temporary file is left behind.
    """
    target = Path(path)
    if target.exists() and not overwrite:
        raise FileExistsError(f"{target}: exists; pass overwrite=True (--overwrite) to "
                              "replace it")
    encoding = _encoding(ds)
    with claim(target):
        remove_stale_temporaries(target, TEMP_SUFFIX)
        return atomic_write(target, lambda tmp: ds.drop_encoding().to_netcdf(
            tmp, engine="netcdf4", format="NETCDF4", encoding=encoding), TEMP_SUFFIX,
            exclusive=not overwrite)


def read_dataset(path: str | Path, *, plain: bool = False) -> xr.Dataset:
    """Load a result file into memory and check its result-schema version.

    Parameters
    ----------
    path
        The result file.
    plain
        Read it with netCDF4 alone into a :class:`~anharmony._ncread.PlainDataset` (the
        same variables, values and attributes behind the part of the xarray interface that
        read-only commands use: sizes, attrs, ``ds[name]``/``ds.name`` with ``values``,
        ``dims``, ``attrs``), without importing xarray; for ``anharmony show``.

    Raises
    ------
    ResultFileError
        If the file is missing, is not netCDF, is not an anharmony result, or was written with
        a newer result schema.
    """
    p = Path(path)
    if not p.is_file():
        raise ResultFileError(f"{p}: no such result file")
    try:
        if plain:
            from ._ncread import load_plain

            ds = load_plain(p)
        else:
            import xarray as xr

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
    problem = _core_problem(ds)
    if problem:
        raise ResultFileError(f"{p}: a damaged or incomplete result file: {problem}")
    return ds


_LEVELS = ("scan", "channel", "level")
#: The variables every result file holds (DESIGN §6): their dimensions and numpy kinds
#: (f float, i/u integer, b bool, U/S/O text).
CORE_VARIABLES: dict[str, tuple[tuple[str, ...], str]] = {
    "energy": (_LEVELS, "f"), "bound": (_LEVELS, "iub"), "converged": (_LEVELS, "iub"),
    "error_estimate": (_LEVELS, "f"), "reference_energy": (_LEVELS, "f"),
    "shift": (_LEVELS, "f"), "threshold": (("scan", "channel"), "f"),
    "series_coefficient": ((*_LEVELS, "order"), "f"),
    "series_partial_sum": ((*_LEVELS, "order"), "f"),
    "series_resummed": ((*_LEVELS, "method"), "f"),
    "scan_value": (("scan",), "f"), "frequency": (("scan",), "f"), "length": (("scan",), "f"),
    "l": (("channel",), "iuf"), "label": (("channel",), "USO"),
}
CORE_NAMES = tuple(CORE_VARIABLES)  # every name of DESIGN §6 that a result file carries


def _core_problem(ds: xr.Dataset) -> str | None:
    """What is missing or malformed among the core variables, or ``None``."""
    missing = [name for name in CORE_VARIABLES if name not in ds.variables]
    if missing:
        return (f"the variable {missing[0]} is missing" if len(missing) == 1 else
                f"the variables {', '.join(missing)} are missing")
    for name, (dims, kinds) in CORE_VARIABLES.items():
        var = ds[name]
        if tuple(var.dims) != dims:
            return f"{name} has dimensions ({', '.join(map(str, var.dims))}); expected " \
                   f"({', '.join(dims)})"
        if var.dtype.kind not in kinds:
            return f"{name} holds {var.dtype} values; expected " + (
                "numbers" if "f" in kinds or "i" in kinds else "text")
    empty = [d for d in _LEVELS if ds.sizes.get(d, 0) == 0]
    if empty:
        words = {"scan": "scan points", "channel": "channels", "level": "levels"}
        return f"it holds no {' and no '.join(words[d] for d in empty)} (a dimension of " \
               "length 0)"
    return None


def result_attrs(path: str | Path) -> dict[str, Any] | None:
    """The global attributes of an existing result (no data read), or None if unreadable."""
    try:
        import netCDF4

        with netCDF4.Dataset(path) as f:
            return {k: f.getncattr(k) for k in f.ncattrs()}
    except (OSError, RuntimeError, ValueError, ImportError):
        return None
