"""Executing cases: the per-task numbers, serial / process-pool / distributed execution.

A case is split into *jobs*. When the scanned parameter enters the Hamiltonian linearly (a
term's strength or depth, a polynomial coefficient, the coupling λ) and the basis is the same
at every scan point, a job is one channel over all scan points: the matrices H = A + s·B are
built once and each point costs one eigensolve (plus one for the error estimate). Otherwise a
job is one scan point over all channels, with the reference oscillator resolved at that point.
A case with a convergence study (``convergence:``, see :class:`anharmony.cases.Convergence`)
has one job per (scan point, channel): each runs :func:`anharmony.convergence.converge` for its
channel at its point, besides the case's own basis.

:func:`run_case` returns the dataset of one case without writing anything (DESIGN §8);
:func:`run_batch` runs many cases, writes each result as soon as it is complete and reports
progress through a callback (the command line turns it into a bar or plain lines).
"""

from __future__ import annotations

import contextlib
import dataclasses
import importlib
import math
import os
import signal
import sys
import traceback
import uuid
import warnings
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy.linalg import eig_banded

from .cases import (
    Case,
    CaseError,
    ChannelSpec,
    Problem,
    load_case,
    load_cases,
    resolve_reference,
)
from .errors import NumericalError
from .hamiltonian import Channel, channel_hamiltonian
from .spectrum import BANDED_MAX_RATIO, Reference, diagonalize, upper_band
from .store import CaseResult, build_dataset, empty_like_series, write_dataset
from .terms import Power
from .well import Well

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

__all__ = [
    "BatchReport",
    "Interrupted",
    "compute_case",
    "plan_case",
    "run_batch",
    "run_case",
]

SAME_BASIS_RTOL = 1e-12  # references this close at every scan point share one basis


class Interrupted(BaseException):
    """The batch was stopped by SIGINT or SIGTERM; ``.signal`` is the signal number."""

    def __init__(self, signum: int) -> None:
        super().__init__(f"stopped by signal {signum}")
        self.signal = signum


# =========================================================================== jobs
@dataclass(frozen=True)
class Job:
    """One unit sent to a worker.

    ``kind`` is ``"linear"`` (one channel, all scan points, references given) or
    ``"points"`` (the listed scan points, every channel).
    """

    case_key: int
    kind: str
    points: tuple[int, ...]
    channels: tuple[int, ...]
    references: tuple[Reference, ...] | None = None

    @property
    def weight(self) -> int:
        """Number of tasks (scan point × channel) in the job."""
        return len(self.points) * len(self.channels)


def _core_channel(ch: ChannelSpec) -> Channel:
    return Channel(ch.dimension, ch.l, ch.j)


def _reference_at(case: Case, value: float | None) -> Reference:
    return resolve_reference(case, value)


def _basis_at(case: Case, value: float | None, ref: Reference) -> tuple[float, float]:
    """(b, centre) of the basis at a scan point."""
    length = case.basis_length_at(value)
    b = ref.length if length == "auto" else float(length)
    center = ref.center if case.dimension == 1 and case.channels()[0].l is None else 0.0
    return b, center


def _linear_ok(case: Case) -> bool:
    t = case.scan_target
    if not t.linear or case.model.scan is None:
        return False
    well = case.well_at(None)
    # an inverse-square term changes the basis itself (effective l): not linear in a fixed basis
    return not any(isinstance(term, Power) and term.exponent == -2 for term in well.terms)


def plan_case(case: Case, case_key: int = 0) -> list[Job]:
    """Split a case into jobs (see the module docstring)."""
    values = case.scan_values()
    chans = tuple(range(len(case.channels())))
    if case.model.convergence.study:  # one converge() per (scan point, channel)
        return [Job(case_key, "points", (k,), (c,)) for k in range(len(values)) for c in chans]
    if _linear_ok(case):
        if case.scan_target.kind == "coupling":
            refs = (_reference_at(case, None),) * len(values)
        else:
            refs = tuple(_reference_at(case, v) for v in values)
        bases = [_basis_at(case, v, r) for v, r in zip(values, refs, strict=True)]
        b0, c0 = bases[0]
        same = all(math.isclose(b, b0, rel_tol=SAME_BASIS_RTOL)
                   and math.isclose(c, c0, rel_tol=SAME_BASIS_RTOL, abs_tol=1e-14)
                   for b, c in bases)
        if same:
            return [Job(case_key, "linear", tuple(range(len(values))), (c,), refs)
                    for c in chans]
    return [Job(case_key, "points", (k,), chans) for k in range(len(values))]


# =========================================================================== numbers
def _oscillator_levels(ch: ChannelSpec, count: int) -> np.ndarray:
    n = np.arange(count, dtype=float)
    if ch.l is None:
        return n + 0.5
    return 2.0 * n + ch.l + 0.5 * ch.dimension


def _smaller_size(case: Case) -> int | None:
    n = case.model.basis.size
    if case.model.convergence.estimate == "none":
        return None
    sizes = [s for s in (case.model.convergence.sizes or []) if s < n]
    m = max(sizes) if sizes else n - n // 4
    return m if 1 <= m < n else None


def _levels_of(h: np.ndarray, size: int, count: int, bandwidth: int | None) -> np.ndarray:
    """Lowest ``count`` eigenvalues of the leading size×size block, NaN-padded."""
    out = np.full(count, np.nan)
    k = min(count, size)
    e, _ = diagonalize(np.ascontiguousarray(h[:size, :size]), k, bandwidth)
    out[:k] = e[:k]
    return out


