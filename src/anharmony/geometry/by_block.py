"""The levels of a well without spherical symmetry, block by block: :func:`solve_blocks`.

:func:`~anharmony.geometry.solve.solve_geometry` merges the blocks into one ladder; a result
file keeps them apart (DESIGN §10: the channel dimension holds the geometry's blocks), with the
lowest ``levels`` of every block, an error bar on each (from the nested truncations
N_max − 2, N_max − 4, …, the same rule as ``solve_geometry``: :func:`~anharmony.geometry.nested.
nested_error`) and the asymptotic label of each level. Of a pair
of time-reversed blocks ±Λ (or ±Ω with spin) only the non-negative one is kept, with
degeneracy 2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..units import UnitSystem
from .potential import geometry_threshold
from .solve import _label, judged, open_barrier, solve_shells, warn_levels

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
        For an open well (threshold −∞, e.g. a trap tilted by gravity): its escape energy, the
        lowest pass out of the basin of the minimum
        (:func:`~anharmony.geometry.saddle.escape_barrier`);
        the levels below it are quasi-bound. NaN for a well with a finite threshold.
    lengths, centers : tuple of float
        The basis lengths (b_⊥, b_z or b_x, b_y[, b_z]) and centres used.
    shells : int
        N_max of the basis (given, or chosen from ``count``).
    quasi_bound : ndarray of bool (B, L)
        Open well: the level lies below the escape barrier; its convergence is judged as a
        bound level's (:meth:`converged`). Levels of an open well above the barrier are
        neither bound nor quasi-bound.
    incomplete : ndarray of bool (B, L)
        The level's basis-oscillator energy ⟨H₀⟩ comes within half a quantum of the lowest
        oscillator state of its block that the truncation leaves out (``complete_below``,
        (B,)): the basis may lack a lower level of the block; error bar ``inf``.
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
    quasi_bound: np.ndarray | None = None
    incomplete: np.ndarray | None = None
    complete_below: np.ndarray | None = None

    def judged(self) -> np.ndarray:
        """(B, L) bool: the levels whose convergence is judged: bound, or quasi-bound (an
        open well's levels below its escape barrier)."""
        quasi = np.zeros_like(self.bound) if self.quasi_bound is None else self.quasi_bound
        return judged(self.bound, quasi)

    def converged(self, tolerance: float) -> np.ndarray:
        """(B, L) bool: judged levels whose error bar is at most ``tolerance`` (energy)."""
        with np.errstate(invalid="ignore"):
            return self.judged() & (self.error_estimate <= tolerance)


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
    solved; the error bar of each level comes from the nested truncations below ``shells``;
    ``count`` chooses ``shells`` from a count of Cartesian states). Levels that the truncated
    basis of their block may not represent completely (``incomplete``) are named in a
    :class:`~anharmony.errors.ConvergenceWarning`.
    """
    res = solve_shells(well, dimension, geometry, shells, levels, lengths, centers, truncation,
                       units, mass, count)
    well, main, shells = res.well, res.main, res.shells
    keys = sorted((k for k in main if geometry == "cartesian" or k[0] >= 0),
                  key=lambda k: _order(geometry, k))
    threshold = geometry_threshold(well, dimension)
    nb = len(keys)
    energies = np.full((nb, levels), math.nan)
    errors = np.full((nb, levels), math.nan)
    incomplete = np.zeros((nb, levels), dtype=bool)
    floors = np.full(nb, math.inf)
    names = [[""] * levels for _ in range(nb)]
    for i, key in enumerate(keys):
        e, vec, states, _ = main[key]
        count = min(levels, len(e))
        energies[i, :count] = e[:count]
        errors[i, :count] = res.errors(key)[:count]
        # a block's own ladder is complete below the lowest oscillator state it lacks
        floors[i] = res.floor([key])
        incomplete[i, :count] = res.content(key)[:count] > floors[i] - res.margin()
        for k in range(count):
            names[i][k] = _label(geometry, key, states[np.argmax(vec[:, k] ** 2)])
    errors[incomplete] = math.inf
    degeneracy = np.array([2 if geometry == "axial" and k[0] > 0 else 1 for k in keys])
    barrier = open_barrier(well, dimension, res.hbar2_2m, threshold)
    with np.errstate(invalid="ignore"):
        bound = energies < threshold
        quasi = ~bound & (energies < barrier)
    if np.any(incomplete):
        flat = [names[i][k] for i in range(nb) for k in range(levels) if incomplete[i, k]]
        warn_levels(np.zeros(len(flat)), np.full(len(flat), math.inf), flat,
                    np.zeros(len(flat), bool), np.zeros(len(flat), bool),
                    np.ones(len(flat), bool), shells, truncation, math.nan)
    return BlockSpectra(keys=keys, labels=[block_label(geometry, k) for k in keys],
                        degeneracy=degeneracy, energies=energies, error_estimate=errors,
                        bound=bound, level_labels=names, threshold=threshold, barrier=barrier,
                        lengths=tuple(float(v) for v in res.lengths),
                        centers=tuple(float(v) for v in res.centers), shells=int(shells),
                        quasi_bound=quasi, incomplete=incomplete, complete_below=floors)
