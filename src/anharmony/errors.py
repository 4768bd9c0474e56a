"""Warnings and exceptions of anharmony: one hierarchy, one home.

Library code raises these; only the command line catches them, prints one line and sets the
exit code (DESIGN §7). Every exception derives from :class:`AnharmonyError`; those about bad
input also derive from ``ValueError`` (so ``except ValueError`` keeps working), numerical
failures from ``RuntimeError``.

=======================  ==============================================================
class                    raised when
=======================  ==============================================================
``InputError``           an argument of the Python API is wrong (names the argument)
``TermError``            a well term has a bad parameter (``.term``, ``.field``)
``FormulaError``         a formula is not allowed or cannot be evaluated (``.text``, ``.piece``)
``CaseError``            case files are invalid (``.problems``: file, line, field, message)
``ResultFileError``      a file is not a readable anharmony result
``DegenerateLevelError`` non-degenerate perturbation theory meets a degenerate level
``NumericalError``       a computation failed numerically (the message names the setting)
=======================  ==============================================================
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

__all__ = [
    "AnharmonyError",
    "AnharmonyWarning",
    "CaseError",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "FormulaError",
    "InputError",
    "NumericalError",
    "ResultFileError",
    "TermError",
]


class AnharmonyWarning(UserWarning):
    """Base class of every warning the package issues."""


class ConvergenceWarning(AnharmonyWarning):
    """A level still moves when the basis or the quadrature grows."""


class AnharmonyError(Exception):
    """Base class of every exception the package raises."""


class InputError(AnharmonyError, ValueError):
    """An argument or input value is wrong; the message names it and says what was expected."""


class NumericalError(AnharmonyError, RuntimeError):
    """A computation failed for numerical reasons; the message says which setting to change."""


class DegenerateLevelError(InputError):
    """Non-degenerate perturbation theory was asked for a degenerate reference level."""

    def __init__(self, message: str, *, levels: tuple[int, ...] = ()) -> None:
        super().__init__(message)
        self.levels = levels


class TermError(InputError):
    """A term of a well was given a bad parameter.

    Attributes
    ----------
    term : str
        Case-file name of the term (``"gaussian"``).
    field : str or None
        Name of the offending parameter, ``None`` when the term as a whole is wrong.
    message : str
        What was wrong and what was expected.
    """

    def __init__(self, term: str, field: str | None, message: str) -> None:
        where = f"{term}.{field}" if field else term
        super().__init__(f"{where}: {message}")
        self.term = term
        self.field = field
        self.message = message


class FormulaError(InputError):
    """A formula that is not allowed or cannot be evaluated; the message quotes the piece.

    Attributes
    ----------
    text
        The whole formula text.
    piece
        The offending part of it (may be the whole text), or ``None``.
    """

    def __init__(self, message: str, *, text: str | None = None, piece: str | None = None):
        super().__init__(message)
        self.text = text
        self.piece = piece


class CaseError(InputError):
    """One or more case files are invalid; ``.problems`` lists every problem found.

    Each problem has a ``str()`` of the form ``file:line:column: field.path: message``.
    """

    def __init__(self, problems: Sequence[Any]) -> None:
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class ResultFileError(InputError):
    """A file is not a readable anharmony result (missing, damaged, or another schema)."""