def _series_engine() -> Callable[..., Any] | None:
    # by module path: the package exports the function under the subpackage's name
    try:
        module = importlib.import_module("anharmony.series")
    except ImportError:  # pragma: no cover - the package ships it
        return None
    engine = getattr(module, "series", None)
    return engine if callable(engine) else None


def _series_block(case: Case, well: Well, ch: ChannelSpec, ref: Reference, mass: float | None,
                  out: dict[str, np.ndarray], k: int, c: int) -> bool:
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
        for w in caught:
            out["notes"].add(f"series {ch.label} level {n}: {w.message}")
    return True


def _empty(case: Case, s: int) -> dict[str, np.ndarray]:
    c = len(case.channels())
    n = case.model.levels.count
    pert = case.model.perturbation
    orders = pert.orders + 1 if pert else 0
    methods = len(pert.resum) if pert else 0
    out = {
        "energy": np.full((s, c, n), np.nan),
        "bound": np.zeros((s, c, n), dtype=bool),
        "smaller": np.full((s, c, n), np.nan),
        "reference_energy": np.full((s, c, n), np.nan),
        "threshold": np.full((s, c), np.nan),
        "frequency": np.full(s, np.nan), "length": np.full(s, np.nan),
        "ref_frequency": np.full(s, np.nan), "ref_length": np.full(s, np.nan),
        "center": np.full(s, np.nan), "v_min": np.full(s, np.nan),
    }
    out.update(empty_like_series(s, c, n, orders, methods))
    out["notes"] = set()
    out["series_method"] = set()
    out["cells"] = {}  # (k, c) → the study's variables of that cell
    out["study"] = {}  # (k, c) → the study's levels, errors and messages
    return out


def _threshold(case: Case, well: Well, ch: ChannelSpec) -> float:
    return float(well.threshold(case.dimension, symmetric=ch.l is not None))


def _fill_reference(out: dict, k: int, ref: Reference, b: float, hw_basis: float) -> None:
    out["frequency"][k] = hw_basis
    out["length"][k] = b
    out["ref_frequency"][k] = ref.frequency
    out["ref_length"][k] = ref.length
    out["center"][k] = ref.center
    out["v_min"][k] = ref.v_min


def _run_points(case: Case, job: Job) -> dict[str, Any]:
    values = case.scan_values()
    chans = case.channels()
    s = len(values)
    out = _empty(case, s)
    n_main = case.model.basis.size
    count = case.model.levels.count
    smaller = _smaller_size(case)
    refs: dict[int, Reference] = {}
    series_ok = True
    for k in job.points:
        value = values[k]
        ref = _reference_at(case, value)
        refs[k] = ref
        well = _point_well(case, value, ref)
        physical = case.well_at(value)  # coupling: λ = 1, whose λ-series is the scan's
        mass = case.mass_at(value)
        b, center = _basis_at(case, value, ref)
        _fill_reference(out, k, ref, b, case.units.frequency_from_length(b, mass))
        for c in job.channels:
            ch = chans[c]
            mats = channel_hamiltonian(well, _core_channel(ch), n_main, b, center)
            h = mats.total
            e = _levels_of(h, n_main, count, mats.bandwidth)
            thr = _threshold(case, well, ch)
            out["energy"][k, c] = e
            out["bound"][k, c] = e < thr
            out["threshold"][k, c] = thr
            out["reference_energy"][k, c] = ref.v_min + ref.frequency * _oscillator_levels(
                ch, count)
            if smaller is not None:
                out["smaller"][k, c] = _levels_of(h, smaller, count, mats.bandwidth)
            if case.model.convergence.study:
                _study_cell(case, out, k, c, well, ref, mass, b, e, e < thr)
            series_ok &= _series_block(case, physical, ch, ref, mass, out, k, c)
    return {"out": out, "points": job.points, "channels": job.channels,
            "methods": sorted({r.method for r in refs.values()}),
            "reasons": {k: (r.method, r.reason) for k, r in refs.items()},
            "series_ok": series_ok}


# ----------------------------------------------------------------- convergence study
def _study_cell(case: Case, out: dict[str, Any], k: int, c: int, well: Well, ref: Reference,
                mass: float | None, b: float, energy: np.ndarray, bound: np.ndarray) -> None:
    """Run the convergence study of channel c at scan point k; keep its cell and levels."""
    from .convergence import converge

    conv = case.model.convergence
    settings = case.study_settings()
    count = case.model.levels.count
    ch = case.channels()[c]
    kw = settings.keywords()
    if not conv.scans_lengths:  # a size scan at the case's own basis length
        kw["lengths"] = (float(b),)
    spec: dict[str, float] = {"frequency": float(ref.frequency)}
    if ch.l is None:
        spec["center"] = float(ref.center)
    rep = converge(well, ch.dimension, ch.l, ch.j, levels=count, units=case.units, mass=mass,
                   reference=spec, warn=False, **kw)
    slots = settings.length_slots() if conv.scans_lengths else 1
    cell = rep.variables(basis_sizes=settings.size_axis(count), length_slots=slots)
    del cell["error_estimate"], cell["converged"]  # the case's own, decided in assemble()
    if conv.grows:
        cell["energy_basis_length"] = (
            ("level",), np.asarray(rep.best_lengths, dtype=float),
            {"units": case.units.length, "long_name": "oscillator length of the basis that "
             "gives energy (the best of the study's grid at convergence_size)"})
    if not conv.scans_lengths:  # one length: no basis_length axis
        for name, (dims, vals, attrs) in list(cell.items()):
            if "basis_length" in dims:
                axis = dims.index("basis_length")
                cell[name] = (tuple(d for d in dims if d != "basis_length"),
                              np.take(np.asarray(vals), 0, axis=axis), attrs)
    out["cells"][(k, c)] = cell
    err_basis = rep.error_of(energy)
    out["study"][(k, c)] = {
        "energy": np.asarray(rep.energies, dtype=float),
        "error": np.asarray(rep.error_estimate, dtype=float),
        "converged": np.asarray(rep.converged, dtype=bool),
        "error_of_basis": err_basis,
        "messages": _study_messages(case, rep, energy, bound, err_basis),
        "notes": tuple(rep.notes),
    }


