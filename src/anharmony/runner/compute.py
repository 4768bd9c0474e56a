"""Computing one job: calls of the core (scan, series, converge) and their partial arrays.

Every number comes from the public core functions a Python user calls:
:func:`anharmony.scan.scan` for the levels (one channel over a job's scan points),
:func:`anharmony.series.series` for the perturbation series and
:func:`anharmony.convergence.converge` for a convergence study, :func:`anharmony.fit` for a
case with a ``fit:`` block, :func:`anharmony.rovibrational` and
:func:`anharmony.spectroscopic_constants` for a case with a ``rotation:`` block. This module
only decides what to call with which settings and where the numbers go.
"""

from __future__ import annotations

import contextlib
import importlib
import math
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np

from ..cases import Case, ChannelSpec, resolve_length, resolve_reference
from ..errors import NumericalError
from ..reference import Reference
from ..scan import ScanResult, scan
from ..store import FitOutcome, RotationOutcome, empty_like_series
from ..well import Well
from .plan import Job, level_jobs, smaller_size

__all__ = ["SERIES", "core_estimate", "empty", "fit_outcome", "run_job"]

SERIES = ("series_coefficient", "series_partial_sum", "series_resummed", "series_optimal",
          "series_optimal_error", "series_optimal_order")


def empty(case: Case, s: int) -> dict[str, Any]:
    """NaN-filled arrays of a case's numbers for ``s`` scan points, and empty collections."""
    c = len(case.channels())
    n = case.model.levels.count
    pert = case.model.perturbation
    orders = pert.orders + 1 if pert else 0
    methods = len(pert.resum) if pert else 0
    out: dict[str, Any] = {
        "energy": np.full((s, c, n), np.nan),
        "bound": np.zeros((s, c, n), dtype=bool),
        "smaller": np.full((s, c, n), np.nan),
        "error": np.full((s, c, n), np.nan),  # the core's nested estimate (scan)
        "reference_energy": np.full((s, c, n), np.nan),
        "threshold": np.full((s, c), np.nan),
        "frequency": np.full(s, np.nan), "length": np.full(s, np.nan),
        "ref_frequency": np.full(s, np.nan), "ref_length": np.full(s, np.nan),
        "center": np.full(s, np.nan), "v_min": np.full(s, np.nan),
        "quasi": np.zeros((s, c, n), dtype=bool),  # below an open line's escape barrier
        "barrier": np.full(s, np.nan),  # the escape barrier of an open line (scan)
    }
    out.update(empty_like_series(s, c, n, orders, methods))
    out["notes"] = set()
    out["series_method"] = set()
    out["term_orders"] = ()  # Series.term_orders, once a series is made
    out["cells"] = {}  # (k, c) → the study's variables of that cell
    out["study"] = {}  # (k, c) → the study's levels, errors and messages
    return out


# =========================================================================== levels
def _scan_call(case: Case, ch: ChannelSpec, points: tuple[int, ...],
               refs: tuple[Reference, ...]) -> ScanResult:
    """The core scan of one channel over the given scan points."""
    values = case.scan_values()
    kind = case.scan_target.kind
    if kind == "setting" or case.scan_target.linked:  # the case's well at each point
        (k,) = points
        value = values[k]
        well, parameter, at, mass = case.well_at(value), "coupling", [1.0], case.mass_at(value)
    else:
        well, parameter = case.well_at(None), case.scan_parameter
        at, mass = [values[k] for k in points], case.mass
        value = at[0]
    # one b per scan point for every channel (DESIGN §6), as the reference
    lengths = [resolve_length(case, values[k], ref) for k, ref in zip(points, refs, strict=True)]
    nested = core_estimate(case)
    return scan(well, ch.dimension, ch.l, ch.j, parameter=parameter, values=at,
                size=case.model.basis.size, length=lengths,
                units=case.units, mass=mass, levels=case.model.levels.count,
                reference=list(refs), truncated=None if nested else smaller_size(case),
                error_estimate=nested, warn=False)  # the case's warnings name them


def core_estimate(case: Case) -> bool:
    """Whether ``error_estimate`` is the core's (:func:`~anharmony.spectrum.solve`'s nested
    estimate, from :func:`~anharmony.scan.scan`): ``estimate: smaller_basis`` without a listed
    smaller size. A listed convergence size below the basis size keeps |E(N) − E(M)|."""
    conv = case.model.convergence
    n = case.model.basis.size
    return (conv.method == "smaller_basis" and smaller_size(case) is not None
            and not any(s < n for s in (conv.sizes or [])))


