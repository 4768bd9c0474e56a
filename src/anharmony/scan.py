"""Scans of one channel over a parameter of the well: the coupling λ or one term parameter.

:func:`scan` is the core function every coupling or parameter scan goes through. When the
parameter enters H linearly and the basis is the same at every value, the channel matrices are
split once as H(s) = A + s B (:mod:`anharmony.pencil`) and each value costs one eigensolve;
otherwise H is rebuilt per value. Both give the levels of :func:`~anharmony.spectrum.solve`.

Parameters are named as in a case file: ``"coupling"`` (H = H_ref + λ (H − H_ref)),
``"well[i].name"`` or one polynomial coefficient ``"well[i].coefficients[k]"``.

When terms carry perturbation orders (the generic term key ``order``), the coupling scan
follows the series' own path H(λ) = H_ref + λ W₁ + Σ_{k≥2} λ^k W_k (W₁ = V₁ − V_ref,
W_k = V_k, :func:`anharmony.series.series`): a polynomial pencil whose matrices are built once
and summed per value. λ = 1 is the physical well either way.
"""

from __future__ import annotations

import dataclasses
import math
import re
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .coupling import (
    SCALED,
    check_term_orders,
    coupled_well,
    has_term_orders,
    path_threshold,
    polynomial_thresholds,
    reference_well,
)
from .eigensolvers import diagonalize, matrix_rounding
from .errorbars import nested_error_estimate
from .errors import ConvergenceWarning, InputError
from .hamiltonian import Channel, channel_hamiltonian
from .labels import channel_label
from .pencil import (
    Pencil,
    coupling_pencil,
    linear_threshold,
    order_pencil,
    term_pencil,
)
from .reference import Reference, _lowest_oscillator_level, default_length, reference_oscillator
from .request import _check_levels, _positive, resolve_channel
from .spectrum import (
    QUASI_INSIDE,
    Spectrum,
    check_tolerance,
    inside_share,
    judge_levels,
    line_pass,
)
from .terms import Power
from .units import UnitSystem
from .well import Well

__all__ = ["SAME_BASIS_RTOL", "SCALED", "ScanResult", "coupled_well", "has_term_orders",
           "linear_in", "pencil_applies", "scan", "set_parameter"]

SAME_BASIS_RTOL = 1e-12  # references this close at every value share one basis (one pencil)

# λ V of each term as a term of the same kind: the parameter V is proportional to, as each
# term declares it (Term.linear_parameter)

_PATH = re.compile(r"well\[(\d+)\]\.([A-Za-z_][A-Za-z0-9_]*)"
                   r"(?:\[(-?\d+)\]|\.([A-Za-z_][A-Za-z0-9_]*))?")


# =========================================================================== parameters
@dataclass(frozen=True)
class _Target:
    """A parsed parameter: ``coupling``, or term ``index`` and ``keys`` in its parameters."""

    coupling: bool
    index: int = -1
    kind: str = ""
    keys: tuple[Any, ...] = ()


def _target(well: Well, parameter: Any) -> _Target:
    text = parameter.strip() if isinstance(parameter, str) else ""
    if text in ("coupling", "lambda"):
        return _Target(True)
    m = _PATH.fullmatch(text)
    if not m:
        raise InputError(f"parameter: expected 'coupling', 'well[i].<name>' or "
                         f"'well[i].coefficients[k]'; got {parameter!r}")
    i = int(m[1])
    if i >= len(well.specs):
        raise InputError(f"parameter: {text!r}: the well has {len(well.specs)} term(s)")
    kind = well.specs[i][0]
    sub = (int(m[3]),) if m[3] is not None else (m[4],) if m[4] is not None else ()
    return _Target(False, i, kind, (m[2], *sub))


def _inverse_square(well: Well) -> bool:
    # an inverse-square term changes the basis itself (effective l): not linear in a fixed basis
    return any(isinstance(t, Power) and t.exponent == -2 for t in well.terms)


def linear_in(well: Well, parameter: str) -> bool:
    """Whether H is A + value · B in a fixed basis for this parameter of the well."""
    t = _target(well, parameter)
    if _inverse_square(well):
        return False
    if t.coupling:
        return True
    if len(t.keys) == 2:
        return t.keys[0] == "coefficients"
    return SCALED.get(t.kind) == t.keys[0]


