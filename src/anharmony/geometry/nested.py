"""Error bars and completeness of the geometry blocks: the same Hamiltonian in nested smaller
bases (principal sub-blocks on the states N ≤ N_max − s, N_max − 2s, …), the error bar from
the changes of each level along that ladder (:func:`nested_error`), and the energy below
which a truncated basis holds every reference state (:func:`excluded_floor`)."""

from __future__ import annotations

import itertools
import math
from typing import Any

import numpy as np
from scipy.linalg import eigh

from .blocks import axial_parity, axial_states, cartesian_states


def measure(geometry: str, states: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """What the truncation cuts, per state: Σ w_i n_i (Cartesian) or w_⊥(2n_ρ + |Λ|) + w_z n_z
    (axial states (n_ρ, Λ, n_z[, 2Σ]))."""
    states = np.asarray(states)
    if geometry == "cartesian":
        return states @ np.asarray(weights, dtype=float)
    return weights[0] * (2 * states[:, 0] + np.abs(states[:, 1])) + weights[1] * states[:, 2]


def oscillator_energy(geometry: str, states: np.ndarray, hw: np.ndarray) -> np.ndarray:
    """The energy of each state in the basis oscillator (ħω_i of the basis lengths)."""
    states = np.asarray(states)
    if geometry == "cartesian":
        return (states + 0.5) @ hw
    return hw[0] * (2 * states[:, 0] + np.abs(states[:, 1]) + 1) + hw[1] * (states[:, 2] + 0.5)


def excluded_floor(geometry: str, shells: float, weights: np.ndarray, hw: np.ndarray, keys,
                   every: bool = False, parity: Any = None) -> float:
    """The lowest basis-oscillator energy of a state of the blocks ``keys`` that the
    truncation at ``shells`` leaves out (``inf`` if none of those blocks loses a state).

    Below it the truncated basis holds every oscillator state of those blocks; a level whose
    ⟨H₀⟩ reaches it may stand in for a state the basis lacks (a level of the right block
    lies below it, but the basis cannot make it: with ``truncation="shells"`` and unequal
    frequencies, the many quanta of a soft axis). ``every``: all blocks of the geometry
    that ``parity`` allows, also those the truncation leaves empty (axial Λ above the top).

    The candidates are the basis states with one or two quanta added along one axis (and the
    states with every quantum 0, 1 or 2): the cheapest excluded state of a parity class gives
    an included state of the same class when one quantum (an axis without parity) or two
    are taken off an axis, unless all its quanta are below 2 (common practice, no source).
    """
    w = np.asarray(weights, dtype=float)
    top = shells + _SLACK
    best = math.inf
    if geometry == "cartesian":
        d = len(w)
        base = cartesian_states(max(shells, 0.0), w) if shells >= 0 else np.zeros((0, d), int)
        small = np.array(list(itertools.product(range(3), repeat=d)), dtype=np.intp)
        eye = np.eye(d, dtype=np.intp)
        cands = np.vstack([small] + [base + k * eye[i] for i in range(d) for k in (1, 2)])
        cands = cands[cands @ w > top]
        if every:
            classes = [None if parity is None else tuple(
                None if p is None else (0 if p == 1 else 1) for p in parity)]
        else:
            classes = list(keys)
        for key in classes:
            sel = np.ones(len(cands), dtype=bool)
            if key is not None:
                for axis, p in enumerate(key):
                    if p is not None:
                        sel &= cands[:, axis] % 2 == p
            if np.any(sel):
                best = min(best, float(np.min(oscillator_energy(geometry, cands[sel], hw))))
        return best
    w_perp = float(w[0])
    if every:
        last = int(max(shells, 0.0) // w_perp) + 2
        sets = [((lam,), None if parity is None else parity) for lam in range(last + 1)]
    else:
        sets = []
        for om, pi in keys:
            a = abs(float(om))
            sets.append(((int(a),) if float(a).is_integer() else (int(a - 0.5), int(a + 0.5)),
                         pi))
    small = np.array([(0, 0), (0, 1), (0, 2), (1, 0), (1, 1)], dtype=np.intp)
    for lams, pi in sets:
        for lam in lams:
            base = axial_states(shells, lam, w) if shells >= 0 else np.zeros((0, 2), int)
            pairs = np.vstack([small] + [base + step for step in ((1, 0), (0, 1), (0, 2))])
            st = np.column_stack([pairs[:, 0], np.full(len(pairs), lam), pairs[:, 1]])
            sel = measure("axial", st, w) > top
            if pi is not None:
                sel &= axial_parity(lam, st[:, 2]) == pi
            if np.any(sel):
                best = min(best, float(np.min(oscillator_energy("axial", st[sel], hw))))
    return best


def nested_error(e: np.ndarray, ladder: np.ndarray, smooth: bool = True) -> np.ndarray:
    """Error bars of the levels ``e`` (at N_max) from their values in the nested truncations
    (``ladder``: rows N_max − s, N_max − 2s, …, s = :func:`nested_step`; docs/geometries.md,
    "Error bars").

    With E_j the level at N_max − js (E_0 = E(N_max)) and the changes d_j = E_j − E_{j−1} ≥ 0
    (the k-th eigenvalue of a principal sub-block lies above the k-th of the block: Cauchy
    interlacing):

    - the largest recent change, each older one discounted by q per step:
      max(d_1, q d_2, q² d_3), q = :data:`NESTED_DECAY` for ``smooth`` wells (exponential
      convergence), :data:`NESTED_DECAY_SLOW` otherwise. A level can stand still for a step
      while the step before it moved (a staircase; a plateau of the slow, algebraic
      convergence at a cusp such as the centre of a Woods–Saxon well, whose remainder is
      then several times the last change); the discounted older change still covers it;
    - at least the geometric remainder d_1 r/(1 − r): where the known changes shrink
      (every ratio d_j/d_{j+1} < 1), r is the slowest of those ratios (slow convergence,
      whose remainder exceeds the last change); where they do not shrink, or only d_1 is
      known (the level is missing, or a sub-basis lacks a state below it, one step further
      down), the level is not yet seen converging and r = :data:`NESTED_RATE_MAX`
      (remainder 9 d_1);
    - ``inf`` when the level is missing from N_max − s (a change d_j of a level missing
      further down is left out).
    """
    seq = np.vstack([e[None, :], ladder[:, :len(e)]])
    with np.errstate(invalid="ignore"):
        d = np.maximum(np.diff(seq, axis=0), 0.0)  # rounding can make a change −1e-15
    out = np.full(len(e), math.inf)
    for k in range(len(e)):
        dk = [float(x) for x in d[:3, k]]
        if not dk or not math.isfinite(dk[0]):
            continue
        known = []
        for x in dk:
            if not math.isfinite(x):
                break
            known.append(x)
        q = NESTED_DECAY if smooth else NESTED_DECAY_SLOW
        est = max(q**j * x for j, x in enumerate(known))
        if known[0] > 0.0:
            ratios = [a / b if b > 0.0 else math.inf for a, b in itertools.pairwise(known)]
            r = max(ratios, default=math.inf)  # one change alone: no rate known
            if r >= 1.0:  # not shrinking: not yet converging, take the slowest rate allowed
                r = NESTED_RATE_MAX
            est = max(est, known[0] * r / (1.0 - r))
        out[k] = NESTED_SAFETY * est
    return out


# the most an older change is discounted per nested step (exponential, algebraic convergence;
# measured on the cases of benchmarks/RESULTS_geometry.md, 2026-12-04 evening)
NESTED_DECAY = 0.1
NESTED_DECAY_SLOW = 0.5
NESTED_RATE_MAX = 0.9  # the rate taken where the changes do not shrink (remainder 9 d_1)
NESTED_SAFETY = 1.0  # factor on the nested estimate (measured: benchmarks/RESULTS_geometry.md)
NESTED_STEPS = 6  # nested truncations N_max − 2, …, N_max − 12 below the basis (error bars)
_SLACK = 1e-9


def nested_step(weights: np.ndarray) -> float:
    """The step between nested truncations: two quanta of the stiffest axis, 2 max(w_i) (2
    with ``truncation="shells"``). A smaller step can leave the stiff axis' quanta unchanged
    over several truncations, and the levels then stand still on a staircase (the same
    two quanta in n_ρ: 2n_ρ is counted in the axial measure, w_⊥ per quantum of N)."""
    return 2.0 * float(np.max(weights))


def nested_ladder(h: np.ndarray, cut: np.ndarray, shells: int, levels: int,
                  step: float = 2.0, steps: int = NESTED_STEPS) -> np.ndarray:
    """The lowest ``levels`` eigenvalues of the principal sub-blocks of ``h`` on the states
    with ``cut`` ≤ N_max − s, N_max − 2s, … (s = ``step``): the same Hamiltonian in the
    nested smaller bases (the matrices of a sub-basis are the sub-blocks: same lengths and
    centres, quadrature settled to its tolerance). Rows: steps; ``inf`` where a sub-block has
    too few states."""
    out = np.full((steps, levels), math.inf)
    for j in range(1, steps + 1):
        keep = np.flatnonzero(cut <= shells - step * j + _SLACK)
        if len(keep) == 0:
            break
        sub = h[np.ix_(keep, keep)]
        m = min(levels, len(keep))
        out[j - 1, :m] = eigh(sub, eigvals_only=True, subset_by_index=(0, m - 1), driver="evr")
    return out
