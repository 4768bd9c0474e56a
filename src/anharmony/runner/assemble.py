"""Assembling a case: the partial arrays of its jobs merged into one store.CaseResult.

Also decides ``error_estimate`` and ``converged`` (from the quick estimate or the study) and
writes the warning lines that name every level that is not converged.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..cases import Case
from ..errorbars import ESTIMATE_SAFETY, nested_sizes
from ..errors import InputError
from ..labels import channel_label, level_label
from ..store import CaseResult, empty_like_series
from .compute import core_estimate, empty
from .plan import smaller_size

__all__ = ["assemble"]

_MERGE = ("energy", "bound", "quasi", "smaller", "error", "reference_energy", "threshold",
          "series_coefficient", "series_partial_sum", "series_resummed", "series_optimal",
          "series_optimal_error", "series_optimal_order")
_PER_POINT = ("frequency", "length", "ref_frequency", "ref_length", "center", "v_min",
              "barrier")


def assemble(case: Case, parts: Sequence[dict[str, Any]]) -> CaseResult:
    """Merge the partial arrays of a case's jobs into one :class:`CaseResult`.

    The part of a ``"fit"`` job carries the fit and the parts of the fitted case's jobs: the
    result holds the levels of the fitted well and the fit.
    """
    if case.model.space.geometry != "central":
        return _assemble_geometry(case, parts)
    fits = [p for p in parts if "fit" in p]
    if fits:
        (part,) = fits
        result = assemble(case.fitted(part["values"]), part["parts"])
        return dataclasses.replace(result, fit=part["fit"])
    fillings = [p["filling"] for p in parts if "filling" in p]
    if fillings:
        result = assemble(case, [p for p in parts if "filling" not in p])
        return dataclasses.replace(result, extra={**result.extra,
                                                  **_filling_variables(case, fillings)})
    rotations = [p["rotation"] for p in parts if "rotation" in p]
    if rotations:
        result = assemble(case, [p for p in parts if "rotation" not in p])
        return dataclasses.replace(result, rotation=rotations[0])
    values = case.scan_values()
    out = empty(case, len(values))
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
    elif core_estimate(case):
        err = out["error"]
        converged = np.isfinite(err) & (err < tol)
        n = case.model.basis.size
        m1, m2 = nested_sizes(n, any(c.l is None for c in chans))
        notes.append(f"error_estimate: the estimate of solve() (nested_error_estimate): "
                     f"{ESTIMATE_SAFETY:g} x the Aitken-extrapolated remainder of the changes "
                     f"from {m2} to {m1} to {n} basis states at the same basis length, plus "
                     "eps*|H|")
    else:
        err = np.abs(out["energy"] - out["smaller"])
        converged = np.isfinite(err) & (err < tol)
        if smaller_size(case) is None:
            notes.append("error_estimate: not estimated (convergence.estimate is none)")
        else:
            notes.append(f"error_estimate: |E(N) - E(M)| with N = {case.model.basis.size} "
                         f"and M = {smaller_size(case)} basis states, the same basis length")
    quasi, barrier = _open_line(case, out)
    extra: dict[str, Any] = {}
    if quasi is not None:
        out = {**out, "quasi": quasi}
        extra["escape_barrier"] = (("scan",), barrier, {
            "units": case.units.energy, "long_name": "escape energy of the open line "
            "(threshold -inf): the highest V between the minimum and the side where V falls "
            "below it; levels below it are quasi-bound"})
        extra["quasi_bound"] = (("scan", "channel", "level"), quasi.astype(np.int8), {
            "units": "1", "long_name": "level of an open well below its escape barrier "
            "(1) or not (0)"})
        notes.append("the well is open (V falls without bound on one side): no level is bound "
                     "(bound = 0); levels below escape_barrier are quasi-bound "
                     "(quasi_bound = 1), and their convergence is judged as a bound level's")
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
    orders = next((p["out"]["term_orders"] for p in parts if p["out"].get("term_orders")), ())
    if not orders and case.model.scan is not None and case.scan_target.kind == "coupling":
        orders = case.well_at(None).orders  # the coupling path depends on them too
    return CaseResult(
        scan_value=np.asarray(values, dtype=float),
        l=np.array([-1 if c.l is None else c.l for c in chans], dtype=np.int64),
        j=np.array([c.j for c in chans], dtype=float) if has_spin else None,
        label=[channel_label(c.dimension, c.l, c.j, units=case.units) for c in chans],
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
        level_labels=[[_label(case, c, n) for n in range(case.model.levels.count)]
                      for c in range(len(chans))],
        notes=notes, warnings=(_study_warnings(case, out["study"]) if out["study"] else
                               _quick_warnings(case, out, err, converged)),
        extra={**extra, **_term_order_variables(case, orders)},
    )


def _term_order_variables(case: Case, orders: Sequence[int]) -> dict[str, Any]:
    """``series_term_order`` and ``series_term_kind`` over ``term`` (the series'
    ``term_orders``, one per term of the well), when a series was made or the coupling was
    scanned (whose path H_ref + Σ λ^k W_k they set)."""
    if not orders:
        return {}
    kinds = [kind for kind, _ in case.well_at(None).specs][:len(orders)]
    return {
        "series_term_order": (("term",), np.asarray(orders, dtype=np.int16), {
            "units": "1", "long_name": "perturbation order of each term of the well: the "
            "power of lambda at which well[term] enters the perturbation W of the series "
            "and of a coupling scan",
            "comment": "W(lambda) = sum_k lambda**k W_k, W_1 = V_1 - V_ref, W_k = V_k (the "
            "terms at order k); 1 for every term unless the case gives an order"}),
        "series_term_kind": (("term",), np.asarray(kinds, dtype=str), {
            "units": "1", "long_name": "kind of each term of the well, as in the case file"}),
    }


def _open_line(case: Case, out: dict[str, Any]) -> tuple[np.ndarray | None, np.ndarray]:
    """The quasi-bound levels (S, C, L) and escape barrier (S,) of a case on the open line
    (1D channels without parity, threshold −∞ at some point), as the core scan flagged them
    (:func:`anharmony.scan.scan`); (None, …) otherwise."""
    chans = case.channels()
    line = [c for c, ch in enumerate(chans) if ch.dimension == 1 and ch.l is None]
    if not line or not np.any(out["threshold"][:, line] == -np.inf):
        return None, np.full(len(case.scan_values()), np.nan)
    return out["quasi"], out["barrier"]


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
        raise InputError(f"convergence study: {len(cells)} of {s * c} (scan point, channel) "
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




def _label(case: Case, c: int, n: int) -> str:
    ch = case.channels()[c]
    return level_label(case.dimension, -1 if ch.l is None else ch.l, ch.j, n, units=case.units)


def _points(ks: Sequence[int], total: int) -> str:
    return f", {len(ks)} of {total} scan points" if total > 1 else ""


def _quick_warnings(case: Case, out: dict[str, Any], err: np.ndarray, converged: np.ndarray
                    ) -> list[str]:
    """Without a study: one line naming every bound level whose quick estimate exceeds the
    tolerance, and one for the levels above the threshold (discretised-continuum states)."""
    m = smaller_size(case)
    if m is None:  # convergence.estimate: none: nothing is estimated, nothing is claimed
        return []
    values = case.scan_values()
    energy, bound = out["energy"], out["bound"]
    quasi = out.get("quasi")
    is_open = quasi is not None
    if is_open:  # an open line: its quasi-bound levels are judged as bound ones
        bound = bound | quasi
    unit = "" if case.units.energy == "1" else f" {case.units.energy}"
    lines = []
    slow = [(c, n) for c in range(energy.shape[1]) for n in range(energy.shape[2])
            if (bound[:, c, n] & ~converged[:, c, n]).any()]
    if slow:
        names = []
        for c, n in slow:
            ks = np.flatnonzero(bound[:, c, n] & ~converged[:, c, n])
            worst = np.nanmax(err[ks, c, n]) if np.isfinite(err[ks, c, n]).any() else np.nan
            names.append(f"{_label(case, c, n)} (error estimate up to {worst:.2g}{unit}"
                         f"{_points(ks, len(values))})")
        tol = case.model.convergence.tolerance
        what = (f"the error estimate (nested basis blocks up to {case.model.basis.size} "
                "states)" if core_estimate(case) else
                f"the change from {m} to {case.model.basis.size} basis states")
        lines.append(f"{len(slow)} {'bound or quasi-bound' if is_open else 'bound'} level(s) "
                     f"not converged: {what} exceeds the tolerance "
                     f"{tol:g}{unit}"
                     f": {', '.join(names)}; raise basis.size (or set basis.length), or run a "
                     "convergence study (convergence: {max_size: ...})")
    above = [(c, n) for c in range(energy.shape[1]) for n in range(energy.shape[2])
             if (np.isfinite(energy[:, c, n]) & ~bound[:, c, n]).any()]
    if above:
        names = [_label(case, c, n) + (
            f" ({np.count_nonzero(np.isfinite(energy[:, c, n]) & ~bound[:, c, n])} of "
            f"{len(values)} scan points)" if len(values) > 1 else "") for c, n in above]
        if is_open:
            lines.append(f"{len(above)} level(s) lie above the escape barrier of the open well "
                         f"(not quasi-bound; their error bars are not judged): "
                         f"{', '.join(names)}")
        else:
            lines.append(f"{len(above)} level(s) lie above the threshold, discretised-continuum "
                         f"states flagged bound = 0 and converged = 0: {', '.join(names)}; "
                         "request fewer levels (levels.count), or raise basis.size if one "
                         "should be bound")
    return lines


def _assemble_geometry(case: Case, parts: Sequence[dict[str, Any]]) -> CaseResult:
    """The blocks of a Cartesian or axial case as the channels of a result (DESIGN §10).

    The channel dimension holds every block found at any scan point (ordered by Ω or Λ, then
    parity); ``l`` is −1 (no angular quantum number), ``block_degeneracy`` says that a block
    stands for ±Ω; the asymptotic label of each level, which changes along a deformation
    scan, is ``level_asymptotic_label`` (scan, channel, level); ``level_label`` holds the one
    at the last scan point (where a level figure writes its labels).
    """
    from ..geometry.by_block import _order, block_label

    geometry = case.model.space.geometry
    values = case.scan_values()
    s, n = len(values), case.model.levels.count
    by_point = {p["points"][0]: p for p in parts}
    keys = sorted({key for p in parts for key in p["geometry"].keys},
                  key=lambda key: _order(geometry, key))
    nb = len(keys)
    energy = np.full((s, nb, n), np.nan)
    error = np.full((s, nb, n), np.nan)
    bound = np.zeros((s, nb, n), dtype=bool)
    quasi = np.zeros((s, nb, n), dtype=bool)
    threshold = np.full((s, nb), np.nan)
    names = np.full((s, nb, n), "", dtype=object)
    naxes = 2 if geometry == "axial" else case.dimension
    lengths = np.full((s, naxes), np.nan)
    trap = np.full((s, case.dimension), np.nan)
    barrier = np.full(s, np.nan)
    degeneracy = np.ones(nb, dtype=np.int64)
    messages: list[str] = []
    for k, part in sorted(by_point.items()):
        res = part["geometry"]
        for i, key in enumerate(res.keys):
            b = keys.index(key)
            energy[k, b] = res.energies[i]
            error[k, b] = res.error_estimate[i]
            bound[k, b] = res.bound[i]
            if res.quasi_bound is not None:
                quasi[k, b] = res.quasi_bound[i]
            names[k, b] = res.level_labels[i]
            degeneracy[b] = res.degeneracy[i]
        threshold[k] = res.threshold
        barrier[k] = res.barrier
        lengths[k] = res.lengths
        trap[k] = part["trap"]
        messages += part["messages"]
    tol = case.model.convergence.tolerance
    judged = bound | quasi  # an open well's quasi-bound levels are judged as bound ones
    with np.errstate(invalid="ignore"):
        converged = judged & (error <= tol)
    hw = 2.0 * case.units.hbar2_over_2m(case.mass) / lengths[:, 0] ** 2
    labels = [block_label(geometry, key) for key in keys]
    warnings_ = []
    at = case.scan_parameter
    for k in range(s):
        bad = [str(names[k, b, m]) or f"{labels[b]} #{m}" for b in range(nb) for m in range(n)
               if judged[k, b, m] and not converged[k, b, m]]
        if bad:
            where = f" at {at} = {values[k]:g}" if case.model.scan is not None else ""
            kind = "bound or quasi-bound" if math.isfinite(barrier[k]) else "bound"
            warnings_.append(f"{len(bad)} {kind} level(s) not converged{where} (error bar "
                             f"from the nested truncations below shells above {tol:g}): "
                             f"{', '.join(bad[:8])}" + (", …" if len(bad) > 8 else "")
                             + "; raise space.shells")
    u = case.units
    axes = ("perp", "z") if geometry == "axial" else ("x", "y", "z")[:case.dimension]
    extra = {
        "block_degeneracy": (("channel",), degeneracy,
                             {"units": "1", "long_name": "levels each block stands for: 2 for "
                              "+-Omega (or +-Lambda), 1 otherwise"}),
        "level_asymptotic_label": (("scan", "channel", "level"), names.astype(str),
                                   {"units": "1", "long_name": "dominant basis state of the "
                                    "level: Omega^pi[N n_z Lambda] (axial) or (n_x,n_y,n_z)"}),
        "basis_lengths": (("scan", "basis_axis"), lengths,
                          {"units": u.length, "long_name": "oscillator length of the basis "
                           "along each axis (" + ", ".join(axes) + ")"}),
        "trap_frequency": (("scan", "axis"), trap,
                           {"units": u.energy, "long_name": "hbar*omega of the principal "
                            "axes of the Hessian at the minimum, ascending (NaN for wells "
                            "without a curved minimum, such as a deformed Woods-Saxon well)"}),
    }
    notes = [f"{geometry} geometry: channels are the blocks ({', '.join(labels)}); "
             "error_estimate is each level's error bar from its values in the nested "
             "truncations below shells (docs/geometries.md; inf where the truncated basis may "
             "lack a lower level of the block); "
             "basis_size is N_max; frequency and length are those of the first axis"]
    if np.any(np.isfinite(barrier)):
        extra["escape_barrier"] = (("scan",), barrier, {
            "units": u.energy, "long_name": "escape energy of the open well (threshold -inf): "
            "V at its lowest mountain pass out of the basin of the minimum (a first-order "
            "saddle); levels below it are quasi-bound"})
        notes.append("the well is open (V falls without bound one way, as under gravity): no "
                     "level is bound (bound = 0); levels below escape_barrier are quasi-bound "
                     "states that leave by tunnelling (quasi_bound = 1), and their convergence "
                     "is judged as a bound level's; levels above it are not judged")
        extra["quasi_bound"] = (("scan", "channel", "level"), quasi.astype(np.int8), {
            "units": "1", "long_name": "level of an open well below its escape barrier "
            "(1) or not (0)"})
    nan = np.full(s, np.nan)
    series = empty_like_series(s, nb, n, 0, 0)
    return CaseResult(
        scan_value=np.asarray(values, dtype=float), l=np.full(nb, -1, dtype=np.int64), j=None,
        label=labels, energy=energy, bound=bound, converged=converged,
        reference_energy=np.full((s, nb, n), np.nan), error_estimate=error, frequency=hw,
        length=lengths[:, 0], center=nan, v_min=nan, reference_method=["geometry"] * s,
        reference_reason=[f"{geometry} basis: lengths from the reference oscillator of the "
                          "(undeformed) well or the Hessian at the minimum"] * s,
        threshold=threshold, basis_size=max(p["geometry"].shells for p in parts),
        resum_methods=[], level_labels=[[str(names[-1, b, m]) or f"{labels[b]} #{m}"
                                         for m in range(n)] for b in range(nb)],
        notes=notes,
        warnings=warnings_ + sorted(set(messages)), extra=extra, **series)


def _filling_variables(case: Case, fillings: Sequence[dict[str, Any]]) -> dict[str, Any]:
    """The ``shell_*`` variables of a case with a ``filling:`` block, per scan point."""
    s = len(case.scan_values())
    shape = (s, len(case.channels()), case.model.levels.count)
    fermi, gap, rms = (np.full(s, np.nan) for _ in range(3))
    closed = np.zeros(s, dtype=np.int8)
    occupancy = np.zeros(shape)
    for f in fillings:
        k = f["point"]
        fermi[k], gap[k], rms[k], closed[k] = f["fermi"], f["gap"], f["rms"], int(f["closed"])
        occupancy[k] = f["occupancy"]
    u = case.units
    n = case.model.filling.particles
    return {
        "shell_occupancy": (("scan", "channel", "level"), occupancy,
                            {"units": "1", "long_name": f"particles in the level when {n} "
                             "fill the levels of every channel from the lowest (2j + 1 each)",
                             "particles": n}),
        "shell_fermi_energy": (("scan",), fermi, {"units": u.energy, "long_name": "energy of "
                               "the highest occupied level"}),
        "shell_gap": (("scan",), gap, {"units": u.energy, "long_name": "from the Fermi level "
                      "to the next empty level (NaN when the shell is open or none is bound)"}),
        "shell_closed": (("scan",), closed, {"units": "1", "long_name": "1 when the highest "
                         "occupied shell is full", "flag_values": np.array([0, 1], np.int8),
                         "flag_meanings": "open closed"}),
        "shell_rms_radius": (("scan",), rms, {"units": u.length, "long_name": "rms radius of "
                             "the filled orbitals, sqrt(sum occ <r^2> / N)"}),
    }