def _spec_dicts(well: Well) -> list[Any]:
    return [s if not isinstance(s, Mapping) else {k: s} for k, s in well.specs]


def set_parameter(well: Well, parameter: str, value: float) -> Well:
    """The well with one term parameter set (``"coupling"``: the well itself)."""
    t = _target(well, parameter)
    if t.coupling:
        return well
    terms = _spec_dicts(well)
    spec = terms[t.index]
    if not isinstance(spec, Mapping):  # a term object given directly
        if len(t.keys) != 1 or not hasattr(spec, t.keys[0]):
            raise InputError(f"parameter: {parameter!r}: the {t.kind} term has no parameter "
                             f"{t.keys[0]!r}")
        terms[t.index] = dataclasses.replace(spec, **{t.keys[0]: value})
    else:
        params = dict(spec[t.kind] or {})
        if len(t.keys) == 2:
            name, key = t.keys
            params[name] = {**params.get(name, {}), key: value}
        else:
            params[t.keys[0]] = value
        terms[t.index] = {t.kind: params}
    return Well.from_terms(terms, well.units, well.mass)


# =========================================================================== the pencil
def _split(well: Well, t: _Target, channel: Channel, ref: Reference, size: int, b: float,
           center: float) -> tuple[Pencil, float, float, Any]:
    """The pencil A + s B, the thresholds of its two parts and the basis.

    For ``coupling`` the first threshold is the physical well's and the second NaN.
    """
    if t.coupling:
        ref_well = reference_well(well, ref, channel.l is not None)
        if has_term_orders(well):
            pen, basis = order_pencil(well.by_order(), ref_well, channel, size, b, center)
            thr = float(well.threshold(channel.dimension, symmetric=channel.l is not None))
            return pen, thr, math.nan, basis
        return coupling_pencil(well, ref_well, channel, size, b, center)
    terms = _spec_dicts(well)
    kind, (name, *sub) = t.kind, t.keys
    scanned = terms[t.index][kind]
    if sub:  # one polynomial coefficient
        coeffs = dict(scanned[name])
        unit = {kind: {**scanned, name: {sub[0]: 1.0}}}
        del coeffs[sub[0]]
        rest_terms = [*terms[:t.index], *terms[t.index + 1:]]
        if coeffs:
            rest_terms.append({kind: {**scanned, name: coeffs}})
    else:
        unit = {kind: {**scanned, name: 1.0}}
        rest_terms = [*terms[:t.index], *terms[t.index + 1:]]
    unit_well = Well.from_terms([unit], well.units, well.mass)
    rest_well = Well.from_terms(rest_terms, well.units, well.mass) if rest_terms else None
    return term_pencil(unit_well, rest_well, channel, size, b, center)


