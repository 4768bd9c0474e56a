"""Anharmonic shifts of the modes of a trap and their cross terms, from its lowest levels.

The levels of a near-harmonic well in the Cartesian basis carry the quanta (n_x, n_y[, n_z])
of their dominant basis state. Written as spectroscopists write a polyatomic vibration,
E(n) = E(0) + Σ_i ν_i n_i + Σ_{i≤j} χ_ij n_i n_j + …, the constants follow from the levels
with at most two quanta, exactly for that form (common practice, no source):

- ν_i + χ_ii = E(1_i) − E(0) (the fundamental of mode i),
- 2 χ_ii = E(2_i) − 2 E(1_i) + E(0) (its anharmonic shift: the change of spacing),
- χ_ij = E(1_i + 1_j) − E(1_i) − E(1_j) + E(0) (the cross term of modes i ≠ j).

**Degenerate modes.** When two axes i, j have the same frequency (an axially symmetric trap:
its fundamentals agree to the levels' resolution), n_i and n_j are no quantum numbers of the
levels: the two-quantum states (2,0), (1,1), (0,2) mix into ℓ = 0 and ℓ = ±2 of the
vibrational angular momentum ℓ = v, v − 2, …, −v, v = n_i + n_j, and labels by dominant quanta
are ties. The pair is then one degenerate mode t, in Herzberg's form for degenerate vibrations
(Infrared and Raman Spectra of Polyatomic Molecules, 1945, ch. II; quoted from memory),
G = ω_t (v_t + 1) + x_tt (v_t + 1)² + g_tt ℓ_t² + …, i.e. E = E(0) + ν_t v_t + χ_tt v_t² + g_tt ℓ_t²
+ (cross terms χ_tk v_t n_k with the other modes), with

- g_tt = [E(2_t, ℓ = ±2) − E(2_t, ℓ = 0)] / 4,
- χ_tt = ½ [E(2_t, ℓ = 0) − 2 E(1_t) + E(0)] + g_tt (= x_tt),

reported as χ_ii = χ_jj = χ_tt (equal by construction), χ_ij = NaN (the cross term of the two
components of one mode is not defined; g takes its place) and the cross terms χ_ik = χ_jk = χ_tk.
ℓ² of each level is ⟨L_t²⟩, L_t = x_i p_j − x_j p_i (in units of ħ). Three or more degenerate
axes are refused.

**Mixing.** Each level used is named by its dominant (reduced) quanta; the weight of that label
in the level is checked: below 90 % (mixing above 10 %) the constants built from it follow the
labelling rather than one mode, and a warning names the levels (they are also in
``ModeShifts.mixed``); below 60 % (near ties) the labels name nothing and mode_shifts refuses.

:func:`mode_shifts` reads them off a :class:`~anharmony.geometry.solve.GeometrySpectrum`; each
constant carries the error bars of the levels it is made of (their sum, weighted by the
coefficients above).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from ..errors import AnharmonyWarning, InputError

__all__ = ["ModeShifts", "mode_shifts"]

MIXING_FLAG = 0.9  # a label carrying less of its level is flagged (mixing above 10 %)
MIXING_REFUSE = 0.6  # below this the label is a near tie and names nothing: refused
# two fundamentals closer than the sum of their error bars plus this share of the level scale
# belong to one degenerate mode (the rounding of a dense eigensolve is ~1e-13 of it)
DEGENERACY_RTOL = 1e-9
_LENGTH_RTOL = 1e-6  # the basis lengths of a degenerate pair must agree (rotations keep it)
_AXES = "xyz"


@dataclass(frozen=True)
class ModeShifts:
    """The mode constants of a trap (energy unit of its spectrum; d axes).

    Attributes
    ----------
    fundamentals : ndarray (d,)
        E(1_i) − E(0), the first excitation of each axis (of its mode, for a degenerate pair).
    chi : ndarray (d, d)
        χ_ij (symmetric): χ_ii the anharmonic shift of mode i (half the change of its
        spacing), χ_ij the cross term; for a degenerate pair (i, j), χ_ii = χ_jj = x_tt and
        χ_ij = NaN (see :mod:`anharmony.geometry.modes`).
    uncertainty_fundamentals : ndarray (d,)
    uncertainty_chi : ndarray (d, d)
        Sums of the error bars of the levels each constant is made of.
    ground : float
        E(0).
    degenerate : tuple of tuple of int
        The axes of each doubly degenerate mode, e.g. ``((0, 1),)`` for a trap symmetric
        about z; empty when no two frequencies coincide.
    g : ndarray
        g_tt of each degenerate mode (its vibrational angular momentum constant, the term
        g ℓ²), in the order of ``degenerate``.
    uncertainty_g : ndarray
    mixed : tuple of (str, float)
        The levels used whose label carries less than 90 % of the level, with that weight.
    """

    fundamentals: np.ndarray
    chi: np.ndarray
    uncertainty_fundamentals: np.ndarray
    uncertainty_chi: np.ndarray
    ground: float
    degenerate: tuple[tuple[int, ...], ...] = ()
    g: np.ndarray = field(default_factory=lambda: np.zeros(0))
    uncertainty_g: np.ndarray = field(default_factory=lambda: np.zeros(0))
    mixed: tuple[tuple[str, float], ...] = ()


def mode_shifts(spec) -> ModeShifts:
    """ν_i and χ_ij of a Cartesian spectrum from its levels with at most two quanta.

    Parameters
    ----------
    spec
        A Cartesian :class:`~anharmony.geometry.solve.GeometrySpectrum` that holds every level
        with at most two quanta (ask for enough ``levels``: 1 + d + d(d + 1)/2 at least, and
        both ℓ = ±2 partners of a degenerate pair), from every parity block.

    Raises
    ------
    InputError
        For an axial spectrum; when a level with at most two quanta is missing; when two levels
        share the same dominant quanta or a label is a near tie (strong mixing: the labels no
        longer name the modes); for three or more degenerate axes.

    Warns
    -----
    AnharmonyWarning
        When a label used carries less than 90 % of its level (listed in ``mixed``).
    """
    if getattr(spec, "geometry", None) != "cartesian":
        raise InputError("spec: mode shifts need a Cartesian spectrum "
                         "(solve_geometry(..., geometry='cartesian'))")
    d = spec.dimension
    states = np.asarray(spec.states, dtype=int)
    vectors = np.asarray(spec.vectors, dtype=float)
    energies = np.asarray(spec.energies, dtype=float)
    errors = np.array([float(e) if np.isfinite(e) else math.inf for e in spec.error_estimate])
    weights = vectors**2
    modes = _modes(spec, states, weights, energies, errors, d)
    table = _levels(spec, states, vectors, weights, energies, errors, modes)

    def level(quanta, ells=None):
        ells = tuple(ells or (0,) * len(modes))
        key = (tuple(quanta), ells)
        if key not in table:
            return None
        return table[key]

    zero = (0,) * len(modes)
    unit = [tuple(int(k == m) for k in range(len(modes))) for m in range(len(modes))]
    deg = [len(m) == 2 for m in modes]

    def ell(m, value):
        return tuple(value if k == m else 0 for k in range(len(modes)))

    def one(m):
        return (unit[m], ell(m, 1) if deg[m] else None)

    cross = {}  # (m, k) → the level 1_m + 1_k (ℓ = 1 in a degenerate mode)
    need: list[tuple[tuple[int, ...], tuple[int, ...] | None]] = [(zero, None)]
    need += [one(m) for m in range(len(modes))]
    for m in range(len(modes)):
        two = tuple(2 * u for u in unit[m])
        need += [(two, ell(m, 0)), (two, ell(m, 2))] if deg[m] else [(two, None)]
        for k in range(m + 1, len(modes)):
            both = tuple(a + b for a, b in zip(unit[m], unit[k], strict=True))
            ells = tuple(int(deg[i] and i in (m, k)) for i in range(len(modes)))
            cross[(m, k)] = (both, ells)
            need.append(cross[(m, k)])
    missing = [_name(q, e, modes, d) for q, e in need if level(q, e) is None]
    if missing:
        count = 1 + d + d * (d + 1) // 2
        raise InputError(f"spec: the levels {', '.join(missing)} are not in the spectrum; ask "
                         f"for more levels (at least {count}, from every parity block)")
    used = [level(q, e) for q, e in need]
    mixed = tuple((lab, w) for (_, _, w, lab) in used if w < MIXING_FLAG)
    ties = [(lab, w) for lab, w in mixed if w < MIXING_REFUSE]
    if ties:
        shown = ", ".join(f"{lab} ({100 * w:.0f} %)" for lab, w in ties)
        raise InputError(f"spec: the labels of the levels {shown} are near ties (their "
                         "dominant quanta carry less than 60 % of the level): the modes mix "
                         "too strongly for the labels to name them (a resonance, or two nearly "
                         "degenerate modes), so no χ is defined")
    if mixed:
        shown = ", ".join(f"{lab} ({100 * w:.0f} %)" for lab, w in mixed)
        warnings.warn(f"mode_shifts: the labels of the levels {shown} carry less than 90 % of "
                      "their level (mixing above 10 %): the constants built from them follow "
                      "the labels, not single modes, and their uncertainties leave that out",
                      AnharmonyWarning, stacklevel=2)

    def e(q, ells=None):
        return level(q, ells)[0]

    def u(q, ells=None):
        return level(q, ells)[1]

    n = len(modes)
    fund_m = np.array([e(*one(m)) - e(zero) for m in range(n)])
    ufund_m = np.array([u(*one(m)) + u(zero) for m in range(n)])
    chi_m, uchi_m = np.zeros((n, n)), np.zeros((n, n))
    g, ug = [], []
    for m in range(n):
        two = tuple(2 * v for v in unit[m])
        if deg[m]:
            gm = (e(two, ell(m, 2)) - e(two, ell(m, 0))) / 4.0
            ugm = (u(two, ell(m, 2)) + u(two, ell(m, 0))) / 4.0
            chi_m[m, m] = 0.5 * (e(two, ell(m, 0)) - 2 * e(*one(m)) + e(zero)) + gm
            uchi_m[m, m] = 0.5 * (u(two, ell(m, 0)) + 2 * u(*one(m)) + u(zero)) + ugm
            g.append(gm)
            ug.append(ugm)
        else:
            chi_m[m, m] = 0.5 * (e(two) - 2 * e(*one(m)) + e(zero))
            uchi_m[m, m] = 0.5 * (u(two) + 2 * u(*one(m)) + u(zero))
        for k in range(m + 1, n):
            q, ells = cross[(m, k)]
            chi_m[m, k] = chi_m[k, m] = e(q, ells) - e(*one(m)) - e(*one(k)) + e(zero)
            uchi_m[m, k] = uchi_m[k, m] = u(q, ells) + u(*one(m)) + u(*one(k)) + u(zero)
    axis_mode = {a: m for m, axes in enumerate(modes) for a in axes}
    fund = np.array([fund_m[axis_mode[a]] for a in range(d)])
    ufund = np.array([ufund_m[axis_mode[a]] for a in range(d)])
    chi, uchi = np.empty((d, d)), np.empty((d, d))
    for a in range(d):
        for b in range(d):
            ma, mb = axis_mode[a], axis_mode[b]
            undefined = a != b and ma == mb  # two components of one degenerate mode
            chi[a, b] = math.nan if undefined else chi_m[ma, mb]
            uchi[a, b] = math.nan if undefined else uchi_m[ma, mb]
    return ModeShifts(fundamentals=fund, chi=chi, uncertainty_fundamentals=ufund,
                      uncertainty_chi=uchi, ground=e(zero),
                      degenerate=tuple(m for m in modes if len(m) == 2),
                      g=np.array(g), uncertainty_g=np.array(ug), mixed=mixed)


def _name(quanta, ells, modes, d) -> str:
    """A needed level in words: ``(1,0,1)``, or ``v=2 l=±2 of (x,y) + (0,0,1)``."""
    axes = [0] * d
    parts = []
    for m, axes_m in enumerate(modes):
        if len(axes_m) == 1:
            axes[axes_m[0]] = quanta[m]
        elif quanta[m]:
            ell = (ells or (0,) * len(modes))[m]
            pair = ",".join(_AXES[a] for a in axes_m)
            parts.append(f"v={quanta[m]} l={'±' if ell else ''}{ell} of ({pair})")
    cart = "(" + ",".join(str(v) for v in axes) + ")"
    return " + ".join(parts + ([cart] if not parts or any(axes) else []))


def _one_quantum_levels(states, weights, d):
    """Levels whose weight in the one-quantum states exceeds ½, and those states by axis."""
    where = [int(np.flatnonzero(np.all(states == np.eye(d, dtype=int)[a], axis=1))[0])
             if np.any(np.all(states == np.eye(d, dtype=int)[a], axis=1)) else -1
             for a in range(d)]
    if min(where) < 0:
        return [], where
    w1 = weights[where, :].sum(axis=0)
    return [int(k) for k in np.flatnonzero(w1 > 0.5)], where


def _modes(spec, states, weights, energies, errors, d) -> list[tuple[int, ...]]:
    """The modes: single axes, or pairs of axes whose fundamentals coincide."""
    ones, where = _one_quantum_levels(states, weights, d)
    if len(ones) < d:
        raise InputError(f"spec: the levels with one quantum are not all in the spectrum; ask "
                         f"for more levels (at least {1 + d + d * (d + 1) // 2}, from every "
                         "parity block)")
    if len(ones) > d:
        raise InputError("spec: more levels than axes are mostly one-quantum states; the modes "
                         "mix too strongly for their labels to name them")
    ground = float(energies[int(np.argmax(weights[_zero_index(states), :]))]) \
        if _zero_index(states) is not None else float(energies[0])
    ones.sort(key=lambda k: energies[k])
    bars = np.where(np.isfinite(errors), errors, 0.0)  # a bar not computed widens nothing
    clusters: list[list[int]] = [[ones[0]]]
    for k in ones[1:]:
        last = clusters[-1][-1]
        scale = max(abs(energies[k]), abs(energies[last]), abs(energies[k] - ground))
        if abs(energies[k] - energies[last]) <= bars[k] + bars[last] + DEGENERACY_RTOL * scale:
            clusters[-1].append(k)
        else:
            clusters.append([k])
    modes = []
    for cl in clusters:
        share = weights[np.ix_(where, cl)].sum(axis=1)  # weight of each axis in the cluster
        axes = tuple(int(a) for a in np.flatnonzero(share > 0.5))
        if len(axes) != len(cl):
            raise InputError("spec: the one-quantum levels are mixtures of the axes "
                             f"{', '.join(_AXES[a] for a in range(d) if share[a] > 0.05)}: the "
                             "principal axes of the trap are not the axes of the basis, so the "
                             "labels do not name its modes")
        if len(axes) >= 3:
            raise InputError(f"spec: the modes along {', '.join(_AXES[a] for a in axes)} are "
                             f"degenerate (their fundamentals agree to the levels' resolution): "
                             "a per-mode χ is not defined for them, and a triply degenerate mode "
                             "is not handled (mode_shifts treats doubly degenerate pairs)")
        if len(axes) == 2:
            bi, bj = (spec.lengths[a] for a in axes)
            if abs(bi - bj) > _LENGTH_RTOL * max(bi, bj):
                names = " and ".join(_AXES[a] for a in axes)
                raise InputError(f"spec: the modes along {names} are degenerate, but the basis "
                                 f"lengths differ ({bi:.8g} and {bj:.8g}); solve with equal "
                                 "lengths along them (lengths=None takes them from the trap)")
        modes.append(axes)
    return sorted(modes)


def _zero_index(states):
    hit = np.flatnonzero(np.all(states == 0, axis=1))
    return int(hit[0]) if len(hit) else None


def _levels(spec, states, vectors, weights, energies, errors, modes):
    """Each level with at most two (reduced) quanta, keyed by (quanta per mode, |ℓ| per mode):
    (energy, error bar, weight of the label, label); a pair of ±ℓ levels is merged."""
    reduced = np.column_stack([states[:, list(m)].sum(axis=1) for m in modes])
    keys, inverse = np.unique(reduced, axis=0, return_inverse=True)
    inverse = inverse.ravel()
    lz = {m: _angular_momentum(states, modes[m]) for m in range(len(modes))
          if len(modes[m]) == 2}
    found: dict[tuple, list[tuple[float, float, float, str]]] = {}
    for k in range(vectors.shape[1]):
        by_key = np.bincount(inverse, weights=weights[:, k], minlength=len(keys))
        top = int(np.argmax(by_key))
        quanta = tuple(int(v) for v in keys[top])
        if sum(quanta) > 2:
            continue
        weight = float(by_key[top]) / max(float(by_key.sum()), 1e-300)
        ells = []
        for m in range(len(modes)):
            if m not in lz:
                ells.append(0)
                continue
            matrix, leak_rows = lz[m]
            part = np.where(inverse == top, vectors[:, k], 0.0)
            norm = float(part @ part)
            image = matrix @ part
            if float(image[leak_rows:] @ image[leak_rows:]) > 1e-6 * norm:
                raise InputError("spec: the basis is not closed under rotations about the "
                                 "degenerate axes (a parity block left out, or unequal "
                                 "truncation); solve every block with parity=None")
            l2 = float(image @ image) / norm
            v = quanta[m]
            allowed = np.arange(v % 2, v + 1, 2)
            ell = int(allowed[np.argmin(np.abs(allowed**2 - l2))])
            spread = 4.0 * max(v - 1, 1)  # distance between neighbouring ℓ² values
            weight *= max(0.0, 1.0 - abs(l2 - ell**2) / spread) if len(allowed) > 1 else 1.0
            ells.append(ell)
        key = (quanta, tuple(ells))
        label = spec.labels[k] if not lz else _name(quanta, tuple(ells), modes, spec.dimension)
        found.setdefault(key, []).append((float(energies[k]), float(errors[k]), weight, label))
    table = {}
    for (quanta, ells), rows in found.items():
        partners = 2 if any(ells) else 1  # ±ℓ of a degenerate mode (ℓ = 0: one level)
        if len(rows) > partners:
            raise InputError(f"spec: two levels have the dominant quanta {rows[0][3]}; the "
                             "modes mix too strongly for their labels to name them")
        energy = float(np.mean([r[0] for r in rows]))
        spread = max(r[0] for r in rows) - min(r[0] for r in rows)
        error = max(r[1] for r in rows) + 0.5 * spread
        bars = sum(r[1] for r in rows if math.isfinite(r[1]))
        if len(rows) == 2 and spread > bars + DEGENERACY_RTOL * abs(energy):
            raise InputError(f"spec: the ±ℓ levels {rows[0][3]} differ by {spread:.3g}, more "
                             "than their error bars: the degenerate mode is split, so the "
                             "symmetry that makes it degenerate does not hold in this basis")
        table[(quanta, ells)] = (energy, error, min(r[2] for r in rows), rows[0][3])
    return table


def _angular_momentum(states, pair):
    """L = x_i p_j − x_j p_i (÷ iħ) on the states: a_i a_j† − a_i† a_j, as a sparse matrix
    whose rows past the states' count collect what leaves the basis."""
    from scipy.sparse import csr_matrix

    i, j = pair
    index = {tuple(s): r for r, s in enumerate(states.tolist())}
    extra: dict[tuple, int] = {}
    rows, cols, vals = [], [], []
    for col, s in enumerate(states.tolist()):
        for di, dj, coef in ((-1, 1, math.sqrt(s[i] * (s[j] + 1))),
                             (1, -1, -math.sqrt((s[i] + 1) * s[j]))):
            if coef == 0.0:
                continue
            t = list(s)
            t[i] += di
            t[j] += dj
            t = tuple(t)
            row = index.get(t)
            if row is None:
                row = extra.setdefault(t, len(states) + len(extra))
            rows.append(row)
            cols.append(col)
            vals.append(coef)
    n = len(states)
    return csr_matrix((vals, (rows, cols)), shape=(n + len(extra), n)), n
