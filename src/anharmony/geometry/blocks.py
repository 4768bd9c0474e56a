"""Basis states, their truncation, and the blocks the Hamiltonian splits into.

Cartesian states are quanta tuples (n_x, n_y[, n_z]); axial states of one Λ are pairs
(n_ρ, n_z). Two truncations:

- ``"shells"``: total oscillator quanta N ≤ N_max (Cartesian N = Σ n_i, axial
  N = 2n_ρ + |Λ| + n_z);
- ``"energy"``: oscillator excitation energy in the deformed basis,
  Σ ω_i n_i ≤ N_max ω₀ with ω₀ the geometric mean of the axis frequencies
  (ω₀³ = ω_x ω_y ω_z, or ω_⊥² ω_z), so that the basis keeps the states a deformed oscillator
  would fill first (Bohr & Mottelson, *Nuclear Structure* vol. II, ch. 5).

Blocks: a parity that is conserved splits the states. In the Cartesian basis each axis about
whose centre the well is even contributes the parity (−1)^{n_i}; in the axial basis the
parity of |n_ρ Λ n_z⟩ is (−1)^{Λ + n_z} = (−1)^N (r → −r is φ → φ + π, z → −z).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence

import numpy as np

from ..errors import InputError

__all__ = ["TRUNCATIONS", "axial_parity", "axial_states", "cartesian_states", "parity_blocks",
           "quanta_weights"]

TRUNCATIONS = ("shells", "energy")
_SLACK = 1e-9  # float slack on the weighted cut (weights are ratios of frequencies)


def quanta_weights(frequencies: Sequence[float], truncation: str) -> np.ndarray:
    """Weight of one quantum along each axis: 1 (shells) or ω_i/ω₀ (energy)."""
    if truncation not in TRUNCATIONS:
        raise InputError(f"truncation: expected one of {', '.join(TRUNCATIONS)}; "
                         f"got {truncation!r}")
    f = np.asarray(frequencies, dtype=float)
    if truncation == "shells":
        return np.ones_like(f)
    return f / math.exp(float(np.mean(np.log(f))))


def cartesian_states(shells: int, weights: Sequence[float], count: int | None = None
                     ) -> np.ndarray:
    """Quanta tuples with Σ w_i n_i ≤ shells (or the ``count`` lowest by that sum).

    Returns an int array of shape (states, dimension), sorted by weighted quanta, then
    lexicographically.
    """
    w = np.asarray(weights, dtype=float)
    if count is not None:
        top = 0
        while True:
            s = cartesian_states(top, w)
            if len(s) >= count:
                return s[:count]
            top += 1
    ranges = [range(math.floor(shells / wi + _SLACK) + 1) for wi in w]
    states = [n for n in itertools.product(*ranges) if np.dot(w, n) <= shells + _SLACK]
    arr = np.array(states, dtype=np.intp).reshape(-1, len(w))
    order = np.lexsort((*arr.T[::-1], arr @ w))
    return arr[order]


def axial_states(shells: int, lam: int, weights: Sequence[float]) -> np.ndarray:
    """(n_ρ, n_z) of one |Λ| with w_⊥(2n_ρ + |Λ|) + w_z n_z ≤ shells."""
    w_perp, w_z = (float(v) for v in weights)
    lam = abs(int(lam))
    out = []
    n_rho = 0
    while w_perp * (2 * n_rho + lam) <= shells + _SLACK:
        rest = shells - w_perp * (2 * n_rho + lam)
        for n_z in range(math.floor(rest / w_z + _SLACK) + 1):
            out.append((n_rho, n_z))
        n_rho += 1
    return np.array(out, dtype=np.intp).reshape(-1, 2)


def parity_blocks(states: np.ndarray, symmetric: Sequence[bool]) -> dict[tuple, np.ndarray]:
    """Indices of the states in each block: key = per-axis parity (0 even, 1 odd, None)."""
    keys = [tuple(int(n % 2) if s else None for n, s in zip(row, symmetric, strict=True))
            for row in states]
    out: dict[tuple, list[int]] = {}
    for i, k in enumerate(keys):
        out.setdefault(k, []).append(i)
    return {k: np.array(v, dtype=np.intp) for k, v in sorted(out.items(), key=_key_order)}


def _key_order(item):
    return tuple(-1 if p is None else p for p in item[0])


def axial_parity(lam: int, n_z: np.ndarray) -> np.ndarray:
    """Parity (+1 / −1) of |n_ρ Λ n_z⟩: (−1)^{Λ + n_z}."""
    return 1 - 2 * ((abs(int(lam)) + np.asarray(n_z)) % 2)
