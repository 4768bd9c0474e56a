"""The convergence study of one (scan point, channel): a call of the core's ``converge``.

:func:`study_cell` runs :func:`anharmony.convergence.converge` for the channel at the point's
well and keeps the study's variables (stacked into the result by :mod:`.assemble`) and the
texts of the levels whose ``converged`` flag will be 0.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..cases import Case
from ..reference import Reference
from ..well import Well

__all__ = ["study_cell"]


def study_cell(case: Case, out: dict[str, Any], k: int, c: int, well: Well, ref: Reference,
                mass: float | None, b: float, energy: np.ndarray, bound: np.ndarray) -> None:
    """Run the convergence study of channel c at scan point k; keep its cell and levels."""
    from ..convergence import converge

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

