"""Checks that relate several fields of a case: the one place for them.

The schema (:mod:`.schema`) checks each field by itself. What is left needs two or more
fields at once — spin and dimension, ``levels.count`` and ``basis.size``, the scan path and
the well, the convergence study and the size limit, every scan point of the well — and lives
here, in two stages:

- :func:`model_issues` on a validated :class:`~.schema.CaseModel` (also resolves the scan
  target, which the :class:`~.case.Case` needs);
- :func:`case_issues` on the built :class:`~.case.Case` (the study's sizes, scan points, the
  fit's parameters and data — checked by :mod:`anharmony.fit`'s own validators).

Both return ``(data path, message)`` pairs; :mod:`.files` gives them positions.
"""

from __future__ import annotations

import dataclasses
import re
from fractions import Fraction
from typing import Any

from pydantic import ValidationError

from ..errors import InputError, TermError
from ..fit import _check_levels_exist, _measurements, _Model, _starts
from ..well import Well
from .case import Case, ScanTarget, channels_of, parse_scan_path
from .messages import Path_, message
from .schema import CaseModel, parse_half

__all__ = ["case_issues", "model_issues"]

Found = list[tuple[Path_, str]]


def _well_of(model: CaseModel) -> Well | None:
    """The case's well, or ``None`` when its terms do not build (the schema reports those)."""
    try:
        return Well.from_terms(model.well, model.units, model.particle.mass)
    except (ValueError, TypeError):
        return None


def _term_issue(exc: InputError) -> tuple[Path_, str]:
    """``well[i].<kind>[.field]: message`` of a term's error as (data path, message)."""
    head, _, text = str(exc).partition(": ")
    parts = head.replace("[", ".").replace("]", "").split(".")
    at = ("well", int(parts[1]), *parts[2:]) if len(parts) > 2 and parts[1].isdigit() \
        else ("well",)
    return at, text or str(exc)


def _geometry_issues(model: CaseModel) -> Found:
    """``space.geometry`` against the other fields (DESIGN §10)."""
    space = model.space
    geometry = space.geometry
    if geometry == "central":
        return [(("space", key), f"applies to geometry cartesian or axial; this space is "
                 "central (add geometry: cartesian or axial, or leave "
                 f"{key} out)") for key in ("shells", "truncation")
                if getattr(space, key) is not None]
    out: Found = []
    need = (3,) if geometry == "axial" else (2, 3)
    if space.dimension not in need:
        out.append((("space", "dimension"), f"the {geometry} geometry needs dimension "
                    f"{' or '.join(map(str, need))}; got {space.dimension}"))
    blocks = "parity triples" if geometry == "cartesian" else "Λ^π"
    for key in ("l", "spin", "j"):
        if getattr(space, key) is not None:
            out.append((("space", key), f"the {geometry} geometry has no (l, j) channels (its "
                        f"blocks are {blocks}); leave {key} out"))
    if "size" in model.basis.model_fields_set and geometry == "axial":
        out.append((("basis", "size"), "the axial basis is cut by space.shells (N_max), not by "
                    "a count of states; use shells instead"))
    if "size" in model.basis.model_fields_set and space.shells is not None:
        out.append((("basis", "size"), "give space.shells or basis.size (a count of states, "
                    "rounded up to whole shells), not both"))
    if model.reference.model_fields_set:
        out.append((("reference",), f"the {geometry} geometry takes its basis lengths from the "
                    "Hessian at the minimum (or a central well's reference oscillator); leave "
                    "reference out (basis.length sets one length for every axis)"))
    for key, what in (("perturbation", "perturbation series"), ("fit", "fits"),
                      ("rotation", "rotation")):
        if getattr(model, key) is not None:
            out.append(((key,), f"{what} of the {geometry} geometry are not run from case files "
                        "yet; leave it out (Python: anharmony.degenerate_series for the "
                        "series)"))
    if model.scan is not None and model.scan.parameter.strip() in ("coupling", "lambda"):
        out.append((("scan", "parameter"), f"a coupling scan needs a reference oscillator, "
                    f"which the {geometry} geometry has not; scan a parameter of the well"))
    study = set(model.convergence.model_fields_set) - {"tolerance"}
    if study:
        out.append((("convergence", sorted(study)[0]), f"the {geometry} geometry's error bar comes "
                    "from the nested truncations below shells; only convergence.tolerance "
                    "applies"))
    well = _well_of(model)
    if out or well is None:
        return out
    from ..geometry.potential import check_terms

    try:
        check_terms(well, space.dimension, geometry)
    except InputError as exc:
        out.append(_term_issue(exc))
    return out


