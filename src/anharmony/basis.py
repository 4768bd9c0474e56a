"""Oscillator bases: functions, quadrature and exact operators.

Two bases cover every channel of DESIGN §2:

- :class:`HermiteBasis` — 1D Hermite functions φ_n((x − x₀)/b), n = 0 … N−1;
- :class:`RadialBasis` — radial oscillator functions of a central well in d = 1, 2, 3
  dimensions, R_n(r) ∝ r^λ e^{−r²/2b²} L_n^{(α)}(r²/b²) with α = λ + d/2 − 1 (λ = l, or an
  effective non-integer λ when an inverse-square term is absorbed into the centrifugal one).

Basis functions are never built as polynomial × normalisation (that overflows, see
PITFALLS §4). They come from the normalised three-term recurrence of the orthonormal
polynomials p_n of the basis weight, run with a per-point logarithmic scale so that values at
far points keep their *relative* accuracy (PITFALLS §0).

Operators that are polynomials of the coordinate (powers of x, even powers of r) and the
kinetic energy are exact banded matrices from the infinite-space recurrences; everything else is
integrated by Gauss quadrature whose point count grows until the matrix stops changing.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import warnings
from abc import ABC, abstractmethod
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy.linalg import blas, eigh_tridiagonal
from scipy.special import gammaln, roots_legendre

from .errors import ConvergenceWarning, InputError, NumericalError

__all__ = ["QUADRATURE_RTOL", "HermiteBasis", "OrthogonalFamily", "RadialBasis", "panel_rule"]

QUADRATURE_RTOL = 1e-13  # default: matrix elements stable to ~50 ulp of the largest element
_RESCALE = 1e100  # rescale when a value exceeds this (squares stay below the double range)
_MAX_POINTS = 20000  # hard cap of the adaptive quadrature
_LOOSE_RTOL = 1e-9  # at the cap, accept (with a warning) a matrix settled to this
_PANEL_ORDER = 24  # Gauss–Legendre points per panel
_NOISE_ULPS = 1e4  # rounding floor of a quadrature matrix element, in ulp of max |f|
_PANEL_MARGIN = 7.0  # panels reach this far (in b) beyond the outermost turning point
_PROBE_TOP = 2  # settle check: unit vectors of the highest states (both 1D parities) …
_PROBE_RANDOM = 6  # … and seeded Gaussian vectors
_PROBE_SEED = 20261204
_SYRK = blas.dsyrk


@dataclass(frozen=True)
class OrthogonalFamily:
    """Orthonormal polynomials of a weight, from their Jacobi recurrence.

    x p_k = β_{k+1} p_{k+1} + a_k p_k + β_k p_{k−1}, with p_0 = 1/√μ₀ (μ₀ the weight's mass).
    Hermite (weight e^{−x²}): a_k = 0, β_k = √(k/2), μ₀ = √π.
    Laguerre (weight x^α e^{−x}): a_k = 2k + α + 1, β_k = −√(k(k+α)), μ₀ = Γ(α+1); the sign
    keeps p_n(0) > 0, the sign of the standard L_n^{(α)}.
    """

    kind: str  # "hermite" | "laguerre"
    alpha: float = 0.0

    def a(self, k: np.ndarray) -> np.ndarray:
        k = np.asarray(k, dtype=float)
        return np.zeros_like(k) if self.kind == "hermite" else 2.0 * k + self.alpha + 1.0

    def beta(self, k: np.ndarray) -> np.ndarray:
        k = np.asarray(k, dtype=float)
        if self.kind == "hermite":
            return np.sqrt(k / 2.0)
        return -np.sqrt(k * (k + self.alpha))

    @property
    def log_p0(self) -> float:
        if self.kind == "hermite":
            return -0.25 * math.log(math.pi)
        return -0.5 * float(gammaln(self.alpha + 1.0))

    def jacobi(self, n: int) -> np.ndarray:
        """Exact n × n Jacobi (coordinate) matrix, tridiagonal."""
        k = np.arange(n)
        j = np.diag(self.a(k))
        off = self.beta(k[1:])
        return j + np.diag(off, 1) + np.diag(off, -1)

    def values(self, x: np.ndarray, rows: int, norm_terms: int = 0
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Scaled values of p_0 … p_{rows−1} at ``x``.

        Returns ``(vals, logs, lognorm)`` with p_k(x) = vals[k] · exp(logs[k]) and, when
        ``norm_terms`` > 0, lognorm = ½ log Σ_{k<norm_terms} p_k(x)² (the inverse square root of
        the Christoffel function: the Gauss weight at a node is exp(−2·lognorm)).
        """
        x = np.asarray(x, dtype=float).ravel()
        n_run = max(rows, norm_terms)
        ks = np.arange(n_run + 1)
        a_k = self.a(ks).tolist()
        b_k = self.beta(ks).tolist()
        m = x.size
        vals = np.empty((max(rows, 1), m))
        ring = np.empty((3, m))  # rows beyond `rows` (needed only for the norm)

        def row(k: int) -> np.ndarray:
            return vals[k] if k < rows else ring[k % 3]

        scales = [np.full(m, self.log_p0)]  # log scale of each stretch of rows
        scale_of = [0] * max(rows, 1)
        sumsq = np.zeros(m)
        tmp = np.empty(m)
        row(0)[:] = 1.0
        for k in range(n_run):
            cur = row(k)
            if k < norm_terms:
                np.multiply(cur, cur, out=tmp)
                sumsq += tmp
            if k == n_run - 1:
                break
            nxt = row(k + 1)
            np.subtract(x, a_k[k], out=nxt)
            nxt *= cur
            if k:
                np.multiply(row(k - 1), b_k[k], out=tmp)
                nxt -= tmp
            nxt *= 1.0 / b_k[k + 1]
            if k + 1 < rows:
                scale_of[k + 1] = len(scales) - 1
            if k % 4 == 3:  # growth per step is modest: checking every 4th step is safe
                big = np.abs(nxt) > _RESCALE
                if big.any():
                    f = np.where(big, np.abs(nxt), 1.0)
                    nxt /= f
                    cur /= f  # the next step needs both rows on one scale
                    sumsq /= f * f
                    scales.append(scales[-1] + np.log(f))
                    for r in (k, k + 1):
                        if r < rows:
                            scale_of[r] = len(scales) - 1
        s = scales[-1]
        vals = vals[:rows]
        logs = _Logs(np.stack(scales), np.asarray(scale_of[:rows], dtype=np.intp))
        lognorm = 0.5 * np.log(sumsq) + s if norm_terms else np.zeros(x.size)
        return vals, logs, lognorm

    def gauss_nodes(self, m: int) -> np.ndarray:
        """Nodes of the m-point Gauss rule (Golub–Welsch eigenvalues, then Newton polish)."""
        k = np.arange(m)
        nodes = eigh_tridiagonal(self.a(k), np.abs(self.beta(k[1:])), eigvals_only=True)
        for _ in range(2):  # Newton on p_m: x -= p_m / p_m'
            nodes = nodes - self._newton_ratio(nodes, m)
        return np.sort(nodes)

    def _newton_ratio(self, x: np.ndarray, m: int) -> np.ndarray:
        p_prev, p_cur = np.zeros_like(x), np.ones_like(x)
        d_prev, d_cur = np.zeros_like(x), np.zeros_like(x)
        for k in range(m):
            b_next = float(self.beta(k + 1))
            ak, bk = float(self.a(k)), float(self.beta(k))
            p_next = ((x - ak) * p_cur - bk * p_prev) / b_next
            d_next = (p_cur + (x - ak) * d_cur - bk * d_prev) / b_next
            p_prev, p_cur, d_prev, d_cur = p_cur, p_next, d_cur, d_next
            f = np.maximum(np.abs(p_cur), 1.0)
            big = f > _RESCALE
            if np.any(big):
                f = np.where(big, f, 1.0)
                p_prev, p_cur, d_prev, d_cur = p_prev / f, p_cur / f, d_prev / f, d_cur / f
        return p_cur / d_cur


class _Logs:
    """Log scales of the recurrence rows, stored per stretch of rows that share one scale.

    ``scaled(vals, logpre)`` returns vals · exp(logs + logpre) with one exp per stretch and
    node instead of one per row and node; ``np.asarray`` gives the full (rows, nodes) array.
    """

    __slots__ = ("of", "stretches")

    def __init__(self, stretches: np.ndarray, of: np.ndarray) -> None:
        self.stretches, self.of = stretches, of

    def __array__(self, dtype=None, copy=None):
        out = self.stretches[self.of]
        return out if dtype is None else out.astype(dtype)

    def __getitem__(self, k):
        return np.asarray(self)[k]

    def __add__(self, other):
        return np.asarray(self) + other

    __radd__ = __add__

    def __sub__(self, other):
        return np.asarray(self) - other

    def scaled(self, vals: np.ndarray, logpre: np.ndarray | float = 0.0) -> np.ndarray:
        factors = np.exp(self.stretches + logpre)
        return vals * factors[self.of]


def panel_rule(lo: float, hi: float, breaks: Sequence[float], width: float
               ) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss–Legendre rule on [lo, hi]: panel edges at ``breaks``, each stretch
    between them cut into equal panels no wider than ``width``, 24 points per panel."""
    edges = sorted({lo, hi, *(b for b in breaks if lo < b < hi)})
    t, w = roots_legendre(_PANEL_ORDER)
    xs, ws = [], []
    for a, b in itertools.pairwise(edges):
        n = max(1, math.ceil((b - a) / width))
        e = np.linspace(a, b, n + 1)
        half = 0.5 * np.diff(e)
        mid = 0.5 * (e[:-1] + e[1:])
        xs.append((mid[:, None] + half[:, None] * t[None, :]).ravel())
        ws.append((half[:, None] * w[None, :]).ravel())
    return np.concatenate(xs), np.concatenate(ws)


class _Basis(ABC):
    """Shared machinery: adaptive quadrature of a function's matrix."""

    size: int
    length: float

    family: OrthogonalFamily

    def quadrature(self, points: int, kind: str = "weight", breaks: Sequence[float] = ()
                   ) -> tuple[np.ndarray, np.ndarray]:
        """Nodes (physical coordinate) and U[q, n] = √w_q φ_n(node_q) of an m-point rule.

        ``kind="weight"`` is the Gauss rule of the family's own weight, at whose nodes the
        normalised recurrence values are U itself; otherwise the panel rule of ``breaks``.
        """
        if kind == "weight":
            nodes = self.family.gauss_nodes(points)
            vals, logs, lognorm = self.family.values(nodes, self.size, norm_terms=points)
            u = logs.scaled(vals, -lognorm[None, :])
            return self._physical(nodes), u.T
        return self._panel_u(*self._panel_nodes(points, breaks))

    @abstractmethod
    def _physical(self, nodes: np.ndarray) -> np.ndarray:
        """The physical coordinate of the family's variable (x, or r)."""

    @abstractmethod
    def _panel_nodes(self, points: int, breaks: Sequence[float]
                     ) -> tuple[np.ndarray, np.ndarray]:
        """Scaled nodes and weights of the composite Gauss–Legendre rule of level ``points``."""

    @abstractmethod
    def _panel_u(self, nodes: np.ndarray, weights: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray]:
        """Physical nodes and U of a panel rule given its scaled nodes and weights."""

    def matrix(self, f: Callable[[np.ndarray], np.ndarray], kind: str = "weight",
               breaks: Sequence[float] = (), rtol: float = QUADRATURE_RTOL,
               points: int | None = None) -> np.ndarray:
        """Matrix ⟨m|f|n⟩ by Gauss quadrature, grown until it stops changing.

        Parameters
        ----------
        f
            Vectorised function of the physical coordinate (x, or r).
        kind
            ``"weight"``: Gauss rule of the basis' own weight (exponential convergence for
            functions analytic in the basis variable: x in 1D, r² for radial bases);
            ``"panels"``: composite Gauss–Legendre in x or r with panel edges at ``breaks``
            (for terms that are not smooth in r², such as Woods–Saxon, or that have kinks).
        rtol
            The point count grows until the matrix changes by at most rtol · max |A| (above
            the rounding floor) between two counts; see Notes.
        points
            Use exactly this many points (no sufficiency check) when given.

        Raises
        ------
        NumericalError
            When the matrix still changes at the point cap; the message names the term.

        Notes
        -----
        The settle check compares the matrix A(m) at a point count m with the rule of the
        previous count m′ < m, as before, but the coarser rule is applied only to a few probe
        vectors V (:func:`_probe_vectors`) instead of being built in full: A(m′)V costs
        4·m′·N·k flops against 2·m·N² for a full matrix. The probes are the unit vectors of
        the highest basis states (where quadrature error concentrates: their products
        oscillate fastest; there the check is the old elementwise one, exactly) and seeded
        Gaussian vectors g, for which each component (ΔA g)_i is a Gaussian of standard
        deviation ‖ΔA_i·‖₂ ≥ max_j |ΔA_ij|: with k of them an element change δ above the
        threshold goes unseen with probability ≤ (0.8 τ/δ)^k (anti-concentration of the
        normal law). The matrix returned is the finer one, A(m), as before. Nodes whose
        total contribution to every element stays below an ulp of max |f| (the tails where f
        or every basis function is negligible) are skipped, and a one-signed f is
        integrated as the symmetric rank-k product BᵀB with B = √|f|·U (BLAS ``syrk``).
        """
        if points is not None:
            return self._quad_matrix(f, points, kind, breaks)[0]
        probes = _probe_vectors(self.size)
        m = self.size + 24
        prev = self._quad_probe(f, m, kind, breaks, probes)
        # rounding of a probe component Σ_j ΔA_ij v_j when each ΔA_ij carries at most the
        # per-element floor: the floor times ‖v‖₂ (unit vectors: the floor itself)
        noise = np.linalg.norm(probes, axis=0)
        while True:
            m = _next_points(m)
            cur, fmax = self._quad_matrix(f, m, kind, breaks)
            if not (np.all(np.isfinite(cur)) and np.all(np.isfinite(prev))):
                raise NumericalError("a term of the well is not finite at some quadrature "
                                     "points; check its formula and the basis length")
            scale = float(np.max(np.abs(cur))) or 1.0
            now = cur @ probes
            # rounding floor: each element sums f u_q u_q' with Σ u_q² = 1, so its rounding
            # error is a few thousand ulp of max |f| at most
            floor = _NOISE_ULPS * np.finfo(float).eps * fmax
            change = np.max(np.abs(now - prev), axis=0) - floor * noise
            delta = max(0.0, float(np.max(change)))
            if delta <= rtol * scale:
                return cur
            if m > _MAX_POINTS:
                if delta <= _LOOSE_RTOL * scale:  # settled, only not to the last digits
                    warnings.warn(
                        f"quadrature of a well term settled only to {delta / scale:.1e} "
                        f"(relative) at {m} points; matrix elements carry that error",
                        ConvergenceWarning, stacklevel=3)
                    return cur
                raise NumericalError(
                    f"quadrature of a well term did not settle (change {delta:.2e} relative to "
                    f"{scale:.2e} at {m} points); the term may be singular or the basis length "
                    "badly chosen")
            prev = now

    def _quad_values(self, f, m, kind, breaks):
        """f at the nodes of rule m, the rule's U, the range [lo, hi) of nodes that matter
        and max |f| over the nodes where some basis function lives."""
        coords, u, live, peak = _cached_rule(self, m, kind, tuple(breaks))
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            fv = np.broadcast_to(np.asarray(f(coords), dtype=float), coords.shape)
        finite = np.isfinite(fv)
        # f infinite only where every function has underflowed to 0: those nodes add nothing
        # (a non-finite f at a live node stays, and the caller reports the matrix not finite)
        if not np.all(finite):
            if np.all(finite[live]):
                fv = np.where(live, fv, 0.0)
            else:
                return fv, u, 0, fv.size, float(np.max(np.abs(fv[live & finite]), initial=0.0))
        fmax = float(np.max(np.abs(fv[live]), initial=0.0))
        # |f_q u_qm u_qn| ≤ |f_q| max_n u_qn² =: c_q, and max_q c_q ≤ max_n Σ_q |f_q| u_qn²,
        # the size of the largest |f|-weighted element, whose rounding is ~eps of it: skip the
        # tails of nodes whose summed c_q stays below half an ulp of max_q c_q on each side
        # (not of max |f|, which a wall at the far, barely live nodes can make huge)
        bound = np.abs(fv) * peak
        tiny = 0.5 * np.finfo(float).eps * float(np.max(bound, initial=0.0))
        lo = int(np.searchsorted(np.cumsum(bound), tiny, side="right"))
        hi = fv.size - int(np.searchsorted(np.cumsum(bound[::-1]), tiny, side="right"))
        return fv, u, lo, max(lo, hi), fmax

    def _quad_matrix(self, f, m, kind, breaks):
        fv, u, lo, hi, fmax = self._quad_values(f, m, kind, breaks)
        fr, ur = fv[lo:hi], u[lo:hi]
        n = u.shape[1]
        if fr.size == 0:
            return np.zeros((n, n)), fmax
        if not np.all(np.isfinite(fr)):
            with np.errstate(over="ignore", invalid="ignore"):  # the caller reports it
                a = ur.T @ (fr[:, None] * ur)
            return 0.5 * (a + a.T), fmax
        # A = Σ_q f_q u_q u_qᵀ = B₊ᵀB₊ − B₋ᵀB₋ with B = √|f| U on the nodes of each sign: the
        # symmetric rank-k update (syrk) does half the flops of a general product
        b = np.sqrt(np.abs(fr))[:, None] * ur
        neg = fr < 0.0
        n_neg = int(np.count_nonzero(neg))
        if n_neg == 0 or n_neg == fr.size:
            c = _SYRK(-1.0 if n_neg else 1.0, b.T, trans=0, lower=0)
        else:
            c = _SYRK(1.0, b[~neg].T, trans=0, lower=0)
            c = _SYRK(-1.0, b[neg].T, beta=1.0, c=c, trans=0, lower=0, overwrite_c=1)
        a = c + c.T
        a[np.diag_indices(n)] *= 0.5
        return a, fmax

    def _quad_probe(self, f, m, kind, breaks, v):
        """A(m) V for the probe vectors V (columns), without building A(m)."""
        fv, u, lo, hi, _ = self._quad_values(f, m, kind, breaks)
        fr, ur = fv[lo:hi], u[lo:hi]
        with np.errstate(over="ignore", invalid="ignore"):
            return ur.T @ (fr[:, None] * (ur @ v))


@dataclass(frozen=True)
class HermiteBasis(_Basis):
    """1D oscillator basis φ_n(x) = b^{−1/2} ψ_n((x − x₀)/b), n = 0 … N−1, no symmetry.

    Parameters
    ----------
    size
        Number of functions N ≥ 1.
    length
        Oscillator length b > 0.
    center
        Centre x₀.
    """

    size: int
    length: float
    center: float = 0.0

    def __post_init__(self) -> None:
        _check_size_length(self.size, self.length)

    l = None
    dimension = 1
    alpha = None

    @cached_property
    def family(self) -> OrthogonalFamily:
        return OrthogonalFamily("hermite")

    def oscillator_levels(self) -> np.ndarray:
        """Oscillator energies in units of ħω: n + ½."""
        return np.arange(self.size) + 0.5

    def coordinate_power(self, k: int) -> np.ndarray:
        """Exact matrix of ((x − x₀)/b)^k, half-bandwidth k.

        The power of the (N+k)-dimensional coordinate matrix, cut to N × N, equals the exact
        infinite-space matrix: a path of k ladder steps from m < N to n < N never leaves the
        first N + k states.
        """
        k = _check_power(k)
        x = self.family.jacobi(self.size + k)
        return np.linalg.matrix_power(x, k)[: self.size, : self.size].copy()

    def kinetic(self) -> np.ndarray:
        """Exact kinetic matrix in units of ħω: T = −¼ (a† − a)²."""
        n = np.arange(self.size, dtype=float)
        t = np.diag((2.0 * n + 1.0) / 4.0)
        off = -0.25 * np.sqrt((n[:-2] + 1.0) * (n[:-2] + 2.0))
        return t + np.diag(off, 2) + np.diag(off, -2)

    def _physical(self, xi):
        """x = x₀ + b ξ."""
        return self.center + self.length * xi

    def _panel_nodes(self, points, breaks):
        top = math.sqrt(2.0 * self.size + 1.0) + _PANEL_MARGIN
        scaled = [(c - self.center) / self.length for c in breaks]
        return panel_rule(-top, top, scaled, _panel_width(points, self.size))

    def _panel_u(self, xi, w):
        vals, logs, _ = self.family.values(xi, self.size)
        u = logs.scaled(vals, 0.5 * np.log(w)[None, :] - 0.5 * xi[None, :] ** 2)
        return self.center + self.length * xi, u.T

    def functions(self, x: np.ndarray) -> np.ndarray:
        """φ_n(x), shape (N, len(x)), normalised with dx."""
        xi = (np.asarray(x, dtype=float).ravel() - self.center) / self.length
        vals, logs, _ = self.family.values(xi, self.size)
        return logs.scaled(vals, -0.5 * xi[None, :] ** 2 - 0.5 * math.log(self.length))


@dataclass(frozen=True)
class RadialBasis(_Basis):
    """Radial oscillator basis of a central well in d dimensions, one channel.

    R_n(r) = √(2/b^d) p_n(r²/b²) (r/b)^λ e^{−r²/2b²}, orthonormal with r^{d−1} dr, where p_n are
    the orthonormal Laguerre polynomials of weight t^α e^{−t}, α = λ + d/2 − 1. For d = 1,
    l = 0 and 1 are the even and odd functions of x on the half line.

    Parameters
    ----------
    size
        Number of radial functions N ≥ 1.
    length
        Oscillator length b > 0.
    l
        Angular quantum number (d = 2: |m|; d = 1: parity 0 or 1).
    dimension
        1, 2 or 3.
    lam
        Effective (possibly non-integer) λ replacing l in the functions, when an inverse-square
        term is absorbed into the centrifugal one; ``None`` means λ = l.
    """

    size: int
    length: float
    l: int = 0
    dimension: int = 3
    lam: float | None = None

    def __post_init__(self) -> None:
        _check_size_length(self.size, self.length)
        if self.dimension not in (1, 2, 3):
            raise InputError(f"dimension: must be 1, 2 or 3; got {self.dimension!r}")
        if isinstance(self.l, bool) or not isinstance(self.l, (int, np.integer)) or self.l < 0:
            raise InputError(f"l: must be a non-negative integer; got {self.l!r}")
        if self.dimension == 1 and self.l > 1:
            raise InputError(f"l: in 1D must be 0 (even) or 1 (odd); got {self.l!r}")
        if self.alpha <= -1.0:
            raise InputError(f"lam: effective angular momentum {self.lam!r} gives alpha <= -1")

    @property
    def lam_eff(self) -> float:
        return float(self.l if self.lam is None else self.lam)

    @property
    def alpha(self) -> float:
        return self.lam_eff + 0.5 * self.dimension - 1.0

    @cached_property
    def family(self) -> OrthogonalFamily:
        return OrthogonalFamily("laguerre", self.alpha)

    def oscillator_levels(self) -> np.ndarray:
        """Oscillator energies in units of ħω: 2n + λ + d/2."""
        return 2.0 * np.arange(self.size) + self.alpha + 1.0

    def coordinate_power(self, k: int) -> np.ndarray:
        """Exact matrix of (r/b)^k for even k, half-bandwidth k/2."""
        k = _check_power(k)
        if k % 2:
            raise InputError(f"k: exact radial powers must be even; got {k}")
        t = self.family.jacobi(self.size + k // 2)
        return np.linalg.matrix_power(t, k // 2)[: self.size, : self.size].copy()

    def kinetic(self) -> np.ndarray:
        """Exact radial kinetic matrix (centrifugal part with λ included) in units of ħω.

        T = H_osc − ½ (r/b)²; H_osc is diagonal, 2n + α + 1, and (r/b)² = t is the Jacobi matrix.
        """
        n = np.arange(self.size, dtype=float)
        a = self.alpha
        off = np.sqrt((n[:-1] + 1.0) * (n[:-1] + a + 1.0))
        return 0.5 * (np.diag(2.0 * n + a + 1.0) + np.diag(off, 1) + np.diag(off, -1))

    def _physical(self, t):
        """r = b √t (t = r²/b²; U of the quadrature is √w_q R_n(r_q) r_q^{(d−1)/2})."""
        return self.length * np.sqrt(t)

    def _panel_nodes(self, points, breaks):
        top = math.sqrt(4.0 * self.size + 2.0 * self.alpha + 2.0) + _PANEL_MARGIN
        return panel_rule(0.0, top, [c / self.length for c in breaks],
                           _panel_width(points, self.size))

    def _panel_u(self, rho, w):
        vals, logs, _ = self.family.values(rho * rho, self.size)
        logpre = 0.5 * np.log(2.0 * w) + (self.alpha + 0.5) * np.log(rho) - 0.5 * rho * rho
        u = logs.scaled(vals, logpre[None, :])
        return self.length * rho, u.T

    def functions(self, r: np.ndarray) -> np.ndarray:
        """R_n(r), shape (N, len(r)), normalised with r^{d−1} dr (angular part excluded)."""
        rho = np.abs(np.asarray(r, dtype=float).ravel()) / self.length
        vals, logs, _ = self.family.values(rho * rho, self.size)
        with np.errstate(divide="ignore", invalid="ignore"):
            logpre = (0.5 * math.log(2.0) - 0.5 * self.dimension * math.log(self.length)
                      + self.lam_eff * np.log(rho) - 0.5 * rho * rho)
        if self.lam_eff == 0:
            logpre = np.where(rho == 0, 0.5 * math.log(2.0) - 0.5 * self.dimension
                              * math.log(self.length), logpre)
        return logs.scaled(vals, logpre[None, :])


def _panel_width(points: int, size: int) -> float:
    """Panel width (in units of b) for the adaptive point counter ``points``.

    The first level, 11/√N, resolves the products of basis functions to ~1e-9 (measured on a
    Woods–Saxon well, N = 20…300); each level of the counter narrows the panels by 0.73.
    """
    m, level = size + 24, 0
    while m < points:
        m = _next_points(m)
        level += 1
    return min(2.5, 11.0 / math.sqrt(size)) * 0.73**level


_RULES: dict = {}
_RULES_MAX = 16  # a few bases × two levels of refinement; U of N = 300 is ~7 MB


def _next_points(m: int) -> int:
    """The adaptive quadrature's next point counter."""
    return int(1.35 * m) + 8


def _cached_rule(basis, m, kind, breaks):
    """Quadrature rules are pure functions of (basis, m, kind, breaks): reuse them.

    A rule is stored for the basis of unit length centred at 0, with the breaks scaled to it:
    nodes in the scaled coordinate and U do not depend on b or x₀, so one rule serves every
    length (a variational search over b, a length scan) and is only stretched here.
    Panel rules are made in pairs (this level and the next, which the sufficiency check asks
    for straight after) in one pass of the recurrence over both node sets.
    """
    unit, scaled = _unit_basis(basis, breaks)
    key = (unit, m, kind, scaled)
    rule = _RULES.get(key)
    if rule is None:
        while len(_RULES) >= _RULES_MAX:
            _RULES.pop(next(iter(_RULES)))
        if kind == "panels":
            m2 = _next_points(m)
            x1, w1 = unit._panel_nodes(m, scaled)
            x2, w2 = unit._panel_nodes(m2, scaled)
            coords, u = unit._panel_u(np.concatenate([x1, x2]), np.concatenate([w1, w2]))
            k = len(x1)
            rule = _RULES[key] = _with_live(coords[:k], u[:k])
            _RULES[(unit, m2, kind, scaled)] = _with_live(coords[k:], u[k:])
        else:
            rule = _RULES[key] = _with_live(*unit.quadrature(m, kind, scaled))
    xi, u, live, peak = rule
    return getattr(basis, "center", 0.0) + basis.length * xi, u, live, peak


_UNITS: dict = {}  # basis value → the same basis at b = 1, x₀ = 0 (pure: cached by value)


def _unit_basis(basis, breaks):
    """The same basis with b = 1 and x₀ = 0, and ``breaks`` in its scaled coordinate."""
    center = getattr(basis, "center", 0.0)
    scaled = tuple((c - center) / basis.length for c in breaks)
    if basis.length == 1.0 and center == 0.0:
        return basis, scaled
    unit = _UNITS.get(basis)
    if unit is None:
        changes = {"length": 1.0, **({"center": 0.0} if hasattr(basis, "center") else {})}
        unit = dataclasses.replace(basis, **changes)
        if len(_UNITS) >= 256:
            _UNITS.clear()
        _UNITS[basis] = unit
    return unit, scaled


def _with_live(coords: np.ndarray, u: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A rule with the mask of nodes where some basis function is not (underflowed to) 0,
    and each node's max_n U[q, n]² (it bounds |U[q, m] U[q, n]| for every element)."""
    peak = np.max(u * u, axis=1) if u.size else np.zeros(u.shape[0])
    return coords, u, peak != 0.0, peak


_PROBES: dict[int, np.ndarray] = {}


def _probe_vectors(size: int) -> np.ndarray:
    """The settle check's probe vectors (columns, N × k): the unit vectors of the highest
    ``_PROBE_TOP`` states and ``_PROBE_RANDOM`` standard Gaussian vectors of a fixed seed (the
    same for every call, so a matrix never depends on earlier calls)."""
    v = _PROBES.get(size)
    if v is None:
        top = min(_PROBE_TOP, size)
        rng = np.random.default_rng(_PROBE_SEED)
        v = np.concatenate([np.eye(size)[:, size - top:],
                            rng.standard_normal((size, _PROBE_RANDOM))], axis=1)
        v.setflags(write=False)
        if len(_PROBES) < 64:
            _PROBES[size] = v
    return v


def _check_size_length(size: int, length: float) -> None:
    if isinstance(size, bool) or not isinstance(size, (int, np.integer)) or size < 1:
        raise InputError(f"size: must be an integer >= 1; got {size!r}")
    if isinstance(length, bool) or not isinstance(length, (int, float, np.floating)) \
            or not math.isfinite(length) or length <= 0:
        raise InputError(f"length: must be a positive number; got {length!r}")


def _check_power(k: int) -> int:
    if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or k < 0:
        raise InputError(f"k: must be a non-negative integer; got {k!r}")
    return int(k)