def _store_levels(out: dict[str, Any], res: ScanResult, points: tuple[int, ...], c: int
                  ) -> None:
    for i, k in enumerate(points):
        ref = res.references[i]
        out["energy"][k, c] = res.energies[i]
        out["bound"][k, c] = res.bound[i]
        if res.quasi_bound is not None and res.barrier is not None:
            out["quasi"][k, c] = res.quasi_bound[i]
            if math.isfinite(res.barrier[i]):
                out["barrier"][k] = res.barrier[i]
        out["threshold"][k, c] = res.threshold[i]
        out["reference_energy"][k, c] = res.reference_energies[i]
        if res.truncated_energies is not None:
            out["smaller"][k, c] = res.truncated_energies[i]
        if res.error_estimate is not None:
            out["error"][k, c] = res.error_estimate[i]
        out["frequency"][k] = res.basis_frequency[i]
        out["length"][k] = res.length[i]
        out["ref_frequency"][k] = ref.frequency
        out["ref_length"][k] = ref.length
        out["center"][k] = ref.center
        out["v_min"][k] = ref.v_min


def _run_linear(case: Case, job: Job) -> dict[str, Any]:
    """One channel over every scan point: one core scan (A + s B built once)."""
    values = case.scan_values()
    out = empty(case, len(values))
    (c,) = job.channels
    ch = case.channels()[c]
    refs = job.references
    assert refs is not None  # a linear job carries its references
    res = _scan_call(case, ch, job.points, tuple(refs[k] for k in job.points))
    _store_levels(out, res, job.points, c)
    coupling = case.scan_target.kind == "coupling"
    series_ok = True
    if case.model.perturbation is not None:
        for k in job.points:
            if coupling and k != job.points[0]:
                # the series of H_ref + λW is one series whatever the λ of the scan point
                first = job.points[0]
                for name in SERIES:
                    out[name][k, c] = out[name][first, c]
                continue
            value = None if coupling else values[k]
            series_ok &= _series_block(case, case.well_at(value), ch, refs[k],
                                       case.mass_at(value), out, k, c)
    return {"out": out, "points": job.points, "channels": job.channels,
            "reasons": {k: (refs[k].method, refs[k].reason) for k in job.points},
            "series_ok": series_ok}


def _run_points(case: Case, job: Job) -> dict[str, Any]:
    """The listed scan points over the listed channels, one core call each."""
    values = case.scan_values()
    chans = case.channels()
    out = empty(case, len(values))
    refs: dict[int, Reference] = {}
    series_ok = True
    for k in job.points:
        value = values[k]
        ref = resolve_reference(case, value)
        refs[k] = ref
        physical = case.well_at(value)  # coupling: λ = 1, whose λ-series is the scan's
        mass = case.mass_at(value)
        for c in job.channels:
            ch = chans[c]
            res = _scan_call(case, ch, (k,), (ref,))
            _store_levels(out, res, (k,), c)
            if case.model.convergence.study:
                from .study import study_cell

                study_cell(case, out, k, c, res.well_at(0), ref, mass, float(res.length[0]),
                           res.energies[0], res.bound[0])
            series_ok &= _series_block(case, physical, ch, ref, mass, out, k, c)
    return {"out": out, "points": job.points, "channels": job.channels,
            "reasons": {k: (r.method, r.reason) for k, r in refs.items()},
            "series_ok": series_ok}


def run_job(case: Case, job: Job) -> dict[str, Any]:
    """Compute one job (runs in a worker); returns its partial arrays."""
    if job.kind == "fit":
        return _run_fit(case)
    if job.kind == "geometry":
        return _run_geometry(case, job)
    if job.kind == "filling":
        return _run_filling(case, job)
    if job.kind == "rotation":
        return {"rotation": _run_rotation(case)}
    return _run_linear(case, job) if job.kind == "linear" else _run_points(case, job)