def _space_issues(model: CaseModel) -> Found:
    space = model.space
    if space.geometry != "central" or space.shells is not None or \
            space.truncation is not None:
        return _geometry_issues(model)
    out: Found = []
    if space.spin is not None and space.dimension != 3:
        out.append((("space", "spin"), "spin applies in 3 dimensions only; dimension is "
                    f"{space.dimension}"))
    if space.j is not None and space.spin is None:
        out.append((("space", "j"), "j needs spin: 1/2"))
    if any(next(iter(t)) == "spin_orbit" for t in model.well) and space.spin is None:
        out.append((("space",), "the well has a spin_orbit term: add spin: 1/2 to space"))
    if space.dimension == 1 and space.l is not None:
        bad = [l for l in (space.l if isinstance(space.l, list) else [space.l]) if l > 1]
        if bad:
            out.append((("space", "l"), f"in 1D, l is the parity (0 even, 1 odd); got {bad[0]}"))
    if out:
        return out
    if not channels_of(space):
        out.append((("space", "j"), "no channel has these j for the listed l"))
    elif space.j is not None:
        reach = {c.j for c in channels_of(space.model_copy(update={"j": None}))}
        for j in sorted({parse_half(j) for j in space.j} - reach):
            out.append((("space", "j"), f"j = {Fraction(j)} is not l ± 1/2 for any listed l"))
    well = _well_of(model)
    if well is None:
        return out
    try:  # a formula must use the channel's coordinate (x in 1D, r in 2D/3D)
        well.check_channel(space.dimension)
    except TermError as exc:
        out.append(_term_issue(exc))
    if space.dimension == 1 and space.l is not None and not well.is_symmetric(0.0):
        out.append((("space", "l"), "1D parity channels need a well symmetric about x = 0; "
                    "leave l out for the basis without symmetry"))
    return out


def model_issues(model: CaseModel) -> tuple[Found, ScanTarget]:
    """Cross-field problems of a schema-valid case, and its scan target."""
    out = _space_issues(model)
    if model.levels.count > model.basis.size and model.space.geometry == "central":
        out.append((("levels", "count"), f"asks for {model.levels.count} levels from a basis of "
                    f"{model.basis.size} states; raise basis.size or lower levels.count"))
    ref = model.reference
    if ref.frequency is not None and ref.length is not None:
        out.append((("reference", "length"), "give frequency or length, not both"))
    if ref.center is not None and model.space.dimension != 1:
        out.append((("reference", "center"), "a centre applies to 1D wells only"))
    conv = model.convergence
    for key in ("sizes", "lengths", "frequencies"):  # the study's grids, checked after types
        values = getattr(conv, key)
        if isinstance(values, list) and len(set(values)) != len(values):
            out.append((("convergence", key), f"{key} must be distinct; got {values}"))
    if conv.lengths is not None and conv.frequencies is not None:
        out.append((("convergence", "frequencies"), "give lengths or frequencies, not both"))
    if conv.grow and conv.method != "extrapolate":
        out.append((("convergence", "grow"), "growing the basis needs the study's error "
                    f"estimate (estimate: extrapolate); got estimate: {conv.method}"))
    if model.fit is not None and model.scan is not None:
        out.append((("fit",), "a fit does not combine with scan: in this version; fit the "
                    "well in a case without scan:, then scan the fitted well in another case"))
    out += _rotation_issues(model)
    if model.filling is not None:
        for key in ("fit", "rotation"):
            if getattr(model, key) is not None:
                out.append((("filling",), f"filling: does not combine with {key}: in this "
                            "version"))
        if model.space.geometry != "central":
            out.append((("filling",), "filling: fills the (l, j) channels of a central space; "
                        f"got geometry {model.space.geometry}"))
    target = ScanTarget("coupling", linear=True)
    if model.scan is not None:
        try:
            target = parse_scan_path(model.scan.parameter, model.well)
        except ValueError as exc:
            out.append((("scan", "parameter"), str(exc)))
        else:
            target, found = _linked(model, target)
            out += found
    return out, target


