"""Observables beyond energies: matrix elements, wavefunctions, overlaps, multipoles.

- :mod:`.levels` — one spectrum: the phase convention, ψ on a grid, ⟨i|op|j⟩, ⟨r²⟩^{1/2};
- :mod:`.pairs` — two wells: overlaps, Franck–Condon factors, transition matrices;
- :mod:`.integrals` — the joint Gauss rule of two bases and its exact power matrices;
- :mod:`.multipoles` — 3D channels: reduced E1/E2 (Eλ) matrix elements and B(Eλ).

Every function takes a :class:`~anharmony.Spectrum` first and returns arrays or floats.
"""

from __future__ import annotations

from .integrals import radial_power_matrix
from .levels import (
    PHASE_LOBE,
    expectation,
    fix_phases,
    matrix_element,
    operator_matrix,
    phase_signs,
    rms_radius,
    wavefunction,
)
from .multipoles import (
    coupled_reduced_y,
    orbital_reduced_y,
    reduced_multipole,
    transition_strength,
)
from .pairs import FranckCondon, franck_condon, overlaps, transition_matrix

__all__ = ["PHASE_LOBE", "FranckCondon", "coupled_reduced_y", "expectation", "fix_phases",
           "franck_condon", "matrix_element", "operator_matrix", "orbital_reduced_y",
           "overlaps", "phase_signs", "radial_power_matrix", "reduced_multipole", "rms_radius",
           "transition_matrix", "transition_strength", "wavefunction"]
