"""Batches: run many cases, write each result as soon as it is complete, report progress.

:func:`run_case` returns the dataset of one case without writing anything (DESIGN §8);
:func:`run_batch` checks every output first, plans every case into jobs, hands the jobs to an
executor and writes each case's result through the store once its last job is in.
"""

from __future__ import annotations

import os
import signal
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..cases import Case, CaseError, Problem, load_case, load_cases
from ..errors import InputError
from ..store import CaseResult, build_dataset, result_attrs, write_dataset
from .assemble import assemble
from .compute import run_job
from .executors import distributed, failure, pool, serial
from .plan import Job, output_path, plan_case

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

__all__ = ["BatchReport", "Interrupted", "check_outputs", "compute_case", "refuse_geometries",
           "run_batch", "run_case"]


class Interrupted(BaseException):
    """The batch was stopped by SIGINT or SIGTERM; ``.signal`` is the signal number."""

    def __init__(self, signum: int) -> None:
        super().__init__(f"stopped by signal {signum}")
        self.signal = signum


def refuse_geometries(cases: Sequence[Case]) -> None:
    """Refuse cases with ``space.geometry`` cartesian or axial: not run from files yet.

    Their levels sit in blocks (parity triples, Λ^π), not in the (l, j) channels of the result
    file (DESIGN §6), so they are never run as central cases: the Python API solves them.

    Raises
    ------
    CaseError
        One line per such case, naming ``space.geometry``.
    """
    problems = []
    for case in cases:
        geometry = case.model.space.geometry
        if geometry == "central":
            continue
        line = col = None
        if case.index is None:  # a file of one case: its text is the file
            from ..cases.loader import parse_yaml

            line, col = parse_yaml(case.text, case.name)[1].position(("space", "geometry"))
        where = "space.geometry" if case.index is None else f"cases[{case.index}].space.geometry"
        shells = case.model.space.shells
        problems.append(Problem(
            case.file, line, col, where,
            f"{geometry} cases are checked but not run from case files yet (result files hold "
            f"central channels); solve it from Python: anharmony.solve(well, "
            f"{case.dimension}, geometry={geometry!r}"
            + (f", shells={shells}" if shells is not None else "") + ")"))
    if problems:
        raise CaseError(problems)


def compute_case(case: Case) -> CaseResult:
    """All numbers of one case, computed serially in this process."""
    refuse_geometries([case])
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
                attrs = result_attrs(path) or {}
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
        raise InputError(f"jobs: must be an integer >= 1; got {jobs!r}")
    refuse_geometries(cases)
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
                report.failed.append((case, failure(exc)))
                emit("failed", case=case, message=failure(exc))
                del pending[key]
                continue
            counts[key] = len(plan)
            items += [(case, job) for job in plan]
        items.sort(key=lambda it: -it[1].weight)
        emit("start", tasks=sum(job.weight for _, job in items), cases=len(pending))
        parts: dict[int, list[dict]] = {key: [] for key in pending}
        failed: dict[int, str] = {}
        if scheduler is not None:
            stream = distributed(items, scheduler)
        elif jobs > 1 and len(items) > 1:
            stream = pool(items, min(jobs, len(items)))
        else:
            stream = serial(items)
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
                report.failed.append((case, failure(exc)))
                emit("failed", case=case, message=failure(exc))
                continue
            del pending[key]
            report.written.append((case, path))
            emit("written", case=case, path=path)
            for line in [*result.warnings, *(result.fit.warnings if result.fit else ())]:
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

