"""Scans of the basis size N and the oscillator length b of one channel.

A scan diagonalises the channel on a grid of sizes × lengths and keeps ``energy(level, size,
length)``. For each length only one Hamiltonian is built, at the largest size: the basis of N
states is the first N states of the larger one, so its matrix is the leading N × N block (exact
for the kinetic energy and coordinate powers, and to the quadrature tolerance otherwise).

Each (N, b) also gets its *infrared length* L, the radius of the hard-wall box the truncated
basis imitates: L = X b / sqrt(λ_min), where λ_min is the lowest eigenvalue of (p b/ħ)² = 2 K
in the truncated channel space and X the first zero of the Bessel function J_ν of the channel
(ν = λ + d/2 − 1; X = π/2 on the line). This is the prescription of S. A. Wendt, C. Forssén,
T. Papenbrock and D. Sääf, Phys. Rev. C 91, 061301(R) (2015). The closed form
L₂ = sqrt(2(N + d/2 + 2)) b with N = 2(size − 1) + λ the highest shell (S. N. More,
A. Ekström, R. J. Furnstahl, G. Hagen and T. Papenbrock, Phys. Rev. C 87, 044326 (2013), for
d = 3) is kept beside it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Literal

import numpy as np
from scipy.linalg import eigh, eigh_tridiagonal
from scipy.optimize import brentq
from scipy.special import jv

from .._checks import integer, integers, positives
from ..basis import HermiteBasis, RadialBasis
from ..eigensolvers import diagonalize
from ..errors import InputError, NumericalError
from ..units import UnitSystem
from ..well import Well
from ._problem import Problem, make_problem, shared_docs

__all__ = [
    "BasisScan",
    "bessel_zero",
    "closed_form_length",
    "infrared_length",
    "length_grid",
    "scan_basis",
]

_EPS = float(np.finfo(float).eps)
NOISE_FACTOR = 1.0  # eigenvalues from eigh are accurate to about eps · ||H|| (backward stable)
GRID_RATIO = 2.0 ** 0.25  # spacing of the automatic length grid (energies are flat near b_opt)
GRID_HALF_WIDTH = 3  # automatic grid: b_opt · GRID_RATIO^k, k = −3 … 3
MAX_LENGTHS = 15  # cap of the automatic grid when it is extended towards a level's optimum


@dataclass(frozen=True)
class BasisScan:
    """Levels of one channel on a grid of basis sizes and oscillator lengths.

    Attributes
    ----------
    channel : Channel
        The channel.
    sizes : ndarray of int, shape (S,)
        Basis sizes N, ascending.
    lengths : ndarray, shape (B,)
        Oscillator lengths b, ascending, in the unit system's length unit.
    energies : ndarray, shape (levels, S, B)
        Ritz values E(level, N, b); NaN where N ≤ level. Each is an upper bound on its exact
        level (Hylleraas–Undheim–MacDonald theorem), and at fixed b they never rise with N
        (the bases are nested).
    ir_lengths : ndarray, shape (S, B)
        Infrared length L of each basis (Wendt et al. 2015), see the module notes.
    closed_form_lengths : ndarray, shape (S, B)
        L₂ = sqrt(2(N + d/2 + 2)) b (More et al. 2013).
    noise : ndarray, shape (S, B)
        Rounding scale of the eigenvalues, NOISE_FACTOR · eps · ||H||₁.
    threshold : float
        Threshold of the continuum (levels above it are discretised-continuum states).
    hbar2_2m : float
        ħ²/2m of the particle in the unit system.
    units : UnitSystem
    center : float
        Basis centre (1D without symmetry).
    """

    channel: Any
    sizes: np.ndarray
    lengths: np.ndarray
    energies: np.ndarray
    ir_lengths: np.ndarray
    closed_form_lengths: np.ndarray
    noise: np.ndarray
    threshold: float
    hbar2_2m: float
    units: UnitSystem
    center: float = 0.0
    mass: float | None = None
    skipped: tuple[tuple[float, str], ...] = ()  # (length, why) of lengths left out

    @property
    def levels(self) -> int:
        return int(self.energies.shape[0])

    @property
    def frequencies(self) -> np.ndarray:
        """ħω of each length, in the unit system's energy unit."""
        return 2.0 * self.hbar2_2m / self.lengths**2

    def optimal_length(self, level: int | None = None, size: int | None = None,
                       count: int | None = None) -> float:
        """Length minimising one level, or the sum of the lowest ``count`` levels.

        Parameters
        ----------
        level
            A level index; ``None`` minimises the sum of the lowest ``count`` levels together.
        size
            The basis size (default: the largest of the scan).
        count
            Number of levels summed when ``level`` is None (default: all levels of the scan).

        Notes
        -----
        The minimum on the grid is refined by a parabola through it and its two neighbours in
        log b; at an end of the grid that end is returned (the grid should then be extended).
        Values are taken as E + noise, so that a basis whose Hamiltonian is too large for
        double precision (e.g. an exponential wall reached by wide basis functions) never
        looks best.
        """
        i = self._size_index(size)
        upper = self.energies[:, i, :] + self.noise[None, i, :]
        if level is None:
            k = self.levels if count is None else int(count)
            values = np.sum(upper[:k], axis=0)
        else:
            values = upper[int(level)]
        return float(refine_minimum(self.lengths, values)[0])

    def best_energies(self, size: int | None = None) -> np.ndarray:
        """Each level's Ritz value at its best grid length (lowest E + noise) at one size."""
        i = self._size_index(size)
        out = np.full(self.levels, np.nan)
        for k in range(self.levels):
            row = self.energies[k, i, :]
            if np.isfinite(row).any():
                out[k] = row[self.best_length_index(k, size)]
        return out

    def best_length_index(self, level: int, size: int | None = None) -> int:
        """Index into :attr:`lengths` of the grid length with the lowest E + noise."""
        i = self._size_index(size)
        row = self.energies[level, i, :] + self.noise[i, :]
        return int(np.nanargmin(row))

    def sequence(self, level: int, length_index: int) -> tuple[np.ndarray, np.ndarray]:
        """Sizes and Ritz values of one level at one length, where the level exists."""
        e = self.energies[level, :, length_index]
        ok = np.isfinite(e)
        return self.sizes[ok], e[ok]

    def _size_index(self, size: int | None) -> int:
        if size is None:
            return len(self.sizes) - 1
        hits = np.flatnonzero(self.sizes == size)
        if not hits.size:
            raise InputError(f"size: {size!r} is not one of the scanned sizes "
                             f"{self.sizes.tolist()}")
        return int(hits[0])


