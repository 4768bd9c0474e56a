"""The command line (DESIGN §7): ``anharmony run | check | show | plot``.

Exit codes: 0 success, 1 a computation failed, 2 bad input (one line per problem, no
traceback), 130 stopped by Ctrl-C (143 by SIGTERM). This package is the only code that
prints. Modules: :mod:`._common` (exit codes, one-line errors), :mod:`.parser` (every
command and option), :mod:`.run`, :mod:`.check`, :mod:`.show`, :mod:`.plot` (one command
each) and :mod:`.main` (the entry point).
"""

from __future__ import annotations

from ._common import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_INTERRUPTED, EXIT_OK
from .main import COMMANDS, TRACEBACK_VARIABLE, main
from .parser import build_parser
from .run import Progress

# the names tests and earlier versions use
_COMMANDS = COMMANDS
_parser = build_parser
_Progress = Progress

__all__ = ["COMMANDS", "EXIT_BAD_INPUT", "EXIT_FAILED", "EXIT_INTERRUPTED", "EXIT_OK",
           "TRACEBACK_VARIABLE", "build_parser", "main"]
