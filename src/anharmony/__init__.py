"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells."""

from __future__ import annotations

from ._version import __version__
from .convergence import ConvergenceReport, converge, cross_check, residual_bounds, scan_basis
from .errors import AnharmonyWarning, ConvergenceWarning, DegenerateLevelError, NumericalError
from .hamiltonian import Channel, channel_hamiltonian
from .potentials import TERMS, TermError, Well
from .scan import ScanResult, scan
from .series import Series, series
from .spectrum import Reference, Spectrum, reference_oscillator, solve
from .units import SYSTEMS, UnitSystem, get_units

__all__ = [
    "SYSTEMS",
    "TERMS",
    "AnharmonyWarning",
    "CaseError",
    "Channel",
    "ConvergenceReport",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "NumericalError",
    "Reference",
    "ScanResult",
    "Series",
    "Spectrum",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "channel_hamiltonian",
    "converge",
    "cross_check",
    "get_units",
    "load_cases",
    "read_dataset",
    "reference_oscillator",
    "residual_bounds",
    "run_case",
    "scan",
    "scan_basis",
    "series",
    "solve",
]


_LAZY = {  # names that live on top of yaml / xarray: imported on first use, so that
    # ``import anharmony`` keeps xarray, yaml and matplotlib out of sys.modules
    "run_case": ("runner", "run_case"),
    "load_cases": ("cases", "load_cases"),
    "CaseError": ("cases", "CaseError"),
    "read_dataset": ("store", "read_dataset"),
}


def __getattr__(name: str):
    if name in _LAZY:
        from importlib import import_module

        module, attr = _LAZY[name]
        return getattr(import_module(f".{module}", __name__), attr)
    raise AttributeError(f"module 'anharmony' has no attribute {name!r}")