# =========================================================================== fit
def _run_geometry(case: Case, job: Job) -> dict[str, Any]:
    """One scan point of a Cartesian or axial case: every block (geometry.solve_blocks), and
    the trap frequencies where the well has a minimum with positive curvature."""
    from ..geometry import trap_frequencies
    from ..geometry.by_block import solve_blocks

    (k,) = job.points
    value = case.scan_values()[k]
    well, mass = case.well_at(value), case.mass_at(value)
    space = case.model.space
    given = case.basis_length_at(value)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = solve_blocks(well, case.dimension, geometry=space.geometry,
                           shells=space.shells if space.shells is not None else 12,
                           truncation=space.truncation or "shells", units=case.units,
                           mass=mass, levels=case.model.levels.count,
                           lengths=None if given == "auto" else given,
                           count=case.model.basis.size if "size" in
                           case.model.basis.model_fields_set else None)
    frequencies = np.full(case.dimension, np.nan)
    if not any(hasattr(t, "spherical") for t in well.terms):  # no curvature at a deformed centre
        with contextlib.suppress(ValueError, ArithmeticError, NumericalError,
                                 np.linalg.LinAlgError), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            tf = trap_frequencies(well, case.dimension, units=case.units, mass=mass)
            frequencies = np.sort(np.asarray(tf.frequencies, dtype=float))
    return {"geometry": res, "points": job.points, "trap": frequencies,
            "messages": [str(w.message) for w in caught]}


def _run_filling(case: Case, job: Job) -> dict[str, Any]:
    """The shell filling of one scan point: every channel solved (anharmony.solve, with the
    case's basis and the point's reference), then anharmony.fill_shells."""
    from ..shells import fill_shells
    from ..spectrum import solve

    (k,) = job.points
    value = case.scan_values()[k]
    ref = resolve_reference(case, value)
    length = resolve_length(case, value, ref)
    well, mass = case.well_at(value), case.mass_at(value)
    chans = case.channels()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the levels' own warnings come from the level jobs
        spectra = [solve(well, ch.dimension, ch.l, ch.j, size=case.model.basis.size,
                         length=length, units=case.units, mass=mass,
                         levels=case.model.levels.count, reference=case.reference_spec(value))
                   for ch in chans]
    res = fill_shells(spectra, particles=case.model.filling.particles)
    occupancy = np.zeros((len(chans), case.model.levels.count))
    labels = [spec.channel.label for spec in spectra]
    for level in res.levels:
        occupancy[labels.index(level.channel), level.n] = level.occupancy
    return {"filling": {"point": k, "fermi": res.fermi_energy, "gap": res.gap,
                        "closed": res.closed, "rms": res.rms_radius, "occupancy": occupancy,
                        "placed": float(occupancy.sum())}}


def _run_fit(case: Case) -> dict[str, Any]:
    """The fit of a case's ``fit:`` block, then the ordinary levels of the fitted well.

    The fit is the core's :func:`anharmony.fit` with :meth:`Case.fit_arguments`; its warnings
    are kept (the result stores and the run prints them). Returns ``{"fit": FitOutcome,
    "values": path → value, "parts": the partial arrays of the fitted case's jobs}``.
    """
    from ..fit import fit

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = fit(**case.fit_arguments())
    fitted = case.fitted(res.values)
    parts = [run_job(fitted, job) for job in level_jobs(fitted)]
    return {"fit": fit_outcome(res, [str(w.message) for w in caught]),
            "values": dict(res.values), "parts": parts}


def fit_outcome(res: Any, notes: list[str]) -> FitOutcome:
    """The plain values of a :class:`anharmony.fit.FitResult` that a result file stores."""
    data = res.data
    return FitOutcome(
        parameters=tuple(res.parameters),
        values=np.array([res.values[p] for p in res.parameters]),
        uncertainties=np.array([res.uncertainties[p] for p in res.parameters]),
        correlation=np.asarray(res.correlation, dtype=float), chi2=float(res.chi2),
        dof=int(res.dof),
        names=tuple(d.name or f"data[{k}]" for k, d in enumerate(data)),
        quantities=tuple(d.quantity for d in data),
        levels=np.array([(d.levels[0], d.levels[1] if len(d.levels) > 1 else -1)
                         for d in data], dtype=np.int64),
        l=np.array([-1 if d.l is None else d.l for d in data], dtype=np.int64),
        j=np.array([np.nan if d.j is None else d.j for d in data], dtype=float),
        measured=np.array([d.value for d in data]),
        sigma=np.array([d.uncertainty for d in data]),
        prediction=np.asarray(res.predictions, dtype=float),
        residual=np.asarray(res.residuals, dtype=float),
        basis_error=np.asarray(res.basis_error, dtype=float),
        undetermined=tuple(res.undetermined), warnings=tuple(dict.fromkeys(notes)),
        evaluations=int(res.evaluations))


