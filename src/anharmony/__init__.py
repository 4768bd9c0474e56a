"""anharmony: bound states, anharmonic shifts and perturbation series of almost-harmonic wells.

Every public name is imported on first use (PEP 562), so that ``import anharmony`` costs only
the version and the error classes, and the command line pays for scipy, xarray or matplotlib
only in the commands that need them.
"""

from __future__ import annotations

import sys
import types

from ._lazy import lazy_names
from ._version import __version__
from .errors import (
    AnharmonyError,
    AnharmonyWarning,
    CaseError,
    ConvergenceWarning,
    DegenerateLevelError,
    FormulaError,
    InputError,
    NumericalError,
    ResultFileError,
    TermError,
)

__all__ = [
    "SYSTEMS",
    "TERMS",
    "AnharmonyError",
    "AnharmonyWarning",
    "BlockSpectra",
    "CaseError",
    "Channel",
    "ConvergenceReport",
    "ConvergenceWarning",
    "DegenerateLevelError",
    "DegenerateSeries",
    "FitResult",
    "FitWarning",
    "FormulaError",
    "GeometrySpectrum",
    "InputError",
    "ModeShifts",
    "NumericalError",
    "Reference",
    "ResultFileError",
    "ScanResult",
    "Series",
    "Spectrum",
    "TermError",
    "UnitSystem",
    "Well",
    "__version__",
    "bound_count_estimate",
    "channel_hamiltonian",
    "converge",
    "cross_check",
    "degenerate_series",
    "dunham_fit",
    "expectation",
    "fill_shells",
    "fit",
    "fix_phases",
    "franck_condon",
    "get_units",
    "load_cases",
    "matrix_element",
    "mode_shifts",
    "overlaps",
    "read_dataset",
    "reduced_multipole",
    "reference_oscillator",
    "residual_bounds",
    "rms_radius",
    "rovibrational",
    "run_case",
    "scan",
    "scan_basis",
    "series",
    "solve",
    "solve_blocks",
    "solve_geometry",
    "spectroscopic_constants",
    "transition_matrix",
    "transition_strength",
    "trap_frequencies",
    "wavefunction",
]

_LAZY = {  # public name → the module that defines it, imported on first use
    **dict.fromkeys(("ConvergenceReport", "converge", "cross_check", "residual_bounds",
                     "scan_basis"), "convergence"),
    **dict.fromkeys(("Channel", "channel_hamiltonian"), "hamiltonian"),
    "TERMS": "terms",
    "Well": "well",
    **dict.fromkeys(("ScanResult", "scan"), "scan"),
    **dict.fromkeys(("Series", "series"), "series"),
    **dict.fromkeys(("Reference", "Spectrum", "reference_oscillator", "solve",
                     "bound_count_estimate"), "spectrum"),
    **dict.fromkeys(("SYSTEMS", "UnitSystem", "get_units"), "units"),
    **dict.fromkeys(("FitResult", "FitWarning", "fit"), "fit"),
    **dict.fromkeys(("dunham_fit", "rovibrational", "spectroscopic_constants"), "molecular"),
    **dict.fromkeys(("expectation", "fix_phases", "franck_condon", "matrix_element", "overlaps",
                     "reduced_multipole", "rms_radius", "transition_matrix",
                     "transition_strength", "wavefunction"), "observables"),
    "fill_shells": "shells",
    **dict.fromkeys(("DegenerateSeries", "GeometrySpectrum", "ModeShifts", "degenerate_series",
                     "mode_shifts", "solve_geometry", "trap_frequencies"), "geometry"),
    **dict.fromkeys(("BlockSpectra", "solve_blocks"), "geometry.by_block"),
    "run_case": "runner",
    "load_cases": "cases",
    "read_dataset": "store",
}
# functions named like the module that defines them: the name stays the function
_SHADOWED = frozenset({"fit", "scan", "series"})


__getattr__, __dir__ = lazy_names(__name__, _LAZY, globals())


class _Package(types.ModuleType):
    """The package module; keeps ``anharmony.fit``/``.scan``/``.series`` the functions.

    Importing a submodule binds it as an attribute of the package; for the submodules whose
    main function has their name the binding is skipped, so that the name stays the function
    (reached through ``__getattr__`` on first use, without importing more than asked for).
    """

    def __setattr__(self, name: str, value: object) -> None:
        if name in _SHADOWED and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
