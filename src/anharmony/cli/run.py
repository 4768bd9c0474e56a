"""``anharmony run``: progress, signals held around the batch, and the summary line."""

from __future__ import annotations

import argparse
import math
import sys
from typing import Any, TextIO

from ._common import EXIT_BAD_INPUT, EXIT_FAILED, interactive, problems, say

__all__ = ["Progress", "cmd_run"]

LINES_PER_RUN = 20  # off a terminal, at most about this many "k/N tasks" lines per batch


class Progress:
    """Progress of a batch: a tqdm bar on a terminal, or plain ``k/N tasks`` lines."""

    def __init__(self, mode: str, stream: TextIO) -> None:
        if mode == "auto":
            mode = "bar" if interactive(stream) else "lines"
        self.mode = mode
        self.stream = stream
        self.bar: Any = None
        self.total = 0
        self.done = 0
        self.next_line = 0

    def say(self, line: str) -> None:
        if self.bar is not None:
            self.bar.write(line, file=self.stream)
        else:
            print(line, file=self.stream, flush=True)

    def __call__(self, kind: str, **info: Any) -> None:
        if kind == "start":
            self.total = info["tasks"]
            if self.mode == "bar" and self.total:
                from tqdm import tqdm

                self.bar = tqdm(total=self.total, unit="task", file=self.stream,
                                dynamic_ncols=True, leave=False)
            elif self.mode == "lines" and self.total:
                self.say(f"running {info['cases']} case(s), {self.total} task(s)")
            self.step = max(1, math.ceil(self.total / LINES_PER_RUN))
            self.next_line = self.step
        elif kind == "tasks":
            self.done += info["n"]
            if self.bar is not None:
                self.bar.update(info["n"])
            elif self.mode == "lines" and (self.done >= self.next_line or
                                           self.done == self.total):
                self.say(f"{self.done}/{self.total} tasks")
                while self.next_line <= self.done:
                    self.next_line += self.step
        elif kind == "written":
            self.say(f"wrote {info['path']} ({info['case'].name})")
        elif kind == "skipped":
            self.say(f"up to date: {info['path']} ({info['case'].name})")
        elif kind == "failed":
            self.say(f"{info['case'].name}: failed: {info['message']}")
        elif kind == "warning":  # a level that is not converged; the run goes on
            self.say(f"warning: {info['case'].name}: {info['message']}")

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None


def _held_signals() -> tuple[list[int], Any]:
    """Record SIGINT and SIGTERM (those not ignored at start) instead of acting on them;
    returns (the signals received, a function that puts the old handlers back).

    For the imports and the reading of the cases before a batch takes the signals over: an
    exception raised inside the import of a compiled module is turned into an ImportError
    with a traceback ("initialization failed"), and a SIGTERM there would end the run
    without a word.
    """
    import signal

    got: list[int] = []
    old: dict[int, Any] = {}

    def record(signum: int, frame: Any) -> None:
        got.append(signum)

    for signum in (signal.SIGINT, signal.SIGTERM):
        handler = signal.getsignal(signum)
        if handler not in (signal.SIG_IGN, None):  # ignored at start stays ignored
            old[signum] = signal.signal(signum, record)

    def restore() -> None:
        for signum, handler in old.items():
            signal.signal(signum, handler)

    return got, restore


def _stopped_line(signum: int) -> str:
    return "Ctrl-C" if signum == 2 else f"signal {signum}"


def cmd_run(args: argparse.Namespace) -> int:
    if args.jobs < 1:
        say(f"--jobs: must be at least 1; got {args.jobs}")
        return EXIT_BAD_INPUT
    if args.resume and args.overwrite:
        say("--resume and --overwrite contradict each other (--resume keeps existing results, "
             "--overwrite replaces them): give one of them")
        return EXIT_BAD_INPUT
    # held for the whole command: the batch takes them over while it runs; before it (the
    # imports, reading the cases) they end the run with one line, after it (the summary; a
    # second signal of a stop) they are only recorded
    got, restore = _held_signals()
    try:
        return _run_held(args, got)
    finally:
        restore()


def _run_held(args: argparse.Namespace, got: list[int]) -> int:
    from ..cases import CaseError, load_cases
    from ..runner import preflight, run_batch
    from ..runner.preflight import WORK_LIMIT_SECONDS

    try:
        cases = load_cases(args.cases)
    except CaseError as exc:
        return problems(exc)
    found = [] if got else [i for case in cases for i in preflight(
        case, work_limit=None if args.allow_long else WORK_LIMIT_SECONDS)]
    if got:  # nothing was written or claimed yet
        say(f"stopped by {_stopped_line(got[0])} before the run started")
        return 128 + got[0]
    if found:  # what `check` refuses, `run` refuses before it starts
        return problems(CaseError(found))
    progress = Progress(args.progress if args.progress != "off" else "off", sys.stderr)
    history = "anharmony " + " ".join(sys.argv[1:]) if sys.argv[1:] else None
    try:
        report = run_batch(cases, out_dir=args.output_dir, jobs=args.jobs,
                           scheduler=args.scheduler, resume=args.resume,
                           overwrite=args.overwrite, on_event=progress, history=history,
                           handle_signals=True, cross_check=args.cross_check)
    except CaseError as exc:
        progress.close()
        return problems(exc)
    except ImportError as exc:
        progress.close()
        say(f"--scheduler: {exc}")
        return EXIT_BAD_INPUT
    except OSError as exc:
        progress.close()
        say(f"--scheduler: cannot reach {args.scheduler} ({exc})")
        return EXIT_FAILED
    progress.close()
    written = len(report.written)
    if report.interrupted is not None:
        name = _stopped_line(report.interrupted)
        done = ", ".join(str(p) for _, p in report.written) or "none"
        left = ", ".join(c.name for c in report.not_run) or "none"
        say(f"stopped by {name}: finished {done}; not finished: {left}")
        return report.exit_code
    warned = (f"; {len(report.warnings)} convergence warning(s) above" if report.warnings
              else "")
    say(f"{written} written, {len(report.skipped)} up to date, {len(report.failed)} "
         f"failed{warned}")
    return report.exit_code
