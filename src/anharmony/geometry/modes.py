"""Anharmonic shifts of the modes of a trap and their cross terms, from its lowest levels.

The levels of a near-harmonic well in the Cartesian basis carry the quanta (n_x, n_y[, n_z])
of their dominant basis state. Written as spectroscopists write a polyatomic vibration,
E(n) = E(0) + Σ_i ν_i n_i + Σ_{i≤j} χ_ij n_i n_j + …, the constants follow from the levels
with at most two quanta, exactly for that form (common practice, no source):

- ν_i + χ_ii = E(1_i) − E(0) (the fundamental of mode i),
- 2 χ_ii = E(2_i) − 2 E(1_i) + E(0) (its anharmonic shift: the change of spacing),
- χ_ij = E(1_i + 1_j) − E(1_i) − E(1_j) + E(0) (the cross term of modes i ≠ j).

:func:`mode_shifts` reads them off a :class:`~anharmony.geometry.solve.GeometrySpectrum`; each
constant carries the error bars of the levels it is made of (their sum).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = ["ModeShifts", "mode_shifts"]


@dataclass(frozen=True)
class ModeShifts:
    """The mode constants of a trap (energy unit of its spectrum; d modes).

    Attributes
    ----------
    fundamentals : ndarray (d,)
        E(1_i) − E(0), the first excitation of each axis.
    chi : ndarray (d, d)
        χ_ij (symmetric): χ_ii the anharmonic shift of mode i (half the change of its
        spacing), χ_ij the cross term.
    uncertainty_fundamentals : ndarray (d,)
    uncertainty_chi : ndarray (d, d)
        Sums of the error bars of the levels each constant is made of.
    ground : float
        E(0).
    """

    fundamentals: np.ndarray
    chi: np.ndarray
    uncertainty_fundamentals: np.ndarray
    uncertainty_chi: np.ndarray
    ground: float


def _quanta(label: str) -> tuple[int, ...]:
    return tuple(int(v) for v in label.strip("()").split(","))


def mode_shifts(spec) -> ModeShifts:
    """ν_i and χ_ij of a Cartesian spectrum from its levels with at most two quanta.

    Parameters
    ----------
    spec
        A Cartesian :class:`~anharmony.geometry.solve.GeometrySpectrum` that holds every level
        with at most two quanta (ask for enough ``levels``: 1 + d + d(d + 1)/2 at least).

    Raises
    ------
    InputError
        For an axial spectrum, or when a level with at most two quanta is missing or two levels
        share the same dominant quanta (strong mixing: the labels no longer name the modes).
    """
    if getattr(spec, "geometry", None) != "cartesian":
        raise InputError("spec: mode shifts need a Cartesian spectrum "
                         "(solve_geometry(..., geometry='cartesian'))")
    d = spec.dimension
    level: dict[tuple[int, ...], tuple[float, float]] = {}
    for label, e, err in zip(spec.labels, spec.energies, spec.error_estimate, strict=True):
        q = _quanta(label)
        if sum(q) > 2:
            continue
        if q in level:
            raise InputError(f"spec: two levels have the dominant quanta {label}; the modes mix "
                             "too strongly for their labels to name them")
        level[q] = (float(e), float(err) if np.isfinite(err) else np.inf)
    unit = np.eye(d, dtype=int)
    need = [tuple([0] * d)] + [tuple(u) for u in unit] + \
        [tuple(unit[i] + unit[j]) for i in range(d) for j in range(i, d)]
    missing = [q for q in need if q not in level]
    if missing:
        raise InputError(f"spec: the levels with quanta {', '.join(map(str, missing))} are not "
                         f"in the spectrum; ask for more levels (at least {len(need)})")

    def e(q):
        return level[tuple(q)][0]

    def u(q):
        return level[tuple(q)][1]

    zero = np.zeros(d, dtype=int)
    fund = np.array([e(unit[i]) - e(zero) for i in range(d)])
    ufund = np.array([u(unit[i]) + u(zero) for i in range(d)])
    chi = np.zeros((d, d))
    uchi = np.zeros((d, d))
    for i in range(d):
        chi[i, i] = 0.5 * (e(2 * unit[i]) - 2 * e(unit[i]) + e(zero))
        uchi[i, i] = 0.5 * (u(2 * unit[i]) + 2 * u(unit[i]) + u(zero))
        for j in range(i + 1, d):
            chi[i, j] = chi[j, i] = (e(unit[i] + unit[j]) - e(unit[i]) - e(unit[j]) + e(zero))
            uchi[i, j] = uchi[j, i] = (u(unit[i] + unit[j]) + u(unit[i]) + u(unit[j])
                                       + u(zero))
    return ModeShifts(fundamentals=fund, chi=chi, uncertainty_fundamentals=ufund,
                      uncertainty_chi=uchi, ground=e(zero))
