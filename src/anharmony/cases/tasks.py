"""What a validated case asks for: its tasks (scan point × channel) and their cost.

:func:`expand` lists the tasks with the reference oscillator of each scan point resolved;
:func:`estimate_work` says how much diagonalisation a case will do before it runs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..hamiltonian import Channel
from .case import Case, ChannelSpec

__all__ = ["Task", "WorkEstimate", "estimate_work", "expand", "resolve_length",
           "resolve_reference"]


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
    from ..reference import reference_oscillator

    if case.scan_target.kind == "coupling":
        value = None
    first = min(case.channels(), key=lambda c: (-1 if c.l is None else c.l, c.j or 0.0))
    return reference_oscillator(case.well_at(value), case.dimension, l=first.l,
                                mass=case.mass_at(value), levels=case.model.levels.count,
                                reference=case.reference_spec(value), j=first.j)


def resolve_length(case: Case, value: float | None, reference: Any) -> float:
    """The basis length b at one scan value, shared by every channel (DESIGN §6: one ħω and b
    per scan point): the case's ``basis.length``, or the b that :func:`~anharmony.solve`
    chooses for the channel of lowest l (and j) with the shared ``reference``."""
    from ..reference import default_length

    given = case.basis_length_at(value)
    if given != "auto":
        return float(given)
    well = case.well_at(None if case.scan_target.kind == "coupling" else value)
    first = min(case.channels(), key=lambda c: (-1 if c.l is None else c.l, c.j or 0.0))
    channel = Channel(case.dimension, first.l, first.j)
    return default_length(well, channel, case.model.levels.count, case.model.basis.size,
                          reference)[0]


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


# Rough cost of the core on one core (OPENBLAS_NUM_THREADS=1), measured by
# benchmarks/bench_convergence.py ("cost per size"): a dense diagonalisation of N states takes
# about SOLVE_SECONDS_N3 · N³ s, building a channel Hamiltonian with panel quadrature (the
# costly kind: Woods–Saxon, spin–orbit, Coulomb) about BUILD_SECONDS_N2 · N² s.
SOLVE_SECONDS_N3 = 1.0e-9
BUILD_SECONDS_N2 = 3.5e-6


@dataclass(frozen=True)
class WorkEstimate:
    """How much diagonalisation a case asks for, before it runs.

    Attributes
    ----------
    tasks : int
        Scan points × channels.
    solves : int
        Diagonalisations, at most (a growing study counted as if it reaches its size limit).
    builds : int
        Hamiltonians built, at most.
    largest_size : int
        The largest matrix: largest_size × largest_size.
    seconds : float
        Rough wall-clock time on one core from the measured per-size costs; within a factor
        of a few (polynomial wells build faster, busy machines run slower).
    upper_bound : bool
        True when a study grows the basis: the run stops earlier once the bound levels meet
        the tolerance (or when a channel has no bound level).
    """

    tasks: int
    solves: int
    builds: int
    largest_size: int
    seconds: float
    upper_bound: bool

    def summary(self) -> str:
        """One line for ``anharmony check``."""
        at_most = "at most " if self.upper_bound else ""
        when = " (if every study grows to its size limit)" if self.upper_bound else ""
        return (f"{self.tasks} task(s); {at_most}{self.solves} diagonalisation(s), "
                f"{self.builds} Hamiltonian build(s), largest matrix {self.largest_size} x "
                f"{self.largest_size}; roughly {_duration(self.seconds)} on one core{when}")


def _duration(seconds: float) -> str:
    if seconds < 1.0:
        return "under a second"
    if seconds < 120.0:
        return f"{math.ceil(seconds)} s"
    if seconds < 7200.0:
        return f"{seconds / 60.0:.0f} min"
    return f"{seconds / 3600.0:.1f} h"


def estimate_work(case: Case) -> WorkEstimate:
    """The estimated work of a case: solves, largest matrix, rough seconds.

    Meant for ``anharmony check`` (print :meth:`WorkEstimate.summary`), so that a case that
    would run for hours is seen before it runs. Nothing is computed: the counts follow from
    the case's settings (scan points, channels, basis size, the convergence study's sizes and
    lengths), and the seconds from the per-size costs SOLVE_SECONDS_N3 and BUILD_SECONDS_N2.

    Parameters
    ----------
    case
        A validated case (:func:`anharmony.cases.load_cases`).

    Returns
    -------
    WorkEstimate

    Notes
    -----
    Each task (scan point × channel) diagonalises the case's basis once, and once more at
    N − N//4 states when ``error_estimate`` is the change from a smaller basis. A convergence
    study adds the diagonalisations of :meth:`anharmony.convergence.ConvergenceSettings.work`:
    a study that grows is counted as if every channel reaches its size limit, so the figures
    are then an upper bound. Perturbation series are not counted.
    """
    if case.model.space.geometry != "central":
        return _geometry_work(case)
    tasks = len(case.scan_values()) * len(case.channels())
    n = case.model.basis.size
    conv = case.model.convergence
    per_task: dict[int, list[int]] = {n: [1, 1]}  # size -> [solves, builds]
    if conv.method == "smaller_basis" and not conv.study and n - n // 4 >= 1:
        per_task.setdefault(n - n // 4, [0, 0])[0] += 1
    settings = case.study_settings()
    if settings is not None:
        lengths = None if conv.scans_lengths else 1
        for size, solves, builds in settings.work(case.model.levels.count, lengths):
            row = per_task.setdefault(size, [0, 0])
            row[0] += solves
            row[1] += builds
    solves = tasks * sum(r[0] for r in per_task.values())
    builds = tasks * sum(r[1] for r in per_task.values())
    seconds = tasks * sum(r[0] * SOLVE_SECONDS_N3 * size**3 + r[1] * BUILD_SECONDS_N2 * size**2
                          for size, r in per_task.items())
    return WorkEstimate(tasks=tasks, solves=solves, builds=builds,
                        largest_size=max(per_task), seconds=float(seconds),
                        upper_bound=bool(settings is not None and conv.grows))


def _geometry_work(case: Case) -> WorkEstimate:
    """A Cartesian or axial case: every block at N_max and N_max − 2 shells per scan point (an
    upper bound since the nested truncations are sub-blocks of the N_max matrices).

    The states up to N_max shells number C(N + d, d) in d dimensions (twice with spin); the
    axial blocks are about 2(N + 1) (Λ or Ω, and parity), the Cartesian ones up to 2^d. The
    largest block is taken as twice the average, and each block costs a build and a solve.
    """
    space = case.model.space
    shells = space.shells if space.shells is not None else 12
    d = space.dimension
    spin = any(name.endswith("spin_orbit") for spec in case.model.well for name in spec)
    points = len(case.scan_values())
    solves = builds = 0
    seconds = 0.0
    largest = 1
    for n_max in (shells, max(shells - 2, 0)):
        states = math.comb(n_max + d, d) * (2 if spin else 1)
        blocks = 2 * (n_max + 1) if space.geometry == "axial" else 2**d
        size = max(1, 2 * states // blocks)
        largest = max(largest, size)
        solves += blocks
        builds += blocks
        seconds += blocks * (SOLVE_SECONDS_N3 * size**3 + BUILD_SECONDS_N2 * size**2
                             * (4 if spin else 1))
    return WorkEstimate(tasks=points, solves=points * solves, builds=points * builds,
                        largest_size=largest, seconds=points * seconds, upper_bound=False)
