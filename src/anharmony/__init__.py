"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells."""

from __future__ import annotations

__version__ = "0.1.0"

from .errors import AnharmonyWarning, ConvergenceWarning, DegenerateLevelError, NumericalError
from .potentials import TERMS, TermError, Well
from .units import SYSTEMS, UnitSystem, get_units

__all__ = [
    "SYSTEMS",
    "TERMS",
    "AnharmonyWarning",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "NumericalError",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "get_units",
]
