"""Batches: run many cases, write each result as soon as it is complete, report progress.

:func:`run_case` returns the dataset of one case without writing anything (DESIGN §8);
:func:`run_batch` checks every output first, plans every case into jobs, hands the jobs to an
executor and writes each case's result through the store once its last job is in.
"""

from __future__ import annotations

import contextlib
import os
import signal
import threading
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .._atomic import Claim, OutputHeldError, claim, lock_path, remove_stale_temporaries
from ..cases import Case, CaseError, Problem, load_case, load_cases
from ..errors import InputError
from ..store import (
    TEMP_SUFFIX,
    CaseResult,
    ResultFileError,
    build_dataset,
    read_dataset,
    write_dataset,
)
from .assemble import assemble
from .compute import run_job
from .executors import distributed, failure, pool, serial
from .plan import Job, output_path, plan_case

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

__all__ = ["BatchReport", "Interrupted", "check_outputs", "compute_case",
           "run_batch", "run_case"]


class Interrupted(BaseException):
    """The batch was stopped by SIGINT or SIGTERM; ``.signal`` is the signal number."""

    def __init__(self, signum: int) -> None:
        super().__init__(f"stopped by signal {signum}")
        self.signal = signum


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


def _resume_problem(case: Case, path: Path) -> str | None:
    """Why the existing ``path`` cannot be kept as the result of ``case``, or None."""
    again = "; --resume cannot keep it: use --overwrite to replace it"
    try:
        ds = read_dataset(path)  # the store's own reader and its words for a bad file
    except ResultFileError as exc:  # not netCDF, no schema tag, core variables missing
        return f"{exc}{again}"
    attrs = ds.attrs
    if "case" not in attrs:
        return f"{path}: holds no case text (global attribute `case`){again}"
    if str(attrs["case"]) != case.text:
        return (f"{path} exists and was made from another case text; use --overwrite to "
                "replace it")
    if case.model.convergence.cross_check and int(attrs.get("cross_check", 0)) != 1:
        return f"{path} was made without the cross-check; use --overwrite to replace it"
    return None


def _existing_state(case: Case, path: Path, *, resume: bool, overwrite: bool) -> str | None:
    """What to do about the output ``path`` of ``case``: None (run it), ``"skip"`` (an up to
    date result kept by ``resume``) or the problem that forbids running it."""
    if overwrite or not path.exists():
        return None
    if not resume:
        return f"{path} exists; use --resume to keep it or --overwrite to replace it"
    problem = _resume_problem(case, path)
    return "skip" if problem is None else problem


def check_outputs(cases: Sequence[Case], out_dir: str | Path | None, *, resume: bool,
                  overwrite: bool) -> tuple[list[Case], list[tuple[Case, Path]]]:
    """Decide what to run before any work: (cases to run, cases skipped as up to date).

    Raises
    ------
    CaseError
        For an output folder that cannot be written, an existing result that would be
        overwritten without ``overwrite``, or (with ``resume``) one that cannot be kept: made
        from another case text, or unreadable (the message says what is wrong with it).
    InputError
        For ``resume`` and ``overwrite`` together.
    """
    if resume and overwrite:
        raise InputError(_BOTH)
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
        key = path.resolve()
        if key in seen:
            problems.append(case.issue(("output",), f"{case.name} and {seen[key].name} would "
                                       f"both write {path}"))
            continue
        seen[key] = case
        folder = path.parent
        if folder not in folder_checked:
            folder_checked[folder] = _folder_problem(folder)
        if folder_checked[folder]:
            problems.append(case.issue(("output",), folder_checked[folder]))
            continue
        state = _existing_state(case, path, resume=resume, overwrite=overwrite)
        if state == "skip":
            skipped.append((case, path))
            continue
        if state is not None:
            problems.append(case.issue(("output",), state))
            continue
        todo.append(case)
    if problems:
        raise CaseError(problems)
    return todo, skipped


Event = Callable[..., None]
_BOTH = ("--resume and --overwrite contradict each other (keep existing results, or replace "
         "them): give one of them")