# =========================================================================== results
@dataclass(frozen=True, eq=False)
class ScanResult:
    """Levels of one channel at every value of a scan (S values, L levels).

    Attributes
    ----------
    parameter : str
    values : ndarray (S,)
    energies, bound, reference_energies : ndarray (S, L)
        As in :class:`~anharmony.spectrum.Spectrum`, one row per value.
    threshold : ndarray (S,)
    references : tuple of Reference (S,)
    length, center, basis_frequency : ndarray (S,)
        b, x₀ and ħω of the basis used at each value.
    truncated_size : int or None
    truncated_energies : ndarray (S, L) or None
        Lowest levels of the leading ``truncated_size`` block of the same matrices (NaN where
        the block has fewer levels): ``|energies − truncated_energies|``, the older quick
        error estimate.
    error_estimate : ndarray (S, L) or None
        The error bar of every level at every value, by the rule of
        :func:`~anharmony.spectrum.solve` (:func:`~anharmony.spectrum.nested_error_estimate`
        of the same matrix); ``None`` when the scan ran with ``error_estimate=False``.
    rounding : ndarray (S,) or None
        eps·‖H‖₁ at each value, included in ``error_estimate``.
    converged : ndarray (S, L) or None
        Bound (or quasi-bound) levels whose error bar is within ``tolerance``, judged as
        :func:`~anharmony.spectrum.solve` judges them; ``None`` without error estimates.
    tolerance : ndarray (S,) or None
        The absolute tolerance at each value (the relative ``tolerance`` of :func:`scan` times
        the mean spacing of the bound levels, or ħω of the basis).
    quasi_bound : ndarray (S, L)
        Levels of an open line (1D without symmetry, V → −∞ on a side) below its escape
        barrier; all False elsewhere.
    barrier : ndarray (S,)
        The escape barrier of an open line at each value (NaN elsewhere).
    method : str
        ``"pencil"`` (A + s B built once) or ``"rebuild"`` (the Hamiltonian per value).
    vectors : ndarray (S, N, L) or None
    """

    parameter: str
    values: np.ndarray
    energies: np.ndarray
    bound: np.ndarray
    threshold: np.ndarray
    reference_energies: np.ndarray
    references: tuple[Reference, ...]
    length: np.ndarray
    center: np.ndarray
    basis_frequency: np.ndarray
    channel: Channel
    units: UnitSystem
    mass: float | None
    size: int
    method: str
    well: Well = dataclasses.field(repr=False)
    bases: tuple[Any, ...] = dataclasses.field(repr=False, default=())
    truncated_size: int | None = None
    truncated_energies: np.ndarray | None = None
    vectors: np.ndarray | None = dataclasses.field(repr=False, default=None)
    error_estimate: np.ndarray | None = None
    rounding: np.ndarray | None = None
    converged: np.ndarray | None = None
    tolerance: np.ndarray | None = None
    quasi_bound: np.ndarray | None = None
    barrier: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.values)

    @property
    def shifts(self) -> np.ndarray:
        """Anharmonic shifts: energy − reference oscillator level, (S, L)."""
        return self.energies - self.reference_energies

    def well_at(self, k: int) -> Well:
        """The well whose levels value k holds (coupling: λ V + (1 − λ) V_ref)."""
        t = _target(self.well, self.parameter)
        if t.coupling:
            return coupled_well(self.well, float(self.values[k]), self.references[k],
                                self.channel.l is not None)
        return set_parameter(self.well, self.parameter, float(self.values[k]))

    def potential(self, k: int, coords: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
        """Central potential and spin–orbit radial form (None without one) at value k.

        For a coupling scan V_λ = (1 − λ) V_ref + Σ_k λ^k V_k (V_k the terms at perturbation
        order k; λ V with every term at first order), for any term.
        """
        t = _target(self.well, self.parameter)
        if not t.coupling:
            w = self.well_at(k)
            return w.value(coords), (w.spin_orbit_value(coords) if w.has_spin_orbit else None)
        lam = float(self.values[k])
        if lam == 1.0:
            v = self.well.value(coords)
            return v, (self.well.spin_orbit_value(coords) if self.well.has_spin_orbit else None)
        ref = reference_well(self.well, self.references[k], self.channel.l is not None)
        v = (1.0 - lam) * ref.value(coords)
        so = None
        for order, part in self.well.by_order().items():
            v = v + lam**order * part.value(coords)
            if part.has_spin_orbit:
                so = (0.0 if so is None else so) + lam**order * part.spin_orbit_value(coords)
        return v, so

    def wavefunctions(self, k: int, coords: np.ndarray) -> np.ndarray:
        """ψ of each level at value k (needs ``vectors=True``), shape (L, len(coords))."""
        if self.vectors is None:
            raise InputError("wavefunctions: the scan ran without vectors; pass vectors=True")
        return self.vectors[k].T @ self.bases[k].functions(coords)

    def spectrum(self, k: int) -> Spectrum:
        """Value k as a :class:`~anharmony.spectrum.Spectrum` (no vector columns without
        ``vectors=True``)."""
        vec = self.vectors[k] if self.vectors is not None else np.zeros((self.size, 0))
        extra: dict[str, Any] = {}
        if self.error_estimate is not None and self.rounding is not None:
            extra = {"error_estimate": self.error_estimate[k],
                     "rounding": float(self.rounding[k])}
        if self.converged is not None and self.tolerance is not None:
            extra.update(converged=self.converged[k], tolerance=float(self.tolerance[k]))
        if self.quasi_bound is not None and self.barrier is not None:
            extra.update(quasi_bound=self.quasi_bound[k], barrier=float(self.barrier[k]))
        labels = tuple(self.channel.level_label(n, units=self.units)
                       for n in range(self.energies.shape[1]))
        return Spectrum(energies=self.energies[k], bound=self.bound[k], vectors=vec,
                        channel=self.channel, basis=self.bases[k], reference=self.references[k],
                        threshold=float(self.threshold[k]), units=self.units, mass=self.mass,
                        well=self.well_at(k), reference_energies=self.reference_energies[k],
                        labels=labels, **extra)

    @property
    def spectra(self) -> list[Spectrum]:
        """One :class:`~anharmony.spectrum.Spectrum` per value."""
        return [self.spectrum(k) for k in range(len(self))]


# =========================================================================== the scan
def _values(values: Any) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        arr = np.zeros((0, 0))  # not numbers: refused below
    if arr.ndim != 1 or arr.size == 0 or not np.isfinite(arr).all():
        raise InputError(f"values: expected a non-empty list of finite numbers; got {values!r}")
    return arr


def _references(well: Well, t: _Target, channel: Channel, mass: float | None, levels: int,
                reference: Any, values: np.ndarray, wells: Sequence[Well] | None = None
                ) -> tuple[Reference, ...]:
    """The reference at each value; ``wells`` are the wells at the values when already made
    (a term parameter scan)."""
    if wells is None and not t.coupling:
        wells = [set_parameter(well, _path(t), float(v)) for v in values]
    if isinstance(reference, Reference):
        return (reference,) * len(values)
    if isinstance(reference, Sequence) and not isinstance(reference, str):
        if len(reference) != len(values):
            raise InputError(f"reference: {len(reference)} references for {len(values)} "
                             "values; give one, or one per value")
        return tuple(r if isinstance(r, Reference) else reference_oscillator(
            well if wells is None else w, channel.dimension, channel.l, None, levels, r,
            channel.j) for r, w in zip(reference, wells or [well] * len(values), strict=True))
    if t.coupling:  # the reference of the physical well at every λ
        ref = reference_oscillator(well, channel.dimension, channel.l, None, levels, reference,
                                   channel.j)
        return (ref,) * len(values)
    assert wells is not None
    return tuple(reference_oscillator(w, channel.dimension, channel.l, None, levels, reference,
                                      channel.j) for w in wells)


def _path(t: _Target) -> str:
    if t.coupling:
        return "coupling"
    name, *sub = t.keys
    return f"well[{t.index}].{name}" + (f"[{sub[0]}]" if sub else "")


def _same_basis(bases: Sequence[tuple[float, float]]) -> bool:
    b0, c0 = bases[0]
    return all(math.isclose(b, b0, rel_tol=SAME_BASIS_RTOL)
               and math.isclose(c, c0, rel_tol=SAME_BASIS_RTOL, abs_tol=1e-14)
               for b, c in bases)


def _bases(refs: Sequence[Reference], length: float | str, radial: bool,
           wells: Sequence[Well] | None = None, channel: Channel | None = None,
           levels: int = 0, size: int = 0) -> list[tuple[float, float]]:
    """(b, x₀) of the basis at each value: the b :func:`~anharmony.spectrum.solve` would take
    for that value's well (``length="auto"``), or the given length."""
    if isinstance(length, Sequence) and not isinstance(length, str):
        if len(length) != len(refs):
            raise InputError(f"length: {len(length)} lengths for {len(refs)} values; give "
                             "one, 'auto', or one per value")
        return [(_positive("length", b), r.center if not radial else 0.0)
                for b, r in zip(length, refs, strict=True)]
    if length != "auto":
        fixed = _positive("length", length)
        return [(fixed, r.center if not radial else 0.0) for r in refs]
    if wells is None or channel is None:
        return [(r.length, r.center if not radial else 0.0) for r in refs]
    return [(default_length(w, channel, levels, size, r)[0], r.center if not radial else 0.0)
            for w, r in zip(wells, refs, strict=True)]


def pencil_applies(well: Well, parameter: str, references: Sequence[Reference],
                   length: float | str = "auto", l: int | None = 0) -> bool:
    """Whether :func:`scan` over these per-value references builds one pencil A + s B."""
    return (len(references) > 1 and linear_in(well, parameter)
            and _same_basis(_bases(references, length, l is not None)))


def _one_value(well: Well, t: _Target, channel: Channel, ref: Reference,
               basis: tuple[float, float], size: int, count: int, truncated: int | None,
               v: float, vectors: bool, estimate: bool
               ) -> tuple[np.ndarray, Any, Any, float, Any, Any]:
    """Levels at one value with the Hamiltonian built for it, as :func:`solve` does; the last
    item is (error estimate, rounding) or None."""
    b, center = basis
    radial = channel.l is not None
    if t.coupling:
        try:
            w = coupled_well(well, v, ref, radial)
        except InputError:
            if _inverse_square(well):
                raise
            # a formula term: H_ref + λ (H − H_ref) from the matrices at this one λ
            pen, thr, _, basis_obj = _split(well, t, channel, ref, size, b, center)
            h = pen.at(v)
            e, vec = pen.levels(h, size, count, vectors)
            small = None if truncated is None else pen.levels(h, truncated, count)[0]
            err = pen.error_estimate(h, e, channel.l is None) if estimate else None
            return e, vec, small, path_threshold(well, thr, v, ref, channel), basis_obj, err
    else:
        w = set_parameter(well, _path(t), v)
    mats = channel_hamiltonian(w, channel, size, b, center)
    h = mats.total
    e = np.full(count, np.nan)
    found, vec = diagonalize(h, count, mats.bandwidth)
    e[:len(found)] = found[:count]
    small = None if truncated is None else np.full(count, np.nan)
    if small is not None:
        m = min(count, truncated)
        small[:m] = diagonalize(np.ascontiguousarray(h[:truncated, :truncated]), m,
                                mats.bandwidth)[0][:m]
    err = None
    if estimate:
        rounding = matrix_rounding(h)
        err = (nested_error_estimate(h, e, mats.bandwidth, rounding,
                                     parity_pairs=channel.l is None), rounding)
    thr = float(w.threshold(channel.dimension, symmetric=radial))
    return e, vec, small, thr, mats.basis, err


def scan(well: Well, dimension: int = 3, l: int | None = 0, j: Any = None, *,
         parameter: str = "coupling", values: Sequence[float] = (1.0,), size: int = 60,
         length: float | str | Sequence[float] = "auto",
         units: str | UnitSystem = "oscillator", mass: float | None = None, levels: int = 5,
         reference: str | Mapping[str, float] | Reference | Sequence[Any] = "auto",
         truncated: int | None = None, vectors: bool = False,
         error_estimate: bool = True, tolerance: float = 1e-8,
         warn: bool = True) -> ScanResult:
    """Lowest levels of one channel at every value of a scanned parameter.

    Parameters
    ----------
    well, dimension, l, j, size, units, mass, levels
        As in :func:`~anharmony.spectrum.solve`.
    parameter
        ``"coupling"`` (H_ref + λ (H − H_ref), ``values`` are λ; with term orders
        H_ref + Σ_k λ^k W_k, the path of :func:`anharmony.series.series`),
        ``"well[i].<name>"`` or ``"well[i].coefficients[k]"``.
    values
        The values of the parameter.
    length
        Oscillator length b of the basis, one per value, or ``"auto"``: at each value the b
        :func:`~anharmony.spectrum.solve` would choose (for ``coupling``: the physical well's,
        so that every λ shares one basis).
    reference
        ``"auto"`` or a mapping as in :func:`~anharmony.spectrum.solve` (resolved per value;
        for ``coupling`` once, for the physical well), a resolved
        :class:`~anharmony.spectrum.Reference`, or a sequence with one per value.
    truncated
        Also diagonalise the leading ``truncated`` × ``truncated`` block of the same matrices
        (the quick error estimate |E(N) − E(M)|).
    vectors
        Keep the eigenvectors (for wavefunctions).
    error_estimate
        Give every level at every value the error bar of :func:`~anharmony.spectrum.solve`
        (:func:`~anharmony.spectrum.nested_error_estimate` of the same matrix: two
        eigenvalue-only solves of its leading ¾N and ½N blocks); ``False`` skips it.
    tolerance
        Relative tolerance of the error bars, as in :func:`~anharmony.spectrum.solve`
        (× the mean spacing of the bound levels at each value): ``ScanResult.converged``.
    warn
        Issue one :class:`~anharmony.ConvergenceWarning` naming the bound (or quasi-bound)
        levels above tolerance and at how many values; the runner, which names them for a
        case itself, passes ``False``.

    Returns
    -------
    ScanResult

    Notes
    -----
    The pencil H(s) = A + s B is used when the parameter enters linearly (no inverse-square
    term, which changes the basis), there is more than one value and every value has the same
    basis; A and B are then built once and kept in LAPACK band storage where the banded solver
    applies; the error estimate then takes its sub-blocks from the same band. Otherwise each
    value is solved as :func:`~anharmony.spectrum.solve` would. A coupling scan of a well with
    term orders uses the polynomial pencil H_ref + λ B₁ + Σ_{k≥2} λ^k B_k
    (:func:`~anharmony.pencil.order_pencil`); an inverse-square term of a radial channel stays
    whole at every λ (the series takes it into H_ref), and in 1D parity channels orders whose
    terms are not symmetric are refused.
    """
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    if isinstance(size, bool) or not isinstance(size, (int, np.integer)) or size < 1:
        raise InputError(f"size: must be an integer >= 1; got {size!r}")
    count = _check_levels(levels, size)
    if truncated is not None and (isinstance(truncated, bool)
                                  or not isinstance(truncated, (int, np.integer))
                                  or not 1 <= truncated < size):
        raise InputError(f"truncated: must be an integer from 1 to size - 1 = {size - 1}; "
                         f"got {truncated!r}")
    if not isinstance(error_estimate, bool):
        raise InputError(f"error_estimate: must be True or False; got {error_estimate!r}")
    if not isinstance(warn, bool):
        raise InputError(f"warn: must be True or False; got {warn!r}")
    tolerance = check_tolerance(tolerance)
    t = _target(well, parameter)
    vals = _values(values)
    if t.coupling and np.any(vals != 1.0):  # λ = 1 is the physical well, whatever the orders
        check_term_orders(well, channel)
    radial = channel.l is not None
    wells = ([well] * len(vals) if t.coupling  # one basis for every λ: the physical well's
             else [set_parameter(well, _path(t), float(v)) for v in vals])
    refs = _references(well, t, channel, mass, count, reference, vals,
                       None if t.coupling else wells)
    bases = _bases(refs, length, radial, wells, channel, count, size)
    osc = (2.0 * np.arange(count) + _lowest_oscillator_level(channel) if radial
           else np.arange(count) + 0.5)
    s = len(vals)
    out_e = np.full((s, count), np.nan)
    out_thr = np.full(s, np.nan)
    out_small = None if truncated is None else np.full((s, count), np.nan)
    out_vec = np.full((s, size, count), np.nan) if vectors else None
    out_err = np.full((s, count), np.nan) if error_estimate else None
    out_round = np.full(s, np.nan) if error_estimate else None
    basis_objs: list[Any] = []
    pencil = s > 1 and linear_in(well, _path(t)) and _same_basis(bases)
    if pencil:
        b, center = bases[0]
        pen, thr_a, thr_b, basis = _split(well, t, channel, refs[0], size, b, center)
        basis_objs = [basis] * s
        fast = (polynomial_thresholds(well, refs[0], channel, vals)
                if t.coupling and has_term_orders(well) else None)
        for k, v in enumerate(vals):
            h = pen.at(v)
            out_e[k], vec = pen.levels(h, size, count, vectors)
            if out_vec is not None:
                out_vec[k] = vec
            if out_small is not None:
                out_small[k] = pen.levels(h, truncated, count)[0]
            if out_err is not None and out_round is not None:
                out_err[k], out_round[k] = pen.error_estimate(h, out_e[k], channel.l is None)
            if t.coupling:
                out_thr[k] = (fast[k] if fast is not None and v != 1.0 else
                              path_threshold(well, thr_a, float(v), refs[k], channel))
                continue
            thr = linear_threshold(thr_a, thr_b, v)
            out_thr[k] = thr if not math.isnan(thr) else float(
                set_parameter(well, _path(t), float(v)).threshold(channel.dimension,
                                                                  symmetric=radial))
    else:
        for k, v in enumerate(vals):
            e, vec, small, thr, basis, err = _one_value(well, t, channel, refs[k], bases[k],
                                                         size, count, truncated, float(v),
                                                         vectors, error_estimate)
            out_e[k], out_thr[k] = e, thr
            if err is not None and out_err is not None and out_round is not None:
                out_err[k], out_round[k] = err
            if out_vec is not None:
                out_vec[k] = vec
            if out_small is not None:
                out_small[k] = small
            basis_objs.append(basis)
    lengths = np.array([b for b, _ in bases])
    v_min = np.array([r.v_min for r in refs])
    hw = np.array([r.frequency for r in refs])
    basis_hw = np.array([system.frequency_from_length(b, well.mass) for b in lengths])
    bound = out_e < out_thr[:, None]
    barrier = np.full(s, np.nan)
    quasi = np.zeros_like(bound)
    if not radial:
        for k in np.flatnonzero(out_thr == -math.inf):
            w_k = wells[k] if not t.coupling else coupled_well(well, float(vals[k]), refs[k],
                                                                radial)
            barrier[k], pass_x, side = line_pass(w_k)
            quasi[k] = ~bound[k] & (out_e[k] < barrier[k])
            if quasi[k].any():  # below the pass but living beyond it: the open side's states
                vec = (out_vec[k] if out_vec is not None else
                       _one_value(well, t, channel, refs[k], bases[k], size, count, None,
                                  float(vals[k]), True, False)[1])
                quasi[k] &= inside_share(basis_objs[k], vec, pass_x, side) > QUASI_INSIDE
    converged = tol_abs = None
    if out_err is not None:
        judged = [judge_levels(out_e[k], bound[k], quasi[k], out_err[k], tolerance,
                               float(basis_hw[k])) for k in range(s)]
        converged = np.array([c for c, _ in judged]).reshape(s, count)
        tol_abs = np.array([tl for _, tl in judged])
        if warn:
            _warn_scan(channel, system, vals, bound | quasi, converged, out_err, tol_abs,
                       _path(t), size)
    return ScanResult(
        parameter=_path(t), values=vals, energies=out_e, bound=bound,
        threshold=out_thr, reference_energies=v_min[:, None] + hw[:, None] * osc[None, :],
        references=refs, length=lengths, center=np.array([c for _, c in bases]),
        basis_frequency=basis_hw,
        channel=channel, units=system, mass=well.mass, size=int(size),
        method="pencil" if pencil else "rebuild", well=well, bases=tuple(basis_objs),
        truncated_size=truncated, truncated_energies=out_small, vectors=out_vec,
        error_estimate=out_err, rounding=out_round, converged=converged, tolerance=tol_abs,
        quasi_bound=quasi, barrier=barrier)


def _warn_scan(channel: Channel, system: UnitSystem, vals: np.ndarray, judged: np.ndarray,
               converged: np.ndarray, errors: np.ndarray, tol: np.ndarray, parameter: str,
               size: int) -> None:
    """One ConvergenceWarning naming the judged levels above tolerance, with at how many of
    the values (as the runner names them for a case)."""
    bad = judged & ~converged
    if not bad.any():
        return
    unit = "" if system.energy == "1" else " " + system.energy
    name = channel_label(channel.dimension, channel.l, channel.j, units=system)
    cols = np.flatnonzero(bad.any(axis=0))
    names = ", ".join(f"{channel.level_label(int(n), units=system)} ({int(bad[:, n].sum())} "
                      f"of {len(vals)} values)" for n in cols[:8])
    worst = float(np.max(errors[bad]))
    warnings.warn(f"{name}: scan of {parameter}: level(s) {names}{', …' if cols.size > 8 else ''}"
                  f" not converged (error estimate up to {worst:.2e}{unit}, tolerance "
                  f"{float(np.min(tol[bad.any(axis=1)])):.2e}{unit} or more) with size={size}; "
                  "increase size", ConvergenceWarning, stacklevel=3)
