"""What a validated case asks for: its tasks (scan point × channel) and their cost.

:func:`expand` lists the tasks with the reference oscillator of each scan point resolved;
:func:`estimate_work` says how much diagonalisation a case will do before it runs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .case import Case, ChannelSpec

__all__ = ["Task", "WorkEstimate", "estimate_work", "expand", "resolve_reference"]
WorkEstimate = None


@dataclass(frozen=True)
class Task:
    """One unit of work: one scan point in one channel, with its reference oscillator.

    Attributes
    ----------
    case : Case
    scan_index : int
    scan_value : float
    channel : ChannelSpec
    reference : object
        The resolved :class:`anharmony.spectrum.Reference` (or ``None`` before the core has
        one).
    """

    case: Case
    scan_index: int
    scan_value: float
    channel: ChannelSpec
    reference: Any = None


def resolve_reference(case: Case, value: float | None) -> Any:
    """The reference oscillator of the case at one scan value (one per point, all channels).

    It is resolved for the channel of lowest l (and lowest j) and shared by every channel, so
    that each scan point has one ħω and b (DESIGN §6). For ``coupling`` scans it is the
    reference of the physical well (λ = 1) at every point.
    """
    from ..spectrum import reference_oscillator

    if case.scan_target.kind == "coupling":
        value = None
    first = min(case.channels(), key=lambda c: (-1 if c.l is None else c.l, c.j or 0.0))
    return reference_oscillator(case.well_at(value), case.dimension, l=first.l,
                                mass=case.mass_at(value), levels=case.model.levels.count,
                                spec=case.reference_spec(value), j=first.j)


def expand(case: Case, *, resolve: bool = True) -> list[Task]:
    """The tasks of a case: every scan point × every channel.

    Parameters
    ----------
    case
        A validated case.
    resolve
        Resolve the reference oscillator of each scan point (needs the numerical core).
    """
    tasks = []
    refs: dict[int, Any] = {}
    for k, value in enumerate(case.scan_values()):
        if resolve:
            refs[k] = resolve_reference(case, value) if (
                k == 0 or case.scan_target.kind != "coupling") else refs[0]
        for ch in case.channels():
            tasks.append(Task(case, k, value, ch, refs.get(k)))
    return tasks


def estimate_work(case: Case) -> Any:
    raise NotImplementedError