def _study_messages(case: Case, rep: Any, energy: np.ndarray, bound: np.ndarray,
                    err_basis: np.ndarray) -> list[tuple[int, bool, str, str]]:
    """(level, bound, label, text) for each level whose stored ``converged`` will be 0."""
    conv = case.model.convergence
    if conv.method != "extrapolate":
        return []
    own = dict(zip([i for i in range(rep.levels) if not rep.converged[i]], rep.messages,
                   strict=True))
    labels = [rep.channel.level_label(i) for i in range(rep.levels)]
    if conv.grows:
        return [(i, bool(rep.bound[i]), labels[i], text) for i, text in sorted(own.items())]
    out = []
    u = case.units.energy
    n = case.model.basis.size
    tol = float(conv.tolerance)
    for i in range(rep.levels):
        if bound[i] and math.isfinite(err_basis[i]) and err_basis[i] < tol:
            continue
        lab = f"level {labels[i]} (index {i}) of channel {rep.channel.label}"
        if i in own:
            text = own[i]
        elif not bound[i]:
            text = (f"{lab} lies at {energy[i]:.6g} {u}, above the threshold in the case's "
                    f"basis of {n} states but below it at the study's size {rep.size}; raise "
                    "basis.size")
        else:
            text = (f"{lab}: error estimate {err_basis[i]:.2e} {u} of the case's basis of {n} "
                    f"states exceeds the tolerance {tol:.2e} {u} (the study's size {rep.size} "
                    "meets it); raise basis.size, or let the basis grow (convergence.grow: "
                    "true)")
        out.append((i, bool(bound[i]), labels[i], text))
    return out


# λ V of each term as a term of the same kind: the parameter V is proportional to
_SCALED = {"power": "strength", "gaussian": "depth", "woods_saxon": "depth",
           "spin_orbit": "strength", "coulomb": "charge", "morse": "depth",
           "poschl_teller": "depth"}


def _point_well(case: Case, value: float, ref: Reference) -> Well:
    """The well whose levels a scan point asks for.

    For ``coupling`` that is H_ref + λ(H − H_ref), i.e. the well λ V + (1 − λ) V_ref; else the
    well with the scanned parameter set.
    """
    if case.scan_target.kind != "coupling" or value == 1.0:
        return case.well_at(value)
    lam = float(value)
    physical = case.well_at(None)
    units, mass = physical.units, physical.mass
    terms: list[Any] = []
    if lam != 0.0:
        for t in physical.terms:
            if t.kind in ("harmonic", "polynomial"):
                poly = t.polynomial() or {}
                terms.append(Well.from_terms([{"polynomial": {
                    "coefficients": {p: lam * v for p, v in poly.items()},
                    "center": t.center}}], units, mass).terms[0])
            elif t.kind in _SCALED:
                name = _SCALED[t.kind]
                terms.append(dataclasses.replace(t, **{name: lam * getattr(t, name)}))
            else:
                raise ValueError(f"scan: coupling: the {t.kind} term cannot be scaled by lambda "
                                 "for the convergence study; scan one of its parameters")
    radial = case.channels()[0].l is not None
    k = ref.frequency ** 2 / (2.0 * units.hbar2_over_2m(mass))  # m ω² from ħω
    coeffs = {p: v for p, v in ((0, (1.0 - lam) * ref.v_min), (2, (1.0 - lam) * 0.5 * k))
              if v != 0.0}
    if coeffs:
        terms.append(Well.from_terms([{"polynomial": {
            "coefficients": coeffs, "center": 0.0 if radial else ref.center}}],
            units, mass).terms[0])
    return Well.from_terms(terms, units, mass)


def _reference_well(case: Case, ref: Reference, radial: bool) -> Well:
    harmonic: dict[str, float] = {"frequency": ref.frequency}
    if not radial and ref.center:
        harmonic["center"] = ref.center
    terms: list[dict] = [{"harmonic": harmonic}]
    if ref.v_min:
        terms.append({"polynomial": {"coefficients": {0: ref.v_min}}})
    return Well.from_terms(terms, case.model.units, case.mass)


