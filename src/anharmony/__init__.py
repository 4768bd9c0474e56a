"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells."""

from __future__ import annotations

__version__ = "0.1.0"

from .errors import AnharmonyWarning, ConvergenceWarning, DegenerateLevelError, NumericalError
from .hamiltonian import Channel, channel_hamiltonian
from .potentials import TERMS, TermError, Well
from .spectrum import Reference, Spectrum, reference_oscillator, solve
from .units import SYSTEMS, UnitSystem, get_units

__all__ = [
    "SYSTEMS",
    "TERMS",
    "AnharmonyWarning",
    "Channel",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "NumericalError",
    "Reference",
    "Spectrum",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "channel_hamiltonian",
    "get_units",
    "reference_oscillator",
    "solve",
]
