"""Cartesian oscillator basis in 2D and 3D: products of Hermite functions, one length per axis.

|n_x n_y n_z⟩ = φ_{n_x}((x − c_x)/b_x) φ_{n_y}((y − c_y)/b_y) φ_{n_z}((z − c_z)/b_z), each factor
an :class:`anharmony.basis.HermiteBasis` function. Matrices on a list of states:

- kinetic energy and polynomials of the coordinates exactly, as Kronecker products of the
  per-axis banded matrices restricted to the state list (⟨s|A⊗B⊗C|s′⟩ = A_{n_x n_x′} B … C …);
- anything else by the tensor product of the per-axis Gauss–Hermite rules with sum
  factorisation: contract the z axis first (a matrix product over the grid), then y on the
  distinct (n_y, n_z) pairs of the block, then x pair by pair of n_x values. The full product
  tensor ⟨s|V|s′⟩ over all quanta is never formed. The point count per axis grows until the
  block matrix stops changing (relative ``rtol``).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from functools import cached_property, lru_cache

import numpy as np
from scipy.special import roots_legendre

from ..basis import HermiteBasis
from ..errors import ConvergenceWarning, NumericalError

__all__ = ["PANEL_RTOL", "QUADRATURE_RTOL", "CartesianBasis", "contract_first_axis", "settle"]

QUADRATURE_RTOL = 1e-11  # block matrices settle to this fraction of their largest element
PANEL_RTOL = 1e-9  # panels around a cusp at r = 0 converge algebraically: settle to this
_MAX_POINTS = 400  # per axis; the grid holds up to 400³ values only for tiny blocks
_PANEL_ORDER = 16  # Gauss–Legendre points per panel of the "panels" rule
_NOISE_ULPS = 1e4  # rounding floor of a quadrature element, in ulp of max |V| (as basis.py)


def _grow(m: int) -> int:
    return int(1.3 * m) + 6


def _grow_panels(m: int) -> int:
    """About 1.5 times the panels per side (at least one more)."""
    per_side = m // (2 * _PANEL_ORDER)
    return 2 * _PANEL_ORDER * (per_side + max(1, per_side // 2))


def settle(evaluate: Callable[[list[int]], tuple[np.ndarray, float]], start: Sequence[int],
           rtol: float, what: str, grow: Callable[[int], int] = _grow) -> np.ndarray:
    """Grow the per-axis point counts until ``evaluate(points)`` stops changing.

    ``grow`` must change the rule at every step (else a repeated rule would look settled).

    ``evaluate`` returns the matrix and max |V| on the grid. Settled means the largest change
    is at most ``rtol`` of the largest element, beyond a rounding floor of 10⁴ ulp of max |V|.
    Raises :class:`NumericalError` (or warns, if settled to 1000 · rtol) at 400 points per axis.
    """
    m = list(start)
    prev, _ = evaluate(m)
    while True:
        m = [grow(k) for k in m]
        cur, fmax = evaluate(m)
        if not np.all(np.isfinite(cur)):
            raise NumericalError(f"a term of the well is not finite at some quadrature points "
                                 f"of the {what} basis; check the terms and lengths")
        scale = float(np.max(np.abs(cur))) or 1.0
        delta = float(np.max(np.abs(cur - prev))) - _NOISE_ULPS * np.finfo(float).eps * fmax
        if delta <= rtol * scale:
            return cur
        if max(m) > _MAX_POINTS:
            if delta <= 1e3 * rtol * scale:
                warnings.warn(f"{what} quadrature settled only to {delta / scale:.1e} "
                              f"(relative) at {max(m)} points per axis; matrix elements carry "
                              "that error", ConvergenceWarning, stacklevel=4)
                return cur
            raise NumericalError(
                f"{what} quadrature did not settle (change {delta:.2e} relative to {scale:.2e} "
                f"at {max(m)} points per axis); the well may have a kink or the lengths may be "
                "badly chosen")
        prev = cur


class CartesianBasis:
    """Products of Hermite functions on a list of quanta tuples.

    Parameters
    ----------
    states
        Int array (states, d) of quanta (n_x, n_y[, n_z]), d = 2 or 3.
    lengths
        Oscillator length b_i of each axis.
    centers
        Centre c_i of each axis (default 0).
    """

    def __init__(self, states: np.ndarray, lengths: Sequence[float],
                 centers: Sequence[float] | None = None) -> None:
        self.states = np.asarray(states, dtype=np.intp)
        self.dimension = self.states.shape[1]
        self.lengths = tuple(float(b) for b in lengths)
        self.centers = tuple(0.0 for _ in lengths) if centers is None else tuple(
            float(c) for c in centers)
        if len(self.lengths) != self.dimension or len(self.centers) != self.dimension:
            raise ValueError("lengths and centers need one value per axis")

    @property
    def size(self) -> int:
        return len(self.states)

    @cached_property
    def axes(self) -> tuple[HermiteBasis, ...]:
        """The 1D basis of each axis, large enough for the highest quanta in the list."""
        top = self.states.max(axis=0) + 1
        return tuple(HermiteBasis(int(n), b, c)
                     for n, b, c in zip(top, self.lengths, self.centers, strict=True))

    def frequencies(self, hbar2_2m: float) -> np.ndarray:
        """ħω_i = 2 (ħ²/2m) / b_i² of each axis."""
        return np.array([2.0 * hbar2_2m / b**2 for b in self.lengths])

    def oscillator_energies(self, hbar2_2m: float) -> np.ndarray:
        """Σ ħω_i (n_i + ½) of each state."""
        return (self.states + 0.5) @ self.frequencies(hbar2_2m)

    # ------------------------------------------------------------------ exact matrices
    def kronecker(self, factors: Sequence[np.ndarray | None], idx: np.ndarray) -> np.ndarray:
        """⟨s|F_x ⊗ F_y ⊗ F_z|s′⟩ on the states ``idx``; ``None`` is the identity."""
        s = self.states[idx]
        out = np.ones((len(idx), len(idx)))
        for axis, f in enumerate(factors):
            n = s[:, axis]
            if f is None:
                out *= n[:, None] == n[None, :]
            else:
                out *= f[np.ix_(n, n)]
        return out

    def kinetic(self, idx: np.ndarray, hbar2_2m: float) -> np.ndarray:
        """Exact kinetic matrix Σ_i ħω_i T_i (T_i the 1D kinetic matrix in units of ħω_i)."""
        out = np.zeros((len(idx), len(idx)))
        for axis, hw in enumerate(self.frequencies(hbar2_2m)):
            factors = [None] * self.dimension
            factors[axis] = hw * self.axes[axis].kinetic()
            out += self.kronecker(factors, idx)
        return out

    def axis_power(self, axis: int, p: int) -> np.ndarray:
        """Exact matrix of x_axis^p in absolute coordinates: (c + b ξ)^p expanded in ξ."""
        ax = self.axes[axis]
        out = np.zeros((ax.size, ax.size))
        for k in range(p + 1):
            w = math.comb(p, k) * ax.center ** (p - k) * ax.length**k
            if w != 0.0:
                out += w * (ax.coordinate_power(k) if k else np.eye(ax.size))
        return out

    def polynomial(self, poly: dict[tuple[int, ...], float], idx: np.ndarray) -> np.ndarray:
        """Exact matrix of Σ c x^p_x y^p_y z^p_z."""
        out = np.zeros((len(idx), len(idx)))
        for powers, c in poly.items():
            if c == 0.0:
                continue
            factors = [self.axis_power(a, p) if p else None for a, p in enumerate(powers)]
            out += c * self.kronecker(factors, idx)
        return out

    # ------------------------------------------------------------------ quadrature
    def rules(self, points: Sequence[int]) -> list[tuple[np.ndarray, np.ndarray]]:
        """Per-axis Gauss–Hermite rules: nodes and U[q, n] = √w_q φ_n(x_q)."""
        return [ax.quadrature(int(m), "weight") for ax, m in zip(self.axes, points, strict=True)]

    def quadrature(self, f: Callable[..., np.ndarray], idx: np.ndarray,
                   rtol: float | None = None, points: Sequence[int] | None = None,
                   kind: str = "weight") -> np.ndarray:
        """⟨s|f|s′⟩ on the states ``idx`` by tensor Gauss–Hermite quadrature.

        The per-axis point count starts at N_i + 16 and grows by ~1.3 until the matrix
        changes by at most ``rtol`` of its largest element (beyond rounding); a
        :class:`NumericalError` when it has not settled at 400 points per axis.
        """
        if points is not None:
            return self._quad(f, idx, points, kind)[0]
        if rtol is None:
            rtol = QUADRATURE_RTOL if kind == "weight" else PANEL_RTOL
        start = [ax.size + 16 if kind == "weight" else 4 * _PANEL_ORDER for ax in self.axes]
        return settle(lambda m: self._quad(f, idx, m, kind), start, rtol, "Cartesian",
                      _grow if kind == "weight" else _grow_panels)

    def _quad(self, f, idx, points, kind="weight"):
        rules = [_rule(ax, int(m), kind) for ax, m in zip(self.axes, points, strict=True)]
        grids = np.meshgrid(*(r[0] for r in rules), indexing="ij", sparse=True)
        with np.errstate(over="ignore", invalid="ignore"):
            v = np.asarray(f(*grids), dtype=float)
        shape = tuple(len(r[0]) for r in rules)
        v = np.broadcast_to(v, shape)
        fmax = float(np.max(np.abs(v[np.isfinite(v)]), initial=0.0))
        s = self.states[idx]
        # only the quanta present in the block (half of them per conserved parity)
        loc, us = [], []
        for axis in range(self.dimension):
            vals, inv = np.unique(s[:, axis], return_inverse=True)
            us.append(rules[axis][1][:, vals])
            loc.append(inv)
        # last axis: one matrix product over the grid, W[qx(, qy), a, b]
        ul = us[-1]
        nl = ul.shape[1]
        ull = (ul[:, :, None] * ul[:, None, :]).reshape(shape[-1], nl * nl)
        w = v.reshape(-1, shape[-1]) @ ull
        if self.dimension == 2:
            return contract_first_axis(us[0], w.reshape(shape[0], nl, nl), loc[0], loc[1]), fmax
        # middle axis: a batched matrix product, then the distinct (n_y, n_z) pairs
        uy = us[1]
        ny = uy.shape[1]
        uyy = (uy[:, :, None] * uy[:, None, :]).reshape(shape[1], ny * ny)
        w2 = np.matmul(uyy.T[None], w.reshape(shape[0], shape[1], nl * nl))
        w2 = w2.reshape(shape[0], ny, ny, nl, nl)
        uniq, pair = np.unique(loc[1] * nl + loc[2], return_inverse=True)
        py, pz = uniq // nl, uniq % nl
        g = w2[:, py[:, None], py[None, :], pz[:, None], pz[None, :]]
        return contract_first_axis(us[0], g, loc[0], pair), fmax


@lru_cache(maxsize=64)
def _rule(axis: HermiteBasis, points: int, kind: str = "weight"
          ) -> tuple[np.ndarray, np.ndarray]:
    """Rule of one axis basis: nodes and U[q, n] = √w_q φ_n(x_q) (pure: cached).

    ``"weight"``: the m-point Gauss–Hermite rule. ``"panels"``: composite Gauss–Legendre of
    order 16 with a panel edge at the axis centre (where a central term with a cusp at r = 0,
    such as Woods–Saxon, has its kink), reaching √(2N + 1) + 6 oscillator lengths out on each
    side (φ_n is below 1e-8 of its maximum beyond that for n < N); m points in all.
    """
    if kind == "weight":
        return axis.quadrature(points, "weight")
    per_side = max(1, points // (2 * _PANEL_ORDER))
    top = math.sqrt(2.0 * axis.size + 1.0) + 6.0
    t, w = roots_legendre(_PANEL_ORDER)
    edges = np.linspace(0.0, top, per_side + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[:-1] + edges[1:])
    xi = (mid[:, None] + half[:, None] * t[None, :]).ravel()
    wi = (half[:, None] * w[None, :]).ravel()
    xi, wi = np.concatenate([-xi[::-1], xi]), np.concatenate([wi[::-1], wi])
    x = axis.center + axis.length * xi
    u = axis.functions(x) * np.sqrt(wi * axis.length)[None, :]
    return x, u.T


def contract_first_axis(u: np.ndarray, g: np.ndarray, first: np.ndarray, pair: np.ndarray
                        ) -> np.ndarray:
    """A[s, s′] = Σ_q U[q, first_s] U[q, first_s′] G[q, pair_s, pair_s′], symmetrised.

    The last step of sum factorisation: one matrix–vector product per pair of values of the
    first axis' quantum number, so that no (states × states × points) array is formed.
    """
    npair = g.shape[1]
    gflat = g.reshape(len(u), -1)
    out = np.empty((len(first), len(first)))
    groups = {a: np.flatnonzero(first == a) for a in np.unique(first)}
    for a, ia in groups.items():
        for b, ib in groups.items():
            if b < a:
                continue
            w = u[:, a] * u[:, b]
            cols = (pair[ia][:, None] * npair + pair[ib][None, :]).ravel()
            blk = (w @ gflat[:, cols]).reshape(len(ia), len(ib))
            out[np.ix_(ia, ib)] = blk
            if b != a:
                out[np.ix_(ib, ia)] = blk.T
    return 0.5 * (out + out.T)
