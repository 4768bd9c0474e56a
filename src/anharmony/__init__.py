"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells."""

from __future__ import annotations

__version__ = "0.1.0"

from .errors import AnharmonyWarning, ConvergenceWarning, DegenerateLevelError, NumericalError
from .hamiltonian import Channel, channel_hamiltonian
from .potentials import TERMS, TermError, Well
from .series import Series, series
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
    "Series",
    "Spectrum",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "channel_hamiltonian",
    "get_units",
    "reference_oscillator",
    "run_case",
    "series",
    "solve",
]


def __getattr__(name: str):
    # run_case lives on top of the store (xarray): imported on first use, so that
    # ``import anharmony`` keeps xarray, yaml and matplotlib out of sys.modules.
    if name == "run_case":
        from .runner import run_case

        return run_case
    raise AttributeError(f"module 'anharmony' has no attribute {name!r}")
