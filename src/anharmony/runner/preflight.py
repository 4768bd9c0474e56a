"""What a run would refuse, found before it starts: ``check`` and ``run`` ask the same question.

Validation (:mod:`anharmony.cases`) checks each field and their combinations; some problems
show only when the numbers are made: a reference oscillator that cannot be resolved (a
Woods–Saxon radius of 10¹⁰⁰ fm, a diffuseness of 10⁻³⁰⁰ fm), a quadrature that does not
settle, matrix elements that overflow. :func:`preflight` makes those numbers for the first and
last scan point in the first and last channel — the reference, the basis length and the
Hamiltonian, not its eigenvalues — and returns each failure as an
:class:`~anharmony.cases.Issue` at the case's field, so that ``check`` refuses exactly what
``run`` would and ``run`` refuses it up front (exit 2) instead of failing the case (exit 1).
"""

from __future__ import annotations

import warnings

import numpy as np

from ..cases import Case, Issue, WorkEstimate, estimate_work, resolve_length, resolve_reference
from ..errors import AnharmonyError
from ..hamiltonian import Channel, channel_hamiltonian

__all__ = ["WORK_LIMIT_SECONDS", "preflight", "work_refusal"]

#: Estimated work (seconds on one core, :func:`~anharmony.cases.estimate_work`) beyond which
#: ``check`` and ``run`` refuse a case unless told ``--allow-long``: the demo cases take
#: seconds, the largest studies of the benchmarks minutes; hours mean a setting is off.
WORK_LIMIT_SECONDS = 4 * 3600.0

# What the core raises for input it cannot compute with (AnharmonyError covers InputError,
# TermError, NumericalError…; the others are numpy's and Python's own).
_FAILURES = (AnharmonyError, ValueError, ArithmeticError, np.linalg.LinAlgError)


def _geometry_problems(case: Case) -> list[Issue]:
    """A Cartesian or axial case: its blocks in a small basis at the first and last point."""
    from ..geometry.by_block import solve_blocks

    values = case.scan_values()
    space = case.model.space
    for value in sorted({values[0], values[-1]}):
        given = case.basis_length_at(value)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                solve_blocks(case.well_at(value), case.dimension, geometry=space.geometry,
                             shells=min(2, space.shells if space.shells is not None else 2),
                             truncation=space.truncation or "shells", units=case.units,
                             mass=case.mass_at(value), levels=1,
                             lengths=None if given == "auto" else given)
        except _FAILURES as exc:
            return [case.issue(("well",), f"the {space.geometry} blocks{_at(case, value)} "
                               f"cannot be made: {exc}")]
    return []


def _heaviest(case: Case) -> tuple[tuple[str, ...], str]:
    """The setting that makes a case's work large: its field and what to change."""
    m = case.model
    conv = m.convergence
    n = m.basis.size
    study = case.study_settings()
    sizes = [s for s in (conv.sizes or []) if s > 0]
    lengths = conv.lengths if isinstance(conv.lengths, list) else []
    if study is not None and (max(sizes, default=0) > n or len(sizes) * max(1, len(lengths))
                              > 20):
        if len(lengths) > len(sizes):
            return ("convergence", "lengths"), "fewer basis lengths"
        return ("convergence", "sizes"), "fewer or smaller basis sizes"
    points, channels = len(case.scan_values()), len(case.channels())
    if points * channels > 2000:
        if points >= channels:
            return ("scan", "values"), "fewer scan values"
        return ("space", "l") if case.model.space.l is not None else ("space",), \
            "fewer channels"
    return ("basis", "size"), "a smaller basis"


def work_refusal(case: Case, estimate: WorkEstimate | None = None,
                 limit: float = WORK_LIMIT_SECONDS) -> Issue | None:
    """The refusal of a case whose estimated work exceeds ``limit`` seconds on one core."""
    work = estimate_work(case) if estimate is None else estimate
    if work.seconds <= limit:
        return None
    field, change = _heaviest(case)
    return case.issue(field, (
        f"the case asks for about {work.summary()}, beyond the limit of "
        f"{limit / 3600.0:g} h; ask for {change}, or pass --allow-long to run it anyway"))


def _at(case: Case, value: float | None) -> str:
    return "" if case.model.scan is None else f" at {case.scan_parameter} = {value:g}"


def preflight(case: Case, *, work_limit: float | None = WORK_LIMIT_SECONDS,
              numbers: bool = True) -> list[Issue]:
    """The problems a run of ``case`` would meet first, positioned in its file.

    Parameters
    ----------
    case
        A validated case.
    work_limit
        Refuse a case whose estimated work exceeds this many seconds on one core
        (:func:`work_refusal`); ``None`` accepts any.
    numbers
        Make the reference, basis length and Hamiltonians (``False``: only the geometry and
        the work are checked, as ``check --no-reference`` does).

    Returns
    -------
    list of Issue
        Empty when its work is within the limit and the blocks of a Cartesian or axial case
        can be made in a small basis, or, for a central case, the
        reference, the basis length and the Hamiltonians of the first and last scan point in
        the first and last channel can be made and are finite.
    """
    refusal = None if work_limit is None else work_refusal(case, limit=work_limit)
    if refusal is not None or not numbers:
        return [] if refusal is None else [refusal]
    if case.model.space.geometry != "central":
        return _geometry_problems(case)
    values = case.scan_values()
    channels = case.channels()
    kind = case.scan_target.kind
    given = case.model.reference
    explicit_reference = given.length is not None or given.frequency not in (None, "auto")
    for k in sorted({0, len(values) - 1}):
        value = values[k]
        try:
            ref = resolve_reference(case, value)
        except _FAILURES as exc:
            field = ("reference",) if explicit_reference else ("well",)
            return [case.issue(field, f"the reference oscillator{_at(case, value)} cannot be "
                               f"resolved: {exc}")]
        try:
            length = resolve_length(case, value, ref)
        except _FAILURES as exc:
            return [case.issue(("basis",), f"the basis length{_at(case, value)} cannot be "
                               f"chosen: {exc}")]
        well = case.well_at(None if kind == "coupling" else value)
        for c in sorted({0, len(channels) - 1}):
            ch = channels[c]
            where = f"{_at(case, value)} in channel {ch.label}"
            try:
                h = channel_hamiltonian(well, Channel(case.dimension, ch.l, ch.j),
                                        case.model.basis.size, length, ref.center,
                                        mass=case.mass_at(value))
                finite = bool(np.all(np.isfinite(h.total)))
            except _FAILURES as exc:
                return [case.issue(("well",), f"the Hamiltonian{where} cannot be built: {exc}")]
            if not finite:
                return [case.issue(("well",), (
                    f"the Hamiltonian{where} has entries that are not finite (overflow) at "
                    f"{case.model.basis.size} states of length {length:.6g}; use a smaller "
                    "basis or milder parameters"))]
    return []
