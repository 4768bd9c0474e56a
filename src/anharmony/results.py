"""The plain numbers of a finished case (no xarray): what the runner hands to the store.

:class:`CaseResult` holds the levels, series and study arrays of one case, with the optional
:class:`FitOutcome` of a ``fit:`` block and :class:`RotationOutcome` of a ``rotation:`` key;
:func:`anharmony.store.build_dataset` turns them into a result file.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["CONSTANT_NAMES", "CaseResult", "FitOutcome", "RotationOutcome", "empty_like_series"]

@dataclass(frozen=True, eq=False)
class FitOutcome:
    """The fit of a case with a ``fit:`` block, as plain values (P parameters, D data).

    Attributes
    ----------
    parameters : tuple of str (P,)
        Parameter paths ``well[i].name``.
    values, uncertainties : ndarray (P,)
    correlation : ndarray (P, P)
    chi2 : float
    dof : int
    names, quantities : tuple of str (D,)
        Each datum's name (``data[k]`` where it has none) and ``level`` or ``spacing``.
    levels : ndarray of int (D, 2)
        The datum's level(s); the second is −1 for a level.
    l, j : ndarray (D,)
        The datum's channel: l (−1 the 1D basis without symmetry), j (NaN without spin).
    measured, sigma, prediction, residual, basis_error : ndarray (D,)
        Residual in σ, the others in the energy unit.
    undetermined, warnings : tuple of str
        Parameter combinations the data cannot fix; the fit's warnings.
    evaluations : int
        Model evaluations of the least-squares passes.
    """

    parameters: tuple[str, ...]
    values: np.ndarray
    uncertainties: np.ndarray
    correlation: np.ndarray
    chi2: float
    dof: int
    names: tuple[str, ...]
    quantities: tuple[str, ...]
    levels: np.ndarray
    l: np.ndarray
    j: np.ndarray
    measured: np.ndarray
    sigma: np.ndarray
    prediction: np.ndarray
    residual: np.ndarray
    basis_error: np.ndarray
    undetermined: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    evaluations: int = 0


# long names of the stored spectroscopic constants (keys of anharmony.molecular.NAMED)
CONSTANT_NAMES = {
    "we": "harmonic vibrational constant omega_e = Y10",
    "wexe": "first anharmonicity constant omega_e x_e = -Y20",
    "weye": "second anharmonicity constant omega_e y_e = Y30",
    "Be": "equilibrium rotational constant B_e = Y01",
    "alpha_e": "vibration-rotation interaction constant alpha_e = -Y11",
    "De": "centrifugal distortion constant D_e = -Y02",
}


@dataclass(frozen=True, eq=False)
class RotationOutcome:
    """The rovibrational levels and Dunham constants of a case with a ``rotation:`` block.

    Attributes
    ----------
    J, v : ndarray of int
        Rotational and vibrational quantum numbers (axes ``rovib_J``, ``rovib_v``).
    energy, term_value : ndarray (J, v)
        E(v, J) and E(v, J) minus the lowest level, in the energy unit (NaN: not bound).
    bottom : float
        Value of the well at its minimum.
    constants : tuple of str
        Names of the constants (keys of :data:`anharmony.molecular.NAMED`).
    values, uncertainties : ndarray
        Each constant and its standard error, in the energy unit.
    warnings : tuple of str
        Warnings of the core's calls.
    """

    J: np.ndarray
    v: np.ndarray
    energy: np.ndarray
    term_value: np.ndarray
    bottom: float
    constants: tuple[str, ...]
    values: np.ndarray
    uncertainties: np.ndarray
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class CaseResult:
    """The numbers of one finished case, as plain arrays (S scan points, C channels, L levels).

    Attributes
    ----------
    scan_value : ndarray (S,)
    l : ndarray of int (C,)
        ``-1`` for the 1D basis without symmetry.
    j : ndarray (C,) or None
        Only with spin.
    label : list of str (C,)
    level_labels : list of list of str (C, L) or None
        Spectroscopic label of every level (``1d5/2``, ``v=3``); stored as ``level_label``.
    energy, reference_energy, error_estimate : ndarray (S, C, L)
    bound, converged : ndarray of bool (S, C, L)
    frequency, length : ndarray (S,)
        ħω and b of the basis used at each scan point.
    center, v_min, reference_frequency, reference_length : ndarray (S,)
        The reference oscillator of each scan point (its ħω and b default to the basis').
    reference_method, reference_reason : list of str (S,)
    threshold : ndarray (S, C)
    basis_size : int
    series_coefficient, series_partial_sum : ndarray (S, C, L, K+1), K+1 = 0 without series
    series_resummed : ndarray (S, C, L, M) for the methods in ``resum_methods``
    series_optimal, series_optimal_error : ndarray (S, C, L)
    series_optimal_order : ndarray of int (S, C, L), −1 where there is none
    convergence_sizes : ndarray of int (B,)
        The ``basis_size`` axis of the convergence study (empty without one).
    convergence : mapping
        Variables of the convergence study, ``name → (dims, values, attrs)`` with dims
        starting ``("scan", "channel")`` (empty without a study); ``attrs`` carry ``units``
        and ``long_name``.
    notes : list of str
        Remarks on how numbers were obtained (stored in the ``comment`` attribute).
    warnings : list of str
        One line per level that is not converged (stored in ``convergence_warnings``).
    fit : FitOutcome or None
        The fit of a case with a ``fit:`` block (its levels are those of the fitted well);
        stored as the ``fit_*`` variables.
    rotation : RotationOutcome or None
        The rovibrational levels and constants of a ``rotation:`` case (``rovib_*`` and
        ``constant_*`` variables).
    extra : mapping
        More variables, ``name → (dims, values, attrs)``: the block degeneracies, asymptotic
        labels, basis lengths and trap frequencies of a Cartesian or axial case.
    """

    scan_value: np.ndarray
    l: np.ndarray
    j: np.ndarray | None
    label: Sequence[str]
    energy: np.ndarray
    bound: np.ndarray
    converged: np.ndarray
    reference_energy: np.ndarray
    error_estimate: np.ndarray
    frequency: np.ndarray
    length: np.ndarray
    center: np.ndarray
    v_min: np.ndarray
    reference_method: Sequence[str]
    reference_reason: Sequence[str]
    threshold: np.ndarray
    basis_size: int
    series_coefficient: np.ndarray
    series_partial_sum: np.ndarray
    series_resummed: np.ndarray
    resum_methods: Sequence[str]
    series_optimal: np.ndarray
    series_optimal_error: np.ndarray
    series_optimal_order: np.ndarray
    reference_frequency: np.ndarray | None = None
    reference_length: np.ndarray | None = None
    convergence_sizes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    convergence: Mapping[str, tuple[tuple[str, ...], np.ndarray, Mapping[str, Any]]] = field(
        default_factory=dict)
    notes: Sequence[str] = ()
    warnings: Sequence[str] = ()
    level_labels: Sequence[Sequence[str]] | None = None  # (C, L) spectroscopic labels
    fit: FitOutcome | None = None  # the fit of a case with a fit: block
    rotation: RotationOutcome | None = None  # the levels E(v, J) of a rotation: block
    # more variables, name → (dims, values, attrs): the blocks of a geometry case
    extra: Mapping[str, tuple[tuple[str, ...], np.ndarray, Mapping[str, Any]]] = field(
        default_factory=dict)


# --------------------------------------------------------------------------- attributes

def empty_like_series(s: int, c: int, n: int, orders: int, methods: int
                      ) -> dict[str, np.ndarray]:
    """NaN-filled series arrays of the right shapes (``orders`` coefficients)."""
    nan = math.nan
    return {
        "series_coefficient": np.full((s, c, n, orders), nan),
        "series_partial_sum": np.full((s, c, n, orders), nan),
        "series_resummed": np.full((s, c, n, methods), nan),
        "series_optimal": np.full((s, c, n), nan),
        "series_optimal_error": np.full((s, c, n), nan),
        "series_optimal_order": np.full((s, c, n), -1, dtype=np.int16),
    }