def _split_linear(case: Case, ch: ChannelSpec, ref: Reference, size: int, b: float,
                  center: float) -> tuple[np.ndarray, np.ndarray, int | None, float, float]:
    """A, B with H(s) = A + s B, the half-bandwidth, and the thresholds of the two parts.

    For ``coupling`` the thresholds are those of the physical well and (unused) NaN.
    """
    t = case.scan_target
    core = _core_channel(ch)
    radial = ch.l is not None
    if t.kind == "coupling":
        well = case.well_at(None)
        full = channel_hamiltonian(well, core, size, b, center)
        href = channel_hamiltonian(_reference_well(case, ref, radial), core, size, b, center)
        a = full.kinetic + href.potential
        bmat = full.potential + full.spin_orbit - href.potential
        bw = None if full.bandwidth is None or href.bandwidth is None else max(
            full.bandwidth, href.bandwidth)
        return a, bmat, bw, _threshold(case, well, ch), math.nan
    data = case.to_dict()
    terms = data["well"]
    term, name, *sub = t.keys
    scanned = terms[t.term]
    if sub:  # one polynomial coefficient
        coeffs = dict(scanned[term][name])
        unit = {term: {**scanned[term], name: {sub[0]: 1.0}}}
        del coeffs[sub[0]]
        rest_terms = [*terms[:t.term], *terms[t.term + 1:]]
        if coeffs:
            rest_terms.append({term: {**scanned[term], name: coeffs}})
    else:
        unit = {term: {**scanned[term], name: 1.0}}
        rest_terms = [*terms[:t.term], *terms[t.term + 1:]]
    mass = case.mass
    unit_well = Well.from_terms([unit], case.model.units, mass)
    mb = channel_hamiltonian(unit_well, core, size, b, center)
    if rest_terms:
        rest_well = Well.from_terms(rest_terms, case.model.units, mass)
        rest = channel_hamiltonian(rest_well, core, size, b, center)
        a = rest.total
        bw_a = rest.bandwidth
        thr_rest = _threshold(case, rest_well, ch)
    else:
        a = mb.kinetic
        bw_a = 1 if radial else 2
        thr_rest = 0.0
    bmat = mb.potential + mb.spin_orbit
    bw = None if bw_a is None or mb.bandwidth is None else max(bw_a, mb.bandwidth)
    return a, bmat, bw, thr_rest, _threshold(case, unit_well, ch)


def _coupling_threshold(thr: float, lam: float) -> float:
    """Threshold of λ V + (1 − λ) V_ref from that of V (V_ref confines)."""
    if lam == 1.0:
        return thr
    if lam < 1.0:
        return math.inf  # (1 − λ) V_ref confines
    # λ > 1: −(λ − 1) V_ref wins at large r unless V itself grows without bound
    return math.inf if thr == math.inf else -math.inf


class _Pencil:
    """H(s) = A + s B for one channel, kept banded where the solver of the core would be."""

    def __init__(self, a: np.ndarray, b: np.ndarray, bandwidth: int | None) -> None:
        n = a.shape[0]
        self.bandwidth = bandwidth
        self.banded = bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * n
        if self.banded:
            self.a, self.b = upper_band(a, bandwidth), upper_band(b, bandwidth)
        else:
            self.a, self.b = a, b

    def at(self, s: float) -> np.ndarray:
        return self.a + s * self.b

    def levels(self, h: np.ndarray, size: int, count: int) -> np.ndarray:
        """Lowest ``count`` eigenvalues of the leading size×size block, NaN-padded."""
        out = np.full(count, np.nan)
        k = min(count, size)
        if self.banded:
            # the leading block of an upper-banded matrix is its first `size` columns
            # A and B are finite by construction: skip scipy's finiteness scan per point
            out[:k] = eig_banded(h[:, :size], lower=False, eigvals_only=True, select="i",
                                 select_range=(0, k - 1), check_finite=False)[:k]
        else:
            out[:k] = _levels_of(h, size, count, None)[:k]
        return out


def _linear_threshold(thr_rest: float, thr_unit: float, s: float) -> float:
    """lim V of A + s B at infinity from the limits of its two parts (NaN if undecided)."""
    if s == 0.0 or thr_unit == 0.0:
        return thr_rest
    return float(thr_rest) + float(s) * float(thr_unit)  # Python floats: inf - inf is nan


def _run_linear(case: Case, job: Job) -> dict[str, Any]:
    values = case.scan_values()
    chans = case.channels()
    out = _empty(case, len(values))
    n_main = case.model.basis.size
    count = case.model.levels.count
    smaller = _smaller_size(case)
    n_build = n_main
    (c,) = job.channels
    ch = chans[c]
    refs = job.references
    b, center = _basis_at(case, values[0], refs[0])
    a, bmat, bw, thr_rest, thr_unit = _split_linear(case, ch, refs[0], n_build, b, center)
    pencil = _Pencil(a, bmat, bw)
    levels = _oscillator_levels(ch, count)
    coupling = case.scan_target.kind == "coupling"
    mass = case.mass
    hw_basis = case.units.frequency_from_length(b, mass)
    series_ok = True
    for k in job.points:
        s = values[k]
        ref = refs[k]
        h = pencil.at(s)
        e = pencil.levels(h, n_main, count)
        if coupling:
            thr = _coupling_threshold(thr_rest, s)
        else:
            thr = _linear_threshold(thr_rest, thr_unit, s)
            if math.isnan(thr):
                thr = _threshold(case, case.well_at(s), ch)
        out["energy"][k, c] = e
        out["bound"][k, c] = e < thr
        out["threshold"][k, c] = thr
        out["reference_energy"][k, c] = ref.v_min + ref.frequency * levels
        _fill_reference(out, k, ref, b, hw_basis)
        if smaller is not None:
            out["smaller"][k, c] = pencil.levels(h, smaller, count)
        if case.model.perturbation is None:
            continue
        if coupling and k != job.points[0]:
            # the series of H_ref + λW is one series whatever the λ of the scan point
            first = job.points[0]
            for name in _SERIES:
                out[name][k, c] = out[name][first, c]
            continue
        well = case.well_at(None if coupling else s)
        series_ok &= _series_block(case, well, ch, ref, case.mass_at(None if coupling else s),
                                   out, k, c)
    return {"out": out, "points": job.points, "channels": job.channels,
            "reasons": {k: (refs[k].method, refs[k].reason) for k in job.points},
            "series_ok": series_ok}


