"""Convergence of oscillator-basis levels: scans, extrapolation, bounds, cross-checks.

- :func:`scan_basis` — energy(level, size, length) on a grid, with infrared lengths;
- :func:`extrapolate_exponential`, :func:`extrapolate_power`, :func:`extrapolate_infrared` —
  fits to the infinite basis with an uncertainty;
- :func:`residual_bounds` — variance, Weinstein interval and Kato–Temple bound;
- :func:`cross_check` — the levels by a solver of another family (Laguerre functions in r,
  or a sinc mesh on the line);
- :func:`converge` — all of these together, optionally tolerance-driven, as a
  :class:`ConvergenceReport`; :class:`ConvergenceSettings` validates a case's
  ``convergence:`` block.
"""

from __future__ import annotations

from .bounds import ResidualBounds, residual_bounds
from .driver import converge
from .extrapolate import (
    Extrapolation,
    extrapolate_exponential,
    extrapolate_infrared,
    extrapolate_infrared_binding,
    extrapolate_power,
)
from .mesh import CrossCheck, cross_check
from .report import ConvergenceReport
from .scans import BasisScan, closed_form_length, infrared_length, scan_basis
from .settings import ConvergenceSettings, size_ladder

__all__ = [
    "BasisScan",
    "ConvergenceReport",
    "ConvergenceSettings",
    "CrossCheck",
    "Extrapolation",
    "ResidualBounds",
    "closed_form_length",
    "converge",
    "cross_check",
    "extrapolate_exponential",
    "extrapolate_infrared",
    "extrapolate_infrared_binding",
    "extrapolate_power",
    "infrared_length",
    "residual_bounds",
    "scan_basis",
    "size_ladder",
]