# =========================================================================== rotation
def _run_rotation(case: Case) -> RotationOutcome:
    """E(v, J) and the Dunham constants of a ``rotation:`` case, from the core's
    :func:`anharmony.rovibrational` (the case's well, units, mass, basis and reference) and the
    Dunham constants of those same levels (``molecular.constants_of``, what
    :func:`anharmony.spectroscopic_constants` returns); their warnings are kept."""
    from ..molecular import NAMED, constants_of, rovibrational

    rot = case.model.rotation
    assert rot is not None
    args = {"J": rot.values(), "levels": case.model.levels.count, "units": case.model.units,
            "mass": case.mass, "size": case.model.basis.size,
            "length": case.basis_length_at(None), "reference": case.reference_spec(None)}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        rv = rovibrational(case.well_at(None), **args)
        consts = constants_of(rv)  # the same levels: no second solve
    names = tuple(NAMED)
    return RotationOutcome(
        J=np.asarray(rv.J, dtype=np.int64), v=np.asarray(rv.v, dtype=np.int64),
        energy=np.asarray(rv.energies, dtype=float),
        term_value=np.asarray(rv.term_values("lowest"), dtype=float),
        bottom=float(rv.bottom), constants=names,
        values=np.array([consts[n].value for n in names], dtype=float),
        uncertainties=np.array([consts[n].uncertainty for n in names], dtype=float),
        warnings=tuple(dict.fromkeys(str(w.message) for w in caught)))


# =========================================================================== series
def _series_engine() -> Callable[..., Any] | None:
    # by module path: the package exports the function under the subpackage's name
    try:
        module = importlib.import_module("anharmony.series")
    except ImportError:  # pragma: no cover - the package ships it
        return None
    engine = getattr(module, "series", None)
    return engine if callable(engine) else None


def _series_block(case: Case, well: Well, ch: ChannelSpec, ref: Reference, mass: float | None,
                  out: dict[str, Any], k: int, c: int) -> bool:
    """Fill the series arrays of one (scan point, channel); False if no engine is available.

    Warnings of the series engine (a dense series that has not settled) are collected into
    ``out["notes"]`` instead of being raised.
    """
    pert = case.model.perturbation
    engine = _series_engine()
    if pert is None or engine is None:
        return engine is not None
    spec: dict[str, float] = {"frequency": ref.frequency}
    if ch.l is None:
        spec["center"] = ref.center
    order = pert.orders
    lo, hi = order - order // 2, order // 2  # near-diagonal Padé [L/M], L + M = K
    for n in range(case.model.levels.count):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            ser = engine(well, dimension=ch.dimension, l=ch.l, level=n, orders=max(order, 1),
                         exact=pert.exact, units=case.units, reference=spec, j=ch.j, mass=mass)
            coef = np.asarray(ser.coefficients, dtype=float)[:order + 1]
            out["series_coefficient"][k, c, n, :coef.size] = coef
            out["series_partial_sum"][k, c, n, :coef.size] = np.asarray(
                ser.partial_sums(1.0), dtype=float)[:order + 1]
            for m, method in enumerate(pert.resum):
                # stays NaN where this approximant does not exist
                with contextlib.suppress(ValueError, ArithmeticError, np.linalg.LinAlgError,
                                         NumericalError):
                    value = (ser.pade(1.0, L=lo, M=hi) if method == "pade"
                             else ser.borel_pade(1.0)).value
                    out["series_resummed"][k, c, n, m] = float(np.asarray(value, dtype=float))
            if order >= 1:
                best = ser.optimal_truncation(1.0)
                out["series_optimal"][k, c, n] = float(best.value)
                out["series_optimal_error"][k, c, n] = float(best.error)
                out["series_optimal_order"][k, c, n] = int(best.order)
        out["series_method"].add(str(ser.method))
        out["term_orders"] = tuple(int(o) for o in ser.term_orders)
        for w in caught:
            out["notes"].add(f"series {ch.label} level {n}: {w.message}")
    return True
