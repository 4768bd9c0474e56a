"""What every command shares: exit codes, one-line errors, the argument parser class."""

from __future__ import annotations

import argparse
import os
import sys
from typing import NoReturn, TextIO

__all__ = ["EXIT_BAD_INPUT", "EXIT_FAILED", "EXIT_INTERRUPTED", "EXIT_OK", "SHOW_ALL_UP_TO",
           "Parser", "interactive", "problems", "say"]

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT, EXIT_INTERRUPTED = 0, 1, 2, 130
SHOW_ALL_UP_TO = 5  # `show` prints every scan point up to this many, else first/middle/last


class Parser(argparse.ArgumentParser):
    """argparse that reports a usage error in one line and exits 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


def say(line: str) -> None:
    """One line on stderr."""
    print(line, file=sys.stderr, flush=True)


def problems(exc: Exception) -> int:
    """Every problem of a :class:`~anharmony.errors.CaseError` (or the error) on its own line;
    returns the bad-input exit code."""
    from ..cases import CaseError

    if isinstance(exc, CaseError):
        for p in exc.problems:
            say(str(p))
    else:
        say(str(exc))
    return EXIT_BAD_INPUT


def interactive(stream: TextIO) -> bool:
    """A terminal (not CI): progress as a bar."""
    return bool(getattr(stream, "isatty", lambda: False)()) and not os.environ.get("CI")
