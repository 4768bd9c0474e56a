"""Warnings and exceptions of anharmony.

Library code raises these; only the command line catches them, prints one line and sets the
exit code (DESIGN §7).
"""

from __future__ import annotations

__all__ = ["AnharmonyWarning", "ConvergenceWarning", "DegenerateLevelError", "NumericalError"]


class AnharmonyWarning(UserWarning):
    """Base class of every warning the package issues."""


class ConvergenceWarning(AnharmonyWarning):
    """A level still moves when the basis or the quadrature grows."""


class NumericalError(RuntimeError):
    """A computation failed for numerical reasons; the message says which setting to change."""


class DegenerateLevelError(ValueError):
    """Non-degenerate perturbation theory was asked for a degenerate reference level."""

    def __init__(self, message: str, *, levels: tuple[int, ...] = ()) -> None:
        super().__init__(message)
        self.levels = levels
