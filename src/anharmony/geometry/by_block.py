"""The levels of a well without spherical symmetry, block by block: :func:`solve_blocks`.

:func:`~anharmony.geometry.solve.solve_geometry` merges the blocks into one ladder; a result
file keeps them apart (DESIGN §10: the channel dimension holds the geometry's blocks), with the
lowest ``levels`` of every block, an error bar on each (the change from N_max − 2 to N_max
shells, the same rule as ``solve_geometry``) and the asymptotic label of each level. Of a pair
of time-reversed blocks ±Λ (or ±Ω with spin) only the non-negative one is kept, with
degeneracy 2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..units import UnitSystem
from .potential import escape_barrier, geometry_threshold
from .solve import _label, solve_shells

__all__ = ["BlockSpectra", "block_label", "solve_blocks"]


@dataclass(frozen=True)
class BlockSpectra:
    """The lowest levels of every block (B blocks, L levels each; NaN where a block has fewer).

    Attributes
    ----------
    keys : list of tuple
        Block keys: per-axis parities (0 even, 1 odd, None) in the Cartesian basis, (Ω or Λ,
        π or None) in the axial one, Ω ≥ 0.
    labels : list of str
        Block labels: ``1/2+`` (Ω^π with spin), ``0+`` (Λ^π), ``(+,-,*)`` (parity per axis,
        ``*`` where it is not conserved).
    degeneracy : ndarray of int (B,)
        2 for a block standing for ±Ω (or ±Λ ≠ 0), 1 otherwise.
    energies, error_estimate : ndarray (B, L)
    bound : ndarray of bool (B, L)
    level_labels : list of list of str (B, L)
        Ω^π[N n_z Λ] or (n_x,n_y,n_z) of the dominant basis state; ``""`` where no level.
    threshold : float
    barrier : float
        For an open well (threshold −∞, e.g. a trap tilted by gravity): its escape energy along
        straight rays from the minimum (:func:`~anharmony.geometry.potential.escape_barrier`);
        the levels below it are quasi-bound. NaN for a well with a finite threshold.
    lengths, centers : tuple of float
        The basis lengths (b_⊥, b_z or b_x, b_y[, b_z]) and centres used.
    shells : int
        N_max of the basis (given, or chosen from ``count``).
    """

    keys: list[tuple]
    labels: list[str]
    degeneracy: np.ndarray
    energies: np.ndarray
    error_estimate: np.ndarray
    bound: np.ndarray
    level_labels: list[list[str]]
    threshold: float
    barrier: float
    lengths: tuple[float, ...]
    centers: tuple[float, ...]
    shells: int = 0


def block_label(geometry: str, key: tuple) -> str:
    """The label of a block key (see :class:`BlockSpectra`)."""
    if geometry == "cartesian":
        return "(" + ",".join("*" if p is None else "+-"[p] for p in key) + ")"
    om, pi = key
    shown = str(int(om)) if float(om).is_integer() else f"{round(2 * om)}/2"
    return shown + ("" if pi is None else "+" if pi > 0 else "-")


def _order(geometry: str, key: tuple) -> tuple:
    if geometry == "cartesian":
        return tuple(-1 if p is None else p for p in key)
    om, pi = key
    return (float(om), 0 if pi is None else -pi)


def solve_blocks(well, dimension: int = 3, *, geometry: str = "axial", shells: int = 12,
                 lengths: Any = None, centers: Any = None, truncation: str = "shells",
                 units: str | UnitSystem = "oscillator", mass: float | None = None,
                 levels: int = 5, count: int | None = None) -> BlockSpectra:
    """The lowest ``levels`` of every block of a well in a Cartesian or axial basis.

    Parameters are those of :func:`~anharmony.geometry.solve.solve_geometry` (every block is
    solved; the error bar of each level is its change from ``shells − 2`` to ``shells``;
    ``count`` chooses ``shells`` from a count of Cartesian states).
    """
    well, dimension, c, b, x0, shells, main, small = solve_shells(
        well, dimension, geometry, shells, levels, lengths, centers, truncation, units, mass,
        count)
    keys = sorted((k for k in main if geometry == "cartesian" or k[0] >= 0),
                  key=lambda k: _order(geometry, k))
    threshold = geometry_threshold(well, dimension)
    nb = len(keys)
    energies = np.full((nb, levels), math.nan)
    errors = np.full((nb, levels), math.nan)
    names = [[""] * levels for _ in range(nb)]
    for i, key in enumerate(keys):
        e, vec, states = main[key]
        count = min(levels, len(e))
        energies[i, :count] = e[:count]
        es = small.get(key, ((), None, None))[0]
        for k in range(count):
            errors[i, k] = abs(e[k] - es[k]) if k < len(es) else math.inf
            names[i][k] = _label(geometry, key, states[np.argmax(vec[:, k] ** 2)])
    degeneracy = np.array([2 if geometry == "axial" and k[0] > 0 else 1 for k in keys])
    barrier = math.nan
    if threshold == -math.inf:
        from .frequencies import trap_frequencies_of

        minimum = trap_frequencies_of(well, dimension, c).minimum
        barrier = escape_barrier(well, dimension, minimum)
    with np.errstate(invalid="ignore"):
        bound = energies < threshold
    return BlockSpectra(keys=keys, labels=[block_label(geometry, k) for k in keys],
                        degeneracy=degeneracy, energies=energies, error_estimate=errors,
                        bound=bound, level_labels=names, threshold=threshold, barrier=barrier,
                        lengths=tuple(float(v) for v in b), centers=tuple(float(v) for v in x0),
                        shells=int(shells))
