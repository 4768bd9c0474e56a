"""Executors of a batch's jobs: in this process, a process pool, or dask.distributed.

Each executor yields ``(case_key, job, partial arrays or None, failure text or None)`` in
completion order; a failing job is reported, never raised, so the batch goes on.
"""

from __future__ import annotations

import os
import signal
import sys
import traceback
import uuid
from collections.abc import Callable, Iterator, Sequence
from typing import Any

from .._atomic import close_inherited_claims
from ..cases import Case
from .compute import run_job
from .plan import Job

__all__ = ["distributed", "failure", "pool", "serial"]

POLL_S = 0.1  # s: the longest a stop request waits while the pool's workers compute


def _init_worker() -> None:
    # the parent decides when to stop; workers must not die half-way on a Ctrl-C of the group
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)  # Pool.terminate() stops a worker at once
    # the parent's lock files stay the parent's: a worker outliving it must not hold them
    close_inherited_claims()
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
        return job.case_key, job, None, failure(exc)


def failure(exc: BaseException) -> str:
    text = f"{type(exc).__name__}: {exc}"
    if os.environ.get("ANHARMONY_DEBUG"):
        text += "\n" + "".join(traceback.format_exception(exc))
    return text


def serial(items: Sequence[tuple[Case, Job]]) -> Iterator[tuple]:
    for item in items:
        yield _guarded(item)


class _Pool:
    """Results of a process pool in completion order; :meth:`close` stops it.

    The workers are forked when this is made: call it where a signal is only recorded (an
    exception raised during the fork can be swallowed by an at-fork hook, e.g. logging's:
    "Exception ignored in _releaseLock"). :meth:`close` stops the workers whether or not the
    iteration started, and also after a clean end whose ``join`` was cut short.
    """

    def __init__(self, items: Sequence[tuple[Case, Job]], jobs: int,
                 poll: Callable[[], None] | None = None) -> None:
        import multiprocessing as mp

        self._timeout = mp.TimeoutError
        self._poll = poll
        method = "fork" if sys.platform.startswith("linux") else "spawn"
        self._pool: Any = mp.get_context(method).Pool(processes=jobs, initializer=_init_worker)
        # largest jobs first (the batch sorts them) so that the pool does not end on one
        self._results: Any = self._pool.imap_unordered(_guarded, items, chunksize=1)

    def __iter__(self) -> _Pool:
        return self

    def __next__(self) -> tuple:
        if self._pool is None or self._results is None:
            raise StopIteration
        try:
            if self._poll is None:
                return next(self._results)
            while True:  # wait in short steps and look for a stop request in between
                try:
                    return self._results.next(timeout=POLL_S)
                except self._timeout:
                    self._poll()
        except StopIteration:
            self._results = None
            self._stop(clean=True)
            raise

    def close(self) -> None:
        self._stop(clean=False)

    def _stop(self, *, clean: bool) -> None:
        pool = self._pool
        if pool is None:
            return
        if clean:
            pool.close()
        else:
            pool.terminate()  # SIGTERM to each worker; their default action ends them
        pool.join()
        self._pool = None  # only now: a join cut short is followed by close() → terminate


def pool(items: Sequence[tuple[Case, Job]], jobs: int,
         poll: Callable[[], None] | None = None) -> _Pool:
    """The results of ``items`` run by ``jobs`` worker processes, in completion order.

    With ``poll``, the wait for a result is cut into steps of ``POLL_S`` and ``poll()`` is
    called between them (it raises to stop): the stop needs no exception raised by a signal
    handler in the middle of whatever the main thread runs.
    """
    return _Pool(items, jobs, poll)


def distributed(items: Sequence[tuple[Case, Job]], address: str) -> Iterator[tuple]:
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
