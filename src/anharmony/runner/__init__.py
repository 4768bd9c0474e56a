"""Planning and executing batches of cases (DESIGN §9): the runner only schedules.

The numbers come from the core functions a Python user calls (:func:`anharmony.scan.scan`,
:func:`anharmony.series.series`, :func:`anharmony.convergence.converge`); result files are
written and read by :mod:`anharmony.store`.

Modules: :mod:`.plan` (jobs of a case, the description ``check`` prints), :mod:`.preflight`
(what a run would refuse, asked by ``check`` and ``run`` alike), :mod:`.compute` (the core
calls of one job), :mod:`.study` (one convergence-study cell), :mod:`.assemble` (a case's jobs
merged into one result, with its warnings), :mod:`.executors` (serial, process pool,
dask.distributed) and :mod:`.batch` (:func:`run_batch`, :func:`run_case`).
"""

from __future__ import annotations

from .assemble import assemble
from .batch import BatchReport, Interrupted, check_outputs, compute_case, run_batch, run_case
from .compute import run_job
from .plan import Description, Job, describe, output_path, plan_case, smaller_size
from .preflight import preflight

__all__ = [
    "BatchReport",
    "Description",
    "Interrupted",
    "Job",
    "assemble",
    "check_outputs",
    "compute_case",
    "describe",
    "output_path",
    "plan_case",
    "preflight",
    "run_batch",
    "run_case",
    "run_job",
    "smaller_size",
]