def _linked(model: CaseModel, target: ScanTarget) -> tuple[ScanTarget, Found]:
    """The scan target with its ``linked`` paths (each a term or setting, named once)."""
    paths = model.scan.linked or []
    found: Found = []
    linked = []
    seen = {model.scan.parameter.strip()}
    for i, path in enumerate(paths):
        where = ("scan", "linked", i)
        if path.strip() in seen:
            found.append((where, f"{path!r} is already scanned; name each parameter once"))
            continue
        seen.add(path.strip())
        try:
            t = parse_scan_path(path, model.well)
        except ValueError as exc:
            found.append((where, str(exc)))
            continue
        if t.kind == "coupling" or target.kind == "coupling":
            found.append((where, "the coupling λ cannot be linked with other parameters; scan "
                          "it alone"))
            continue
        linked.append(t)
    if found or not linked:
        return target, found
    return dataclasses.replace(target, linear=False, linked=tuple(linked)), []


MIN_J_CONSTANTS = 3  # distinct J the Dunham constants need (De = -Y02 needs J(J+1) thrice)
MIN_V_CONSTANTS = 4  # distinct v the Dunham constants need (weye = Y30 needs four)


def _rotation_issues(model: CaseModel) -> Found:
    """``rotation:`` against the space, the scan and the fit."""
    if model.rotation is None:
        return []
    out: Found = []
    space = model.space
    if space.dimension != 3 or space.geometry != "central":
        out.append((("rotation",), "rovibrational levels need a 3D central space (the radial "
                    f"channel l = J); got dimension {space.dimension}, geometry "
                    f"{space.geometry}"))
    if space.spin is not None:
        out.append((("space", "spin"), "rotation: takes no spin (the channels are l = J); "
                    "leave spin out"))
    if space.l is not None:
        out.append((("space", "l"), "with rotation: the channels are l = J (rotation.J); "
                    "leave l out"))
    if model.scan is not None:
        out.append((("scan",), "rotation: does not combine with scan: in this version; "
                    "leave one of them out"))
    if model.fit is not None:
        out.append((("fit",), "rotation: does not combine with fit: in this version"))
    js = model.rotation.values()
    if len(js) < MIN_J_CONSTANTS:
        out.append((("rotation", "J"), f"the spectroscopic constants need at least "
                    f"{MIN_J_CONSTANTS} values of J (De needs three of J(J+1)); got {js}"))
    if model.levels.count < MIN_V_CONSTANTS:
        out.append((("levels", "count"), f"the spectroscopic constants need at least "
                    f"{MIN_V_CONSTANTS} vibrational levels per J (weye = Y30 needs four v); "
                    f"got {model.levels.count}; raise levels.count"))
    return out


def _study_issues(case: Case) -> Found:
    """The convergence study: what it needs of the scan, and its largest size."""
    conv = case.model.convergence
    if not conv.study:
        return []
    if case.scan_target.kind == "coupling" and case.model.scan is not None:
        for i, spec in enumerate(case.model.well):
            if next(iter(spec)) == "expression":
                return [(("convergence",), "a study of a coupling scan needs the well at each "
                         f"lambda, and the expression term well[{i}] cannot be scaled by "
                         "lambda; scan a parameter of its formula instead")]
    try:
        settings = case.study_settings()
    except InputError as exc:  # the schema covers the study's checks; this is a safety net
        return [(("convergence",), str(exc))]
    count = case.model.levels.count
    top = max(settings.size_axis(count))
    if top < count:
        key = "max_size" if "max_size" in conv.written else "sizes"
        return [(("convergence", key), f"the largest basis size of the study is {top}, fewer "
                 f"than the {count} levels asked for (levels.count)")]
    return []