def run_job(case: Case, job: Job) -> dict[str, Any]:
    """Compute one job (runs in a worker); returns its partial arrays."""
    return _run_linear(case, job) if job.kind == "linear" else _run_points(case, job)


_SERIES = ("series_coefficient", "series_partial_sum", "series_resummed", "series_optimal",
           "series_optimal_error", "series_optimal_order")
_MERGE = ("energy", "bound", "smaller", "reference_energy", "threshold", "series_coefficient",
          "series_partial_sum", "series_resummed", "series_optimal", "series_optimal_error",
          "series_optimal_order")
_PER_POINT = ("frequency", "length", "ref_frequency", "ref_length", "center", "v_min")


def assemble(case: Case, parts: Sequence[dict[str, Any]]) -> CaseResult:
    """Merge the partial arrays of a case's jobs into one :class:`CaseResult`."""
    values = case.scan_values()
    out = _empty(case, len(values))
    reasons: dict[int, tuple[str, str]] = {}
    series_ok = True
    for part in parts:
        src = part["out"]
        idx = np.ix_(list(part["points"]), list(part["channels"]))
        for name in _MERGE:
            out[name][idx] = src[name][idx]
        for name in _PER_POINT:
            out[name][list(part["points"])] = src[name][list(part["points"])]
        reasons.update(part["reasons"])
        series_ok &= part["series_ok"]
        out["notes"] |= src["notes"]
        out["series_method"] |= src["series_method"]
        out["cells"].update(src["cells"])
        out["study"].update(src["study"])
    chans = case.channels()
    conv = case.model.convergence
    tol = conv.tolerance
    notes = []
    if conv.method == "extrapolate":
        err, converged = _study_estimate(case, out)
        if conv.grows:
            notes.append(f"error_estimate: the convergence study's, the basis grown until every "
                         f"bound level's estimate is below {tol:g} or the size limit is reached; "
                         "energy is the lowest Ritz value at convergence_size over the length "
                         "grid (energy_basis_length); error_method and error_reason say how "
                         "each estimate was made")
        else:
            notes.append(f"error_estimate: |E - E_study| + the study's estimate for E_study "
                         f"(triangle inequality), E from the case's basis of "
                         f"{case.model.basis.size} states, E_study the study's lowest Ritz "
                         "value at convergence_size; error_method and error_reason say how the "
                         "study's estimate was made")
    else:
        err = np.abs(out["energy"] - out["smaller"])
        converged = np.isfinite(err) & (err < tol)
        if _smaller_size(case) is None:
            notes.append("error_estimate: not estimated (convergence.estimate is none)")
        else:
            notes.append(f"error_estimate: |E(N) - E(M)| with N = {case.model.basis.size} "
                         f"and M = {_smaller_size(case)} basis states, the same basis length")
    if out["study"]:
        notes += sorted({n for st in out["study"].values() for n in st["notes"]})
    if case.model.perturbation is not None and not series_ok:
        notes.append("series: not computed (no series engine in this version)")
    if out["series_method"]:
        notes.append("series engine: " + ", ".join(sorted(out["series_method"])))
    notes += sorted(out["notes"])[:20]
    has_spin = any(c.j is not None for c in chans)
    settings = case.study_settings()
    sizes = (settings.size_axis(case.model.levels.count) if settings is not None else ())
    study_vars = _stack_cells(out["cells"], len(values), len(chans))
    sizes, study_vars = _trim_sizes(np.asarray(sizes, dtype=np.int64), study_vars)
    if "cross_check_energy" in study_vars:  # beside the stored energy, whichever basis it is
        dims, xe, _ = study_vars["cross_check_energy"]
        study_vars["cross_check_difference"] = (
            dims, out["energy"] - xe, {"units": case.units.energy,
                                       "long_name": "energy minus cross_check_energy"})
    return CaseResult(
        scan_value=np.asarray(values, dtype=float),
        l=np.array([-1 if c.l is None else c.l for c in chans], dtype=np.int64),
        j=np.array([c.j for c in chans], dtype=float) if has_spin else None,
        label=[c.label for c in chans],
        energy=out["energy"], bound=out["bound"], converged=converged,
        reference_energy=out["reference_energy"], error_estimate=err,
        frequency=out["frequency"], length=out["length"], center=out["center"],
        v_min=out["v_min"],
        reference_method=[reasons[k][0] for k in range(len(values))],
        reference_reason=[reasons[k][1] for k in range(len(values))],
        threshold=out["threshold"], basis_size=case.model.basis.size,
        series_coefficient=out["series_coefficient"],
        series_partial_sum=out["series_partial_sum"],
        series_resummed=out["series_resummed"],
        resum_methods=list(case.model.perturbation.resum) if case.model.perturbation else [],
        series_optimal=out["series_optimal"], series_optimal_error=out["series_optimal_error"],
        series_optimal_order=out["series_optimal_order"],
        convergence_sizes=sizes,
        convergence=study_vars,
        reference_frequency=out["ref_frequency"], reference_length=out["ref_length"],
        notes=notes, warnings=_study_warnings(case, out["study"]),
    )