class _Stops:
    """SIGINT and SIGTERM while a batch runs, as a stop request that never hangs the stop.

    A signal raises :class:`Interrupted` at once only inside an interruptible section (a job
    computed in this process, planning, assembling, the wait for dask): code that holds no
    lock. The wait for pool workers needs no such exception: it polls :meth:`check`.
    Elsewhere (writing a file: xarray holds a lock that the clean-up after an exception raised
    inside it would take again; forking the workers; printing) it is recorded and raised at
    the next :meth:`check` or section. Once the batch handles the stop
    (:attr:`stopping`), a further signal is only recorded: the clean stop is never cut short.
    A raise that a library swallowed ("Exception ignored in ...") is raised again at the
    next check. A signal that was ignored when the batch started stays ignored (a background
    job of a non-interactive shell inherits SIGINT ignored), and a forked worker that still
    has these handlers dies of the signal at once.
    """

    def __init__(self, *, term: bool) -> None:
        self.requested: int | None = None
        self.stopping = False
        self.depth = 0  # nesting of interruptible sections
        self.pid = os.getpid()
        self._old: dict[int, Any] = {}
        if threading.current_thread() is not threading.main_thread():
            return  # handlers can only be set, and run, in the main thread
        for signum in (signal.SIGINT, signal.SIGTERM):
            old = signal.getsignal(signum)
            if old in (signal.SIG_IGN, None):
                continue  # ignored at start (honoured), or a handler set outside Python
            if signum == signal.SIGTERM and not term:
                continue
            if signum == signal.SIGINT and not term and old is not signal.default_int_handler:
                continue  # a caller's own Ctrl-C handler is theirs
            self._old[signum] = old
            signal.signal(signum, self._on_signal)

    def _on_signal(self, signum: int, frame: Any) -> None:
        if os.getpid() != self.pid:  # a forked worker before its initializer: just stop
            signal.signal(signum, signal.SIG_DFL)
            os.kill(os.getpid(), signum)
            return
        if self.requested is None:
            self.requested = signum
        if self.depth and not self.stopping:
            raise Interrupted(self.requested)

    def check(self) -> None:
        """Raise :class:`Interrupted` for a signal recorded outside the sections."""
        if self.requested is not None and not self.stopping:
            raise Interrupted(self.requested)

    def __enter__(self) -> _Stops:  # ``with stops:`` is an interruptible section
        # open first, then look: a signal in between is raised here, not lost for the section
        # (if check raises, the section stays counted open; harmless: the batch is stopping)
        self.depth += 1
        self.check()
        return self

    def __exit__(self, *exc: object) -> None:
        self.depth = max(0, self.depth - 1)

    def restore(self) -> None:
        self.stopping = True  # from here on a signal is only recorded
        for signum, old in self._old.items():
            signal.signal(signum, old)
        self._old.clear()