def _scan_point_issues(case: Case) -> Found:
    """Every scan point must give a valid case; the first that does not is reported."""
    scan = case.model.scan
    if scan is None or case.scan_target.kind == "coupling":
        return []
    for k, value in enumerate(scan.points()):
        at = f"at {scan.parameter} = {value:g}: "
        where = "" if k == 0 else f" (scan point {k})"
        try:
            CaseModel.model_validate(case.settings_at(value))  # terms are built by the schema
            case.well_at(value)
        except ValidationError as exc:
            err: Any = exc.errors(include_url=False)[0]
            return [(("scan", "values"), at + message(err, CaseModel) + where)]
        except TermError as exc:
            return [(("scan", "values"), at + exc.message + where)]
        except (ValueError, TypeError) as exc:
            return [(("scan", "values"), at + str(exc) + where)]
    return []


_WHERE = re.compile(r"^data\[\d+\]((?:\.[A-Za-z_]+)?)((?:\[\d+\])?): (.*)$", re.S)


def _datum_issue(k: int, exc: InputError) -> tuple[Path_, str]:
    """``data[0].uncertainty: message`` from :mod:`anharmony.fit` → the path of datum k."""
    m = _WHERE.match(str(exc))
    if not m:
        return ("fit", "data", k), str(exc)
    path: Path_ = ("fit", "data", k)
    if m[1]:
        path = (*path, m[1][1:])
    if m[2]:
        path = (*path, int(m[2][1:-1]))
    return path, m[3]


def _parameter_issue(path: str, exc: InputError) -> tuple[Path_, str]:
    """A message of :func:`anharmony.fit.parse_parameter_path` or of the start values → the
    path of that parameter (``bounds`` where the message is about them)."""
    head, _, text = str(exc).partition(": ")
    at: Path_ = ("fit", "parameters", path)
    if head.endswith(".bounds"):
        at = (*at, "bounds")
    if text.startswith(f"{path!r}: "):  # the path is the field already
        text = text[len(f"{path!r}: "):]
    return at, text


def _fit_issues(case: Case) -> Found:
    """The fit: parameter paths and starts, each datum, counts, and that the levels exist."""
    fit = case.model.fit
    if fit is None or case.fit_data is None:
        return []
    specs = [{k: dict(v or {})} for t in case.model.well for k, v in t.items()]
    out: Found = []
    params = case.fit_parameters()
    for path, spec in params.items():
        try:
            _starts({path: spec}, specs)
        except InputError as exc:
            out.append(_parameter_issue(path, exc))
    rows: list[dict[str, Any]] = []
    for k, d in enumerate(case.fit_data.rows):
        try:
            rows.append(case.fit_rows([d])[0])
        except ValueError as exc:
            key, msg = exc.args[0]
            out.append(((("fit", "data", k, key) if key else ("fit", "data", k)), msg))
            continue
        try:
            _measurements([rows[-1]], None, None)
        except (InputError, TypeError, ValueError) as exc:
            out.append(_datum_issue(k, InputError(str(exc))))
    if out:
        return out
    n_par, n_data = len(params), len(rows)
    if n_par > n_data:
        return [(("fit", "parameters"), f"{n_par} parameters cannot be fixed by {n_data} "
                 "data; give at least as many data as parameters")]
    if fit.scale_covariance and n_par == n_data:
        return [(("fit", "scale_covariance"), f"needs more data than parameters (dof > 0); "
                 f"the fit has {n_data} data for {n_par} parameters")]
    paths, x0, _, _ = _starts(params, specs)
    try:
        model = _Model(specs, paths, _measurements(rows, None, None),
                            case.dimension, case.model.units, case.mass, case.model.basis.size,
                            case.fit_length())
        _check_levels_exist(model, x0)
    except InputError as exc:
        return [_datum_issue(int(m[1]), exc) if (m := re.match(r"data\[(\d+)\]", str(exc)))
                else (("fit",), str(exc))]
    except (ValueError, ArithmeticError) as exc:  # the starting well cannot be solved
        return [(("fit",), f"the well at the starting values cannot be solved: {exc}")]
    return []


def case_issues(case: Case) -> Found:
    """Cross-field problems that need the built case: the study, the scan points, the fit."""
    return _study_issues(case) or _scan_point_issues(case) or _fit_issues(case)