def refine_minimum(lengths: np.ndarray, values: np.ndarray) -> tuple[float, bool]:
    """Minimiser of ``values`` over a log-spaced grid, refined by a parabola in log b.

    Returns ``(b, interior)``; ``interior`` is False when the minimum is at an end of the grid.
    """
    lengths = np.asarray(lengths, dtype=float)
    values = np.asarray(values, dtype=float)
    ok = np.isfinite(values)
    if not ok.any():
        return float(lengths[len(lengths) // 2]), False
    idx = np.flatnonzero(ok)
    i = int(idx[np.argmin(values[ok])])
    if i == idx[0] or i == idx[-1] or not (ok[i - 1] and ok[i + 1]):
        return float(lengths[i]), False
    x = np.log(lengths[i - 1:i + 2])
    y = values[i - 1:i + 2]
    # vertex of the parabola through three points
    d1, d2 = (y[1] - y[0]) / (x[1] - x[0]), (y[2] - y[1]) / (x[2] - x[1])
    curv = (d2 - d1) / (x[2] - x[0])
    if not curv > 0:
        return float(lengths[i]), True
    xv = 0.5 * (x[0] + x[1]) - d1 / (2.0 * curv)
    xv = min(max(xv, x[0]), x[2])
    return float(math.exp(xv)), True


def length_grid(center: float, half_width: int = GRID_HALF_WIDTH, ratio: float = GRID_RATIO
                ) -> np.ndarray:
    """Geometric grid center · ratio^k, k = −half_width … half_width."""
    k = np.arange(-half_width, half_width + 1, dtype=float)
    return float(center) * ratio**k


@lru_cache(maxsize=256)
def bessel_zero(nu: float) -> float:
    """First positive zero of the Bessel function J_ν, ν > −1 (π/2 for ν = −1/2).

    Found by bracketing on a grid and :func:`scipy.optimize.brentq`; the first zero lies in
    (0, ν + 1.9 ν^{1/3} + 3) (e.g. Abramowitz & Stegun, *Handbook of Mathematical Functions*,
    9.5.14 for the large-ν form).
    """
    nu = float(nu)
    if not nu > -1.0:
        raise InputError(f"nu: the Bessel order must exceed -1; got {nu!r}")
    if nu == -0.5:
        return 0.5 * math.pi
    if nu == 0.5:
        return math.pi
    top = nu + 1.9 * max(nu, 0.0) ** (1.0 / 3.0) + 4.0
    x = np.linspace(1e-6, top, 2000)
    v = jv(nu, x)
    s = np.flatnonzero(np.sign(v[:-1]) * np.sign(v[1:]) < 0)
    if not s.size:  # pragma: no cover - the bracket above always holds
        raise NumericalError(f"no zero of J_{nu} found below {top}")
    i = int(s[0])
    return float(brentq(lambda t: float(jv(nu, t)), x[i], x[i + 1], xtol=1e-15, rtol=1e-15))


def infrared_length(basis: HermiteBasis | RadialBasis) -> float:
    """Infrared length L of a truncated oscillator basis (Wendt et al. 2015).

    L = X b / sqrt(λ_min(2K)), with K the kinetic matrix in units of ħω (so 2K is (p b/ħ)²,
    including the centrifugal term of the channel) and X the first zero of J_ν for the radial
    channel (ν = λ + d/2 − 1) or π/2 on the line (a box [x₀ − L, x₀ + L]).
    """
    k2 = 2.0 * basis.kinetic()
    n = k2.shape[0]
    if isinstance(basis, RadialBasis):
        lam = eigh_tridiagonal(np.diag(k2).copy(), np.diag(k2, 1).copy(), eigvals_only=True,
                               select="i", select_range=(0, 0))[0]
        x = bessel_zero(basis.alpha)
    else:
        lam = eigh(k2, eigvals_only=True, subset_by_index=(0, 0))[0] if n > 1 else k2[0, 0]
        x = 0.5 * math.pi
    return float(x * basis.length / math.sqrt(lam))


def closed_form_length(basis: HermiteBasis | RadialBasis) -> float:
    """L₂ = sqrt(2(N + d/2 + 2)) b with N the highest oscillator shell of the basis.

    N = 2(size − 1) + λ for radial bases (More et al. 2013 give d = 3), N = size − 1 on the line.
    """
    if isinstance(basis, RadialBasis):
        shell = 2 * (basis.size - 1) + basis.lam_eff
        d = basis.dimension
    else:
        shell, d = basis.size - 1, 1
    return float(math.sqrt(2.0 * (shell + 0.5 * d + 2.0)) * basis.length)


# --------------------------------------------------------------------------- kernel
def run_scan(problem: Problem, sizes: Sequence[int], lengths: Sequence[float], levels: int
             ) -> BasisScan:
    """Diagonalise ``problem`` on the grid (validated inputs); ``levels`` per basis."""
    sizes_a = np.array(sorted({int(s) for s in sizes}), dtype=int)
    lengths_a = np.array(sorted({float(b) for b in lengths}), dtype=float)
    n_max = int(sizes_a[-1])
    e = np.full((levels, sizes_a.size, lengths_a.size), np.nan)
    ir = np.empty((sizes_a.size, lengths_a.size))
    l2 = np.empty_like(ir)
    noise = np.empty_like(ir)
    skipped = []
    ok = np.ones(lengths_a.size, dtype=bool)
    for jb, b in enumerate(lengths_a):
        try:
            mats = problem.hamiltonian(n_max, float(b))
        except NumericalError as exc:  # quadrature that will not settle at this length
            ok[jb] = False
            skipped.append((float(b), str(exc)))
            continue
        h = mats.total
        for i, n in enumerate(sizes_a):
            sub = h[:n, :n]
            k = min(levels, int(n))
            vals, _ = diagonalize(sub, k, mats.bandwidth)
            e[:k, i, jb] = vals
            noise[i, jb] = NOISE_FACTOR * _EPS * float(np.max(np.sum(np.abs(sub), axis=0)))
            basis = problem.basis(int(n), float(b))
            ir[i, jb] = infrared_length(basis)
            l2[i, jb] = closed_form_length(basis)
    if not ok.any():
        raise NumericalError(f"no length of the scan gave a usable Hamiltonian: {skipped[0][1]}")
    return BasisScan(channel=problem.channel, sizes=sizes_a, lengths=lengths_a[ok],
                     energies=e[..., ok], ir_lengths=ir[:, ok], closed_form_lengths=l2[:, ok],
                     noise=noise[:, ok], threshold=problem.threshold, hbar2_2m=problem.hbar2_2m,
                     units=problem.units, center=problem.center, mass=problem.mass,
                     skipped=tuple(skipped))


def resolve_lengths(problem: Problem, lengths: Any, frequencies: Any) -> tuple[float, ...] | None:
    """Explicit lengths (from ``lengths`` or ``frequencies``), or None for ``"auto"``."""
    if frequencies is not None:
        if not (lengths is None or (isinstance(lengths, str) and lengths == "auto")):
            raise InputError("frequencies: give lengths or frequencies, not both")
        hw = positives("frequencies", frequencies, what="hbar*omega values", noun="frequencies")
        return tuple(sorted(math.sqrt(2.0 * problem.hbar2_2m / w) for w in hw))
    if lengths is None or (isinstance(lengths, str) and lengths == "auto"):
        return None
    return positives("lengths", lengths, what="oscillator lengths (or 'auto')", noun="lengths")


def auto_scan(problem: Problem, sizes: Sequence[int], levels: int, center: float
              ) -> BasisScan:
    """Scan on the automatic grid around ``center``, extended until every level's optimum
    at the largest size lies inside the grid (or the grid holds MAX_LENGTHS lengths)."""
    lengths = list(length_grid(center))
    scan = run_scan(problem, sizes, lengths, levels)
    while len(lengths) < MAX_LENGTHS:
        low = high = False
        for k in range(levels):
            row = scan.energies[k, -1, :] + scan.noise[-1, :]
            if not np.isfinite(row).any():
                continue
            i = int(np.nanargmin(row))
            if not np.isfinite(row[i]) or row[i] >= problem.threshold:
                continue  # continuum states prefer the widest basis: no optimum to find
            low |= i == 0
            high |= i == len(lengths) - 1
        if not (low or high):
            break
        extra = []
        if low:
            extra.append(lengths[0] / GRID_RATIO)
        if high and len(lengths) + len(extra) < MAX_LENGTHS:
            extra.append(lengths[-1] * GRID_RATIO)
        try:
            more = run_scan(problem, sizes, extra, levels)
        except NumericalError:
            break
        scan = merge_scans(scan, more)
        lengths = list(scan.lengths)
    return scan


def merge_scans(a: BasisScan, b: BasisScan) -> BasisScan:
    """Two scans on the same sizes, lengths joined."""
    lengths = np.concatenate([a.lengths, b.lengths])
    order = np.argsort(lengths)
    cat = {name: np.concatenate([getattr(a, name), getattr(b, name)], axis=-1)[..., order]
           for name in ("energies", "ir_lengths", "closed_form_lengths", "noise")}
    return BasisScan(channel=a.channel, sizes=a.sizes, lengths=lengths[order],
                     threshold=a.threshold, hbar2_2m=a.hbar2_2m, units=a.units,
                     center=a.center, mass=a.mass, skipped=a.skipped + b.skipped,
                     **cat)


# --------------------------------------------------------------------------- front end
@shared_docs
def scan_basis(well: Well, dimension: int = 3, l: int | None = 0, j: float | str | None = None,
               *, sizes: Sequence[int] = (10, 14, 20, 28, 40),
               lengths: Sequence[float] | Literal["auto"] | None = "auto",
               frequencies: Sequence[float] | None = None,
               units: str | UnitSystem = "oscillator", mass: float | None = None,
               levels: int = 5, reference: str | Mapping[str, float] = "auto") -> BasisScan:
    """Levels of one channel on a grid of basis sizes × oscillator lengths.

    Parameters
    ----------
    [channel parameters]
    sizes : sequence of int
        Basis sizes N (distinct, each ≥ 1).
    lengths : sequence of float, "auto" or None
        Oscillator lengths b, or ``"auto"`` (also ``None``): a geometric grid
        b_ref · 2^{k/4}, k = −3 … 3, around the reference oscillator's length, extended until
        each bound level's minimum at the largest size lies inside it.
    frequencies : sequence of float, optional
        ħω values instead of ``lengths``.
    [units and mass]
    levels : int
        Levels per basis, counted from the lowest of the channel.
    reference : "auto" or mapping
        Reference oscillator, as for :func:`anharmony.solve` (its length centres the
        automatic grid).

    Returns
    -------
    BasisScan

    Raises
    ------
    InputError
        A bad argument; the message names it.
    """
    levels = integer("levels", levels, 1)
    sizes_t = integers("sizes", sizes, 1, what="basis sizes", noun="sizes")
    problem = make_problem(well, dimension, l, j, units, mass, levels, reference)
    explicit = resolve_lengths(problem, lengths, frequencies)
    if explicit is None:
        return auto_scan(problem, sizes_t, levels, problem.reference.length)
    return run_scan(problem, sizes_t, explicit, levels)