def _study_estimate(case: Case, out: dict[str, Any]) -> tuple[np.ndarray, np.ndarray]:
    """error_estimate and converged from the study; a grown basis replaces energy and bound."""
    conv = case.model.convergence
    err = np.full(out["energy"].shape, np.nan)
    for (k, c), st in out["study"].items():
        if conv.grows:
            out["energy"][k, c] = st["energy"]
            out["bound"][k, c] = st["energy"] < out["threshold"][k, c]
            err[k, c] = st["error"]
        else:
            err[k, c] = st["error_of_basis"]
    converged = out["bound"] & np.isfinite(err) & (err < conv.tolerance)
    if conv.grows:  # exactly the study's flags
        for (k, c), st in out["study"].items():
            converged[k, c] = st["converged"]
    return err, converged


def _stack_cells(cells: dict[tuple[int, int], dict[str, Any]], s: int, c: int
                 ) -> dict[str, tuple[tuple[str, ...], np.ndarray, dict[str, Any]]]:
    """Stack the study's per-cell variables along (scan, channel)."""
    if not cells:
        return {}
    if len(cells) != s * c:
        raise ValueError(f"convergence study: {len(cells)} of {s * c} (scan point, channel) "
                         "cells were computed")
    first = cells[(0, 0)]
    stacked = {}
    for name, (dims, _, attrs) in first.items():
        rows = [np.stack([np.asarray(cells[(k, j)][name][1]) for j in range(c)])
                for k in range(s)]
        merged: dict[str, Any] = {} if "units" in attrs else {"units": "1"}  # text, flags
        for key, value in attrs.items():
            seen = [cells[kc][name][2].get(key, value) for kc in sorted(cells)]
            if isinstance(value, str):
                distinct = list(dict.fromkeys(str(v) for v in seen if str(v)))
                merged[key] = "; ".join(distinct)
            else:
                merged[key] = value
        stacked[name] = (("scan", "channel", *dims), np.stack(rows), merged)
    return stacked


def _trim_sizes(sizes: np.ndarray, variables: dict[str, Any]) -> tuple[np.ndarray, dict]:
    """Drop the trailing basis sizes that no (scan point, channel) reached.

    A tolerance-driven study's axis holds every size it could use (up to ``max_size``); sizes
    beyond the largest one any channel grew to would only be NaN.
    """
    if "convergence_energy" not in variables or not sizes.size:
        return sizes, variables
    dims, values, _ = variables["convergence_energy"]
    axis = dims.index("basis_size")
    other = tuple(i for i in range(len(dims)) if i != axis)
    used = np.flatnonzero(np.isfinite(values).any(axis=other))
    if not used.size or used[-1] == sizes.size - 1:
        return sizes, variables
    keep = int(used[-1]) + 1
    out = {}
    for name, (d, v, a) in variables.items():
        if "basis_size" in d:
            v = np.take(v, np.arange(keep), axis=d.index("basis_size"))
        out[name] = (d, v, a)
    return sizes[:keep], out


def _study_warnings(case: Case, study: dict[tuple[int, int], dict[str, Any]]) -> list[str]:
    """One line per bound (channel, level) that is not converged at some scan point, and one
    line for all the levels that lie above the threshold (discretised-continuum states)."""
    values = case.scan_values()
    groups: dict[tuple[int, int], list[tuple[int, str]]] = {}
    continuum: dict[str, set[int]] = {}
    for (k, c) in sorted(study):
        for i, bound, label, text in study[(k, c)]["messages"]:
            if bound:
                groups.setdefault((c, i), []).append((k, text))
            else:
                continuum.setdefault(label, set()).add(k)
    lines = []
    for (_, _), items in sorted(groups.items()):
        k, text = items[0]
        if len(values) > 1:
            more = f"; {len(items)} of {len(values)} scan points" if len(items) > 1 else ""
            text += f" [at {case.scan_parameter} = {values[k]:g}{more}]"
        lines.append(text)
    if continuum:
        names = ", ".join(f"{lab}" + (f" ({len(ks)} of {len(values)} scan points)"
                                      if len(values) > 1 else "")
                          for lab, ks in continuum.items())
        grows = case.model.convergence.grows
        lines.append(f"{len(continuum)} level(s) lie above the threshold, discretised-continuum "
                     f"states flagged bound = 0 and converged = 0: {names}; request fewer levels "
                     "(levels.count)" + (", or raise convergence.max_size if one should be "
                                         "bound" if grows else ", or raise basis.size if one "
                                         "should be bound"))
    return lines


def compute_case(case: Case) -> CaseResult:
    """All numbers of one case, computed serially in this process."""
    return assemble(case, [run_job(case, job) for job in plan_case(case)])


def run_case(case: str | Path | Case, *, history: str | None = None) -> xr.Dataset:
    """Run one case and return its dataset (DESIGN §6); nothing is written.

    Parameters
    ----------
    case
        A case file holding one case, or a :class:`~anharmony.cases.Case`.

    Raises
    ------
    CaseError
        If the case file is invalid.
    """
    if not isinstance(case, Case):
        case = load_case(case)
    return build_dataset(case, compute_case(case), history=history)


