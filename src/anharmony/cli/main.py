"""The entry point: pick the command, one BLAS thread, one-line warnings and errors."""

from __future__ import annotations

import os
import sys
import warnings
from collections.abc import Sequence
from typing import TextIO

from ._common import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_INTERRUPTED, EXIT_OK, say
from .check import cmd_check
from .parser import build_parser
from .plot import cmd_plot
from .run import cmd_run
from .show import cmd_show

__all__ = ["COMMANDS", "TRACEBACK_VARIABLE", "main"]

#: Set this environment variable to see the traceback of an internal error.
TRACEBACK_VARIABLE = "ANHARMONY_TRACEBACK"


COMMANDS = {"run": cmd_run, "check": cmd_check, "show": cmd_show, "plot": cmd_plot}

_BLAS_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def _one_blas_thread() -> None:
    """One BLAS thread per process unless the user chose otherwise in the environment.

    Our matrices are small (N ≲ 500): BLAS threads only add hand-off cost, and on a busy
    machine they slow eigh by orders of magnitude; ``--jobs`` is the way to use more cores.
    """
    if any(v in os.environ for v in _BLAS_VARS):
        return
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(limits=1, user_api="blas")


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``anharmony`` command; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    shown = warnings.showwarning
    warnings.showwarning = _warning_line
    try:
        _one_blas_thread()  # inside: a Ctrl-C while it imports ends with one line too
        return COMMANDS[args.command](args)
    except KeyboardInterrupt:
        say("stopped by Ctrl-C")
        return EXIT_INTERRUPTED
    except BrokenPipeError:  # e.g. `anharmony show x.nc | head`
        sys.stderr.close()
        return EXIT_OK
    except Exception as exc:  # a bug of ours: one line, the traceback only when asked for
        if os.environ.get(TRACEBACK_VARIABLE):
            raise
        say(f"anharmony: internal error: {type(exc).__name__}: {str(exc)[:300]} -- this is a "
             f"bug; please report it with the input that caused it ({TRACEBACK_VARIABLE}=1 "
             "shows the traceback)")
        return EXIT_FAILED
    finally:
        warnings.showwarning = shown


def _warning_line(message: Warning | str, category: type[Warning], filename: str,
                  lineno: int, file: TextIO | None = None, line: str | None = None) -> None:
    """A warning as one line ``warning: …`` on stderr, without Python's source location."""
    say(f"warning: {message}")