def _tidy(path: Path) -> None:
    """Remove what killed writers left beside a kept result: their temporaries, and a lock
    file nobody holds (a live holder's lock stays)."""
    remove_stale_temporaries(path, TEMP_SUFFIX)
    if lock_path(path).exists():
        with contextlib.suppress(OSError):
            claim(path).release()


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
        Replace existing results (not together with ``resume``).
    on_event
        ``on_event(kind, **info)`` for progress: ``start`` (tasks, cases), ``tasks`` (n),
        ``written`` (case, path), ``skipped`` (case, path), ``failed`` (case, message),
        ``warning`` (case, message: a level that is not converged, after ``written``).
    handle_signals
        Stop on SIGTERM as on SIGINT while the batch runs (without it only a SIGINT whose
        handler is Python's default is taken over). A signal stops the workers and the batch
        within seconds; it never lands inside a write, so every written file is whole, and
        ``report.interrupted`` holds its number. A signal ignored at start stays ignored.
    cross_check
        Run every case as if its ``convergence:`` block had ``cross_check: true`` (a case
        without a study gets one); a resumed result made without it is not up to date.

    Every output is claimed (the lock file ``.<name>.lock`` beside it) before any work: a case
    whose output another process holds fails with a message naming that process (pid, host)
    and the others run; temporaries of killed writers of a claimed output are removed.

    Returns
    -------
    BatchReport

    Raises
    ------
    InputError
        For ``resume`` and ``overwrite`` together, or a bad ``jobs``.
    CaseError
        For invalid cases or outputs (see :func:`check_outputs`).
    """
    emit = on_event or (lambda kind, **info: None)
    if resume and overwrite:
        raise InputError(_BOTH)
    if cases and not isinstance(cases[0], Case):
        cases = load_cases(list(cases))
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: must be an integer >= 1; got {jobs!r}")
    if cross_check:
        cases = [c.with_cross_check() for c in cases]
    report = BatchReport()
    stops = _Stops(term=handle_signals)
    pending: dict[int, Case] = {}
    claims: dict[int, Claim] = {}
    stream: Any = None

    def fail(key: int, case: Case, message: str) -> None:
        pending.pop(key, None)
        if key in claims:
            claims.pop(key).release()
        report.failed.append((case, message))
        emit("failed", case=case, message=message)

    try:
        todo, skipped = check_outputs(cases, out_dir, resume=resume, overwrite=overwrite)
        for case, path in skipped:
            _tidy(path)
            report.skipped.append((case, path))
            emit("skipped", case=case, path=path)
        pending.update(enumerate(todo))
        for key, case in enumerate(todo):  # claim every output: one writer per file
            path = output_path(case, out_dir)
            try:
                claims[key] = claim(path)
            except OutputHeldError as exc:
                fail(key, case, f"{exc}; not run")
                continue
            except OSError as exc:
                fail(key, case, f"{path}: cannot take the lock file ({exc.strerror or exc})")
                continue
            remove_stale_temporaries(path, TEMP_SUFFIX)
            # decided again now that no other run can write it: it may have appeared since
            state = _existing_state(case, path, resume=resume, overwrite=overwrite)
            if state == "skip":
                pending.pop(key)
                claims.pop(key).release()
                report.skipped.append((case, path))
                emit("skipped", case=case, path=path)
            elif state is not None:
                fail(key, case, f"{state} (written meanwhile by another run)")
        stops.check()
        items: list[tuple[Case, Job]] = []
        counts: dict[int, int] = {}
        for key, case in list(pending.items()):
            try:
                with stops:
                    plan = plan_case(case, key)
            except Exception as exc:  # e.g. no reference oscillator
                fail(key, case, failure(exc))
                continue
            counts[key] = len(plan)
            items += [(case, job) for job in plan]
        items.sort(key=lambda it: -it[1].weight)
        emit("start", tasks=sum(job.weight for _, job in items), cases=len(pending))
        parts: dict[int, list[dict]] = {key: [] for key in pending}
        failed: dict[int, str] = {}
        stops.check()
        polled = scheduler is None and jobs > 1 and len(items) > 1
        if scheduler is not None:
            stream = distributed(items, scheduler)
        elif polled:
            # forked outside a section; the wait polls for a stop instead of being cut
            stream = pool(items, min(jobs, len(items)), poll=stops.check)
        else:
            stream = serial(items)
        done = dict.fromkeys(pending, 0)
        results = iter(stream)
        while True:
            if polled:
                got = next(results, None)
            else:
                with stops:  # a job computed here, or the wait for dask
                    got = next(results, None)
            if got is None:
                break
            key, job, part, error = got
            emit("tasks", n=job.weight)
            done[key] += 1
            if error is not None:
                failed.setdefault(key, error)
            else:
                parts[key].append(part)
            if done[key] < counts[key] or key not in pending:
                stops.check()
                continue
            case = pending[key]
            if key in failed:
                fail(key, case, failed[key])
                stops.check()
                continue
            try:
                with stops:
                    result = assemble(case, parts.pop(key))
                    ds = build_dataset(case, result, history=history)
                # not interruptible: a signal waits until the file is whole and renamed
                path = write_dataset(ds, output_path(case, out_dir), overwrite=overwrite)
            except (OSError, ValueError, TypeError) as exc:
                fail(key, case, failure(exc))
                stops.check()
                continue
            del pending[key]
            claims.pop(key).release()
            report.written.append((case, path))
            emit("written", case=case, path=path)
            for line in [*result.warnings, *(result.fit.warnings if result.fit else ())]:
                report.warnings.append((case, line))
                emit("warning", case=case, message=line)
            stops.check()
    except KeyboardInterrupt:  # SIGINT where a caller's own handler raised it
        stops.stopping = True
        report.interrupted = int(signal.SIGINT)
    except Interrupted as exc:
        stops.stopping = True
        report.interrupted = exc.signal
    finally:
        stops.stopping = True  # the stop itself is never interrupted
        try:
            if stream is not None:
                stream.close()  # stops the workers of an interrupted batch
        finally:
            for c in claims.values():
                c.release()
            stops.restore()
    if report.interrupted is None and stops.requested is not None:
        report.interrupted = stops.requested  # arrived while the batch was ending
    report.not_run = list(pending.values())
    return report