# =========================================================================== batches
@dataclass
class BatchReport:
    """What a batch did: written, skipped (up to date), failed and not run cases."""

    written: list[tuple[Case, Path]] = field(default_factory=list)
    skipped: list[tuple[Case, Path]] = field(default_factory=list)
    failed: list[tuple[Case, str]] = field(default_factory=list)
    not_run: list[Case] = field(default_factory=list)
    interrupted: int | None = None  # the signal number
    warnings: list[tuple[Case, str]] = field(default_factory=list)  # levels not converged

    @property
    def exit_code(self) -> int:
        if self.interrupted is not None:
            return 128 + self.interrupted
        return 1 if self.failed else 0


def output_path(case: Case, out_dir: str | Path | None) -> Path:
    """Where a case's result goes (``out_dir`` replaces the case's folder)."""
    return case.output if out_dir is None else Path(out_dir) / case.output.name


def _result_attrs(path: Path) -> dict[str, Any] | None:
    """The global attributes of an existing result, or None if it cannot be read."""
    try:
        import netCDF4

        with netCDF4.Dataset(path) as f:
            return {k: f.getncattr(k) for k in f.ncattrs()}
    except (OSError, RuntimeError, ValueError, ImportError):
        return None


def _case_text_of(path: Path) -> str | None:
    """The ``case`` attribute of an existing result, or None if it cannot be read."""
    attrs = _result_attrs(path)
    return str(attrs["case"]) if attrs is not None and "case" in attrs else None


def _folder_problem(folder: Path) -> str | None:
    import tempfile

    if not folder.exists():
        return f"folder {folder} does not exist"
    if not folder.is_dir():
        return f"{folder} is not a folder"
    try:
        fd, probe = tempfile.mkstemp(dir=folder, prefix=".anharmony-probe-")
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        return f"cannot write in folder {folder} ({exc.strerror or exc})"
    return None


def check_outputs(cases: Sequence[Case], out_dir: str | Path | None, *, resume: bool,
                  overwrite: bool) -> tuple[list[Case], list[tuple[Case, Path]]]:
    """Decide what to run before any work: (cases to run, cases skipped as up to date).

    Raises
    ------
    CaseError
        For an output folder that cannot be written, or an existing result that would be
        overwritten without ``overwrite``.
    """
    problems: list[Problem] = []
    todo: list[Case] = []
    skipped: list[tuple[Case, Path]] = []
    seen: dict[Path, Case] = {}
    folder_checked: dict[Path, str | None] = {}
    if out_dir is not None:
        d = Path(out_dir)
        if not d.exists():
            try:
                d.mkdir(parents=True)
            except OSError as exc:
                raise CaseError([Problem(str(d), None, None, "-o",
                                         f"cannot create the output folder "
                                         f"({exc.strerror or exc})")]) from None
    for case in cases:
        path = output_path(case, out_dir)
        where = "output" if case.index is None else f"cases[{case.index}].output"
        key = path.resolve()
        if key in seen:
            problems.append(Problem(case.file, None, None, where,
                                    f"{case.name} and {seen[key].name} would both write "
                                    f"{path}"))
            continue
        seen[key] = case
        folder = path.parent
        if folder not in folder_checked:
            folder_checked[folder] = _folder_problem(folder)
        if folder_checked[folder]:
            problems.append(Problem(case.file, None, None, where, folder_checked[folder]))
            continue
        if path.exists() and not overwrite:
            if resume:
                attrs = _result_attrs(path) or {}
                same = str(attrs.get("case")) == case.text if "case" in attrs else False
                if same and case.model.convergence.cross_check \
                        and int(attrs.get("cross_check", 0)) != 1:
                    problems.append(Problem(case.file, None, None, where,
                                            f"{path} was made without the cross-check; use "
                                            "--overwrite to replace it"))
                    continue
                if same:
                    skipped.append((case, path))
                    continue
                problems.append(Problem(case.file, None, None, where,
                                        f"{path} exists and was made from another case text; "
                                        "use --overwrite to replace it"))
            else:
                problems.append(Problem(case.file, None, None, where,
                                        f"{path} exists; use --resume to keep it or "
                                        "--overwrite to replace it"))
            continue
        todo.append(case)
    if problems:
        raise CaseError(problems)
    return todo, skipped


def _init_worker() -> None:
    # the parent decides when to stop; workers must not die half-way on a Ctrl-C of the group
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    # one BLAS thread per worker: the pool already fills the cores (PITFALLS §6); the
    # environment only reaches libraries loaded later, threadpoolctl (if present) the loaded
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(1)


def _guarded(args: tuple[Case, Job]) -> tuple[int, Job, dict | None, str | None]:
    case, job = args
    try:
        return job.case_key, job, run_job(case, job), None
    except Exception as exc:  # reported per case; the batch goes on
        return job.case_key, job, None, _failure(exc)


def _failure(exc: BaseException) -> str:
    text = f"{type(exc).__name__}: {exc}"
    if os.environ.get("ANHARMONY_DEBUG"):
        text += "\n" + "".join(traceback.format_exception(exc))
    return text


def _serial(items: Sequence[tuple[Case, Job]]) -> Iterator[tuple]:
    for item in items:
        yield _guarded(item)


def _pool(items: Sequence[tuple[Case, Job]], jobs: int) -> Iterator[tuple]:
    import multiprocessing as mp

    method = "fork" if sys.platform.startswith("linux") else "spawn"
    ctx = mp.get_context(method)
    pool = ctx.Pool(processes=jobs, initializer=_init_worker)
    try:
        # largest jobs first so that the pool does not end on one long job
        yield from pool.imap_unordered(_guarded, items, chunksize=1)
        pool.close()
    except BaseException:
        pool.terminate()
        raise
    finally:
        pool.join()


