"""Wells without spherical symmetry: Cartesian and axial oscillator bases (DESIGN §10).

Public names: :func:`solve_geometry`, :func:`trap_frequencies`, :class:`GeometrySpectrum`,
:func:`degenerate_series` (degenerate perturbation theory, :class:`DegenerateSeries`),
:func:`mode_shifts` (anharmonic shifts of a trap's modes and their cross terms),
:class:`CartesianBasis`, :class:`AxialBasis`, and (re-exported from :mod:`anharmony.terms`) the
non-central terms :class:`AnisotropicHarmonic` and :class:`FocusedBeam`. How terms enter: see
:mod:`anharmony.geometry.potential`.
"""

from __future__ import annotations

from ..terms.anisotropic_harmonic import AnisotropicHarmonic
from ..terms.focused_beam import FocusedBeam
from .axial import AxialBasis
from .cartesian import CartesianBasis
from .degenerate import DegenerateSeries, degenerate_series
from .frequencies import TrapFrequencies
from .modes import ModeShifts, mode_shifts
from .solve import (
    GEOMETRIES,
    GeometrySpectrum,
    shells_for_count,
    solve_geometry,
    trap_frequencies,
)

__all__ = ["GEOMETRIES", "AnisotropicHarmonic", "AxialBasis", "CartesianBasis",
           "DegenerateSeries", "FocusedBeam", "GeometrySpectrum", "ModeShifts",
           "TrapFrequencies", "degenerate_series", "mode_shifts", "shells_for_count",
           "solve_geometry", "trap_frequencies"]
