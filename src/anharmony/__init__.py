"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells."""

from __future__ import annotations

from ._version import __version__
from .convergence import ConvergenceReport, converge, cross_check, residual_bounds, scan_basis
from .errors import (
    AnharmonyError,
    AnharmonyWarning,
    ConvergenceWarning,
    DegenerateLevelError,
    InputError,
    NumericalError,
)
from .fit import FitResult, FitWarning, fit
from .hamiltonian import Channel, channel_hamiltonian
from .molecular import dunham_fit, rovibrational, spectroscopic_constants
from .observables import (
    expectation,
    fix_phases,
    franck_condon,
    matrix_element,
    overlaps,
    reduced_multipole,
    rms_radius,
    transition_matrix,
    transition_strength,
    wavefunction,
)
from .series import Series, series
from .shells import fill_shells
from .spectrum import Reference, Spectrum, reference_oscillator, solve
from .terms import TERMS, TermError
from .units import SYSTEMS, UnitSystem, get_units
from .well import Well

__all__ = [
    "SYSTEMS",
    "TERMS",
    "AnharmonyError",
    "AnharmonyWarning",
    "CaseError",
    "Channel",
    "ConvergenceReport",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "FitResult",
    "FitWarning",
    "InputError",
    "NumericalError",
    "Reference",
    "Series",
    "Spectrum",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "channel_hamiltonian",
    "converge",
    "cross_check",
    "dunham_fit",
    "expectation",
    "fill_shells",
    "fit",
    "fix_phases",
    "franck_condon",
    "get_units",
    "load_cases",
    "matrix_element",
    "overlaps",
    "read_dataset",
    "reduced_multipole",
    "reference_oscillator",
    "residual_bounds",
    "rms_radius",
    "rovibrational",
    "run_case",
    "scan_basis",
    "series",
    "solve",
    "spectroscopic_constants",
    "transition_matrix",
    "transition_strength",
    "wavefunction",
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