def _distributed(items: Sequence[tuple[Case, Job]], address: str) -> Iterator[tuple]:
    try:
        from distributed import Client, as_completed
    except ImportError as exc:
        raise ImportError("--scheduler needs dask.distributed: install with "
                          "pip install 'anharmony[cluster]'") from exc
    client = address if not isinstance(address, str) else Client(address)
    own = isinstance(address, str)
    try:
        token = uuid.uuid4().hex[:12]  # keys unique per batch: tasks are never merged
        futures = [client.submit(_guarded, item, key=f"anharmony-{token}-{i}", pure=False)
                   for i, item in enumerate(items)]
        try:
            for fut in as_completed(futures):
                yield fut.result()
        except BaseException:
            client.cancel(futures)
            raise
    finally:
        if own:
            client.close()


Event = Callable[..., None]


def run_batch(cases: Sequence[Case] | Sequence[str | Path], *,
              out_dir: str | Path | None = None, jobs: int = 1, scheduler: Any = None,
              resume: bool = False, overwrite: bool = False, on_event: Event | None = None,
              history: str | None = None, handle_signals: bool = False,
              cross_check: bool = False) -> BatchReport:
    """Run many cases and write one result file per case.

    Parameters
    ----------
    cases
        Validated cases or case files (validated first; every problem is raised at once).
    out_dir
        Folder for every result (default: each case's ``output``).
    jobs
        Worker processes (1: in this process).
    scheduler
        Address of a dask.distributed scheduler (or a ``distributed.Client``); overrides
        ``jobs``.
    resume
        Skip cases whose result exists and was made from the same case text.
    overwrite
        Replace existing results.
    on_event
        ``on_event(kind, **info)`` for progress: ``start`` (tasks, cases), ``tasks`` (n),
        ``written`` (case, path), ``skipped`` (case, path), ``failed`` (case, message),
        ``warning`` (case, message: a level that is not converged, after ``written``).
    handle_signals
        Turn SIGTERM into :class:`Interrupted` while the batch runs (SIGINT is caught as
        ``KeyboardInterrupt``); a stopped batch keeps every finished file whole.
    cross_check
        Run every case as if its ``convergence:`` block had ``cross_check: true`` (a case
        without a study gets one); a resumed result made without it is not up to date.

    Returns
    -------
    BatchReport
    """
    emit = on_event or (lambda kind, **info: None)
    if cases and not isinstance(cases[0], Case):
        cases = load_cases(list(cases))
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise ValueError(f"jobs: must be an integer >= 1; got {jobs!r}")
    if cross_check:
        cases = [c.with_cross_check() for c in cases]
    todo, skipped = check_outputs(cases, out_dir, resume=resume, overwrite=overwrite)
    report = BatchReport(skipped=skipped)
    for case, path in skipped:
        emit("skipped", case=case, path=path)

    old_term = None
    if handle_signals:
        def _on_term(signum: int, frame: Any) -> None:
            raise Interrupted(signum)
        old_term = signal.signal(signal.SIGTERM, _on_term)

    pending = dict(enumerate(todo))
    stream: Any = None
    try:
        items: list[tuple[Case, Job]] = []
        counts: dict[int, int] = {}
        for key, case in enumerate(todo):
            try:
                plan = plan_case(case, key)
            except Exception as exc:  # e.g. no reference oscillator
                report.failed.append((case, _failure(exc)))
                emit("failed", case=case, message=_failure(exc))
                del pending[key]
                continue
            counts[key] = len(plan)
            items += [(case, job) for job in plan]
        items.sort(key=lambda it: -it[1].weight)
        emit("start", tasks=sum(job.weight for _, job in items), cases=len(pending))
        parts: dict[int, list[dict]] = {key: [] for key in pending}
        failed: dict[int, str] = {}
        if scheduler is not None:
            stream = _distributed(items, scheduler)
        elif jobs > 1 and len(items) > 1:
            stream = _pool(items, min(jobs, len(items)))
        else:
            stream = _serial(items)
        done = dict.fromkeys(pending, 0)
        for key, job, part, error in stream:
            emit("tasks", n=job.weight)
            done[key] += 1
            if error is not None:
                failed.setdefault(key, error)
            else:
                parts[key].append(part)
            if done[key] < counts[key] or key not in pending:
                continue
            case = pending[key]
            if key in failed:
                del pending[key]
                report.failed.append((case, failed[key]))
                emit("failed", case=case, message=failed[key])
                continue
            try:
                result = assemble(case, parts.pop(key))
                ds = build_dataset(case, result, history=history)
                path = write_dataset(ds, output_path(case, out_dir), overwrite=overwrite)
            except (OSError, ValueError, TypeError) as exc:
                del pending[key]
                report.failed.append((case, _failure(exc)))
                emit("failed", case=case, message=_failure(exc))
                continue
            del pending[key]
            report.written.append((case, path))
            emit("written", case=case, path=path)
            for line in result.warnings:
                report.warnings.append((case, line))
                emit("warning", case=case, message=line)
    except KeyboardInterrupt:
        report.interrupted = int(signal.SIGINT)
    except Interrupted as exc:
        report.interrupted = exc.signal
    finally:
        if stream is not None:
            stream.close()  # stops the workers of an interrupted batch
        if handle_signals:
            signal.signal(signal.SIGTERM, old_term or signal.SIG_DFL)
    report.not_run = list(pending.values())
    return report

