"""Observables of the levels of one spectrum: phases, wavefunctions, matrix elements.

Phase convention
----------------
An eigensolver returns each eigenvector up to a sign. Here every level is made *positive in its
first significant lobe*: walking from the left end of the basis' extent (1D without symmetry)
or from the origin (radial channels and 1D parity channels) outwards, the first point where the
amplitude reaches :data:`PHASE_LOBE` of its largest value must be positive. The amplitude is
ψ(x) in 1D and r^{(d−1)/2} R(r) in radial channels (the function whose square is the
probability density in r). For a converged bound state that lobe is the first extremum of the
wavefunction from the inner / left side; the 1 % floor skips the tiny ripples a truncated
oscillator basis leaves in the classically forbidden tails, so the sign does not flip when the
basis size changes. Off-diagonal matrix elements and overlaps are then reproducible in sign.
"""

from __future__ import annotations

import dataclasses
import math
import re
import warnings
from collections.abc import Callable

import numpy as np

from ..basis import HermiteBasis
from ..errors import ConvergenceWarning, InputError

__all__ = ["PHASE_LOBE", "expectation", "fix_phases", "matrix_element", "operator_matrix",
           "phase_signs", "rms_radius", "wavefunction"]

PHASE_LOBE = 1e-2  # a lobe counts for the phase once it reaches 1 % of the largest amplitude
_GRID_PER_STATE = 20  # phase grid points per basis state: ≥ 10 points per half-wave of φ_{N−1}
_GRID_EXTRA = 400

_POWER = re.compile(r"^\s*([xr])\s*(?:(?:\*\*|\^)\s*(\d+))?\s*$")


def _is_radial(spec) -> bool:
    return not isinstance(spec.basis, HermiteBasis)


def _dimension(spec) -> int:
    return int(spec.channel.dimension)


def basis_extent(basis) -> tuple[float, float]:
    """Coordinate range a basis reaches: its outermost classical turning point plus 3 b."""
    b, n = basis.length, basis.size
    if isinstance(basis, HermiteBasis):
        top = b * (math.sqrt(2.0 * n + 1.0) + 3.0)
        return basis.center - top, basis.center + top
    return 0.0, b * (math.sqrt(4.0 * n + 2.0 * basis.alpha + 2.0) + 3.0)


def _amplitudes(spec, vectors: np.ndarray) -> np.ndarray:
    lo, hi = basis_extent(spec.basis)
    points = _GRID_PER_STATE * spec.basis.size + _GRID_EXTRA
    x = np.linspace(lo, hi, points)
    if _is_radial(spec):
        x = x[1:]
    amp = vectors.T @ spec.basis.functions(x)
    if _is_radial(spec):
        amp = amp * x[None, :] ** (0.5 * (_dimension(spec) - 1))
    return amp


def phase_signs(spec) -> np.ndarray:
    """Signs (±1 per level) that bring the eigenvectors to the phase convention of this module.

    Parameters
    ----------
    spec : Spectrum

    Returns
    -------
    ndarray of float, shape (levels,)
    """
    amp = _amplitudes(spec, spec.vectors)
    peak = np.max(np.abs(amp), axis=1, keepdims=True)
    first = np.argmax(np.abs(amp) >= PHASE_LOBE * peak, axis=1)
    signs = np.sign(amp[np.arange(amp.shape[0]), first])
    signs[signs == 0] = 1.0  # an all-zero vector (never from an eigensolver) keeps its sign
    return signs


def fix_phases(spec):
    """The spectrum with every eigenvector in the phase convention of this module.

    Idempotent; the energies and everything else are unchanged.
    """
    signs = phase_signs(spec)
    if np.all(signs > 0):
        return spec
    return dataclasses.replace(spec, vectors=spec.vectors * signs[None, :])


def wavefunction(spec, k: int, grid, reduced: bool = False) -> np.ndarray:
    """Wavefunction of level ``k`` on ``grid``, in the phase convention of this module.

    Parameters
    ----------
    spec : Spectrum
    k
        Level index (0 = lowest level of the channel).
    grid
        Coordinates: x in 1D, r ≥ 0 in radial channels, in the unit system's length unit.
    reduced
        Radial channels only: return u(r) = r^{(d−1)/2} R(r) (u = rR in 3D) instead of R(r).

    Returns
    -------
    ndarray, same length as ``grid``
        1D: ψ(x) with ∫|ψ|² dx = 1. Radial: R(r) with ∫|R|² r^{d−1} dr = 1 (the angular part
        Y_lm, or e^{imφ}/√(2π) in 2D, excluded), or u(r) with ∫|u|² dr = 1. In a 1D parity
        channel the functions live on the half line, ∫_0^∞ |R|² dr = 1: the wavefunction on
        the whole line is R(|x|)/√2 (even) or sign(x) R(|x|)/√2 (odd).
    """
    k = _level(spec, k, "k")
    x = np.asarray(grid, dtype=float)
    if x.ndim != 1:
        raise InputError(f"grid: expected a one-dimensional array of coordinates; got shape "
                         f"{x.shape}")
    radial = _is_radial(spec)
    if radial and np.any(x < 0):
        raise InputError(f"grid: radial coordinates must be >= 0; got {float(x.min())!r}")
    if reduced and not radial:
        raise InputError("reduced: only radial channels have a reduced radial function u(r)")
    v = fix_phases(spec).vectors[:, k]
    psi = v @ spec.basis.functions(x)
    if reduced:
        psi = psi * x ** (0.5 * (_dimension(spec) - 1))
    return psi


def _level(spec, k, name: str) -> int:
    count = spec.vectors.shape[1]
    if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or not 0 <= k < count:
        raise InputError(f"{name}: must be a level index 0 … {count - 1}; got {k!r}")
    return int(k)


def parse_power(spec, op: str) -> tuple[str, int]:
    """Read ``"x"``, ``"x**2"``, ``"r^3"`` …; check the variable suits the channel."""
    m = _POWER.match(op) if isinstance(op, str) else None
    if m is None:
        raise InputError(f"op: expected a power of the coordinate such as 'x**2' or 'r**2', "
                         f"or a function of the coordinate; got {op!r}")
    var, k = m.group(1), int(m.group(2) or 1)
    if not _is_radial(spec) and var == "r":
        raise InputError(f"op: {op!r} — the 1D basis without symmetry has coordinate x; use "
                         f"'x**{k}' (or a function such as lambda x: abs(x)**{k})")
    if _is_radial(spec) and _dimension(spec) > 1 and var == "x":
        raise InputError(f"op: {op!r} — a central channel in {_dimension(spec)}D has the "
                         f"radial coordinate r; use 'r**{k}'")
    return var, k


def _basis_power(spec, var: str, k: int) -> np.ndarray:
    """Matrix of the coordinate power in the spectrum's basis, in length^k (exact)."""
    basis = spec.basis
    b = basis.length
    n = basis.size
    if not _is_radial(spec):
        # x^k = Σ_m C(k, m) x₀^{k−m} b^m ξ^m with ξ = (x − x₀)/b, ξ^m exact and banded
        x0 = basis.center
        out = np.zeros((n, n))
        for m in range(k + 1):
            c = math.comb(k, m) * x0 ** (k - m) * b**m
            if c:
                out += c * (basis.coordinate_power(m) if m else np.eye(n))
        return out
    if var == "x" and k % 2:  # 1D parity channel: an odd power of x within one parity is 0
        return np.zeros((n, n))
    if k % 2 == 0:
        return b**k * basis.coordinate_power(k)
    from .integrals import radial_power_matrix

    return radial_power_matrix(basis, basis, k)


def operator_matrix(spec, op: str | Callable[[np.ndarray], np.ndarray], kind: str = "panels",
                    *, warn: bool = True) -> np.ndarray:
    """Matrix ⟨i|op|j⟩ between all levels of a spectrum (phase convention of this module).

    Parameters
    ----------
    spec : Spectrum
    op
        A power of the coordinate, ``"x"``, ``"x**2"`` (1D) or ``"r**3"`` (radial channels;
        in a 1D parity channel ``"x**k"`` is x^k on the whole line, ``"r**k"`` is |x|^k), or a
        vectorised function f(coordinate).
    kind
        Quadrature of a function ``op`` (see ``basis.matrix``): ``"panels"`` (composite
        Gauss–Legendre, robust for kinks) or ``"weight"`` (the basis' Gauss rule, fastest for
        analytic functions). Not used for powers.
    warn
        Warn when some levels lie above the threshold (see Notes).

    Returns
    -------
    ndarray, shape (levels, levels)
        In the unit system's length unit to the power k for powers.

    Notes
    -----
    Powers are exact: x^k from the banded coordinate powers of the Hermite basis (expanded
    about its centre), even powers of r from the banded Laguerre coordinate matrix, odd powers
    of r by a Gauss–Laguerre rule whose weight carries the odd power (exact for the polynomial
    part). Matrix elements involving levels above the threshold (discretised continuum) are
    computed, and a :class:`~anharmony.errors.ConvergenceWarning` says they depend on the basis.
    """
    spec = fix_phases(spec)
    if callable(op):
        if kind not in ("panels", "weight"):
            raise InputError(f"kind: expected 'panels' or 'weight'; got {kind!r}")
        m = spec.basis.matrix(op, kind=kind)
    else:
        var, k = parse_power(spec, op)
        m = _basis_power(spec, var, k)
    if warn:
        _warn_unbound(spec)
    v = spec.vectors
    return v.T @ m @ v


def _warn_unbound(*specs, which: tuple[int, ...] | None = None) -> None:
    """Warn when levels (all, or the indices ``which``) lie above the threshold."""
    for spec in specs:
        above = np.flatnonzero(~spec.bound)
        if which is not None:
            above = np.intersect1d(above, which)
        if above.size:
            names = ", ".join(str(i) for i in above)
            warnings.warn(
                f"{spec.channel.label}: levels {names} lie above the threshold (discretised "
                "continuum); their matrix elements depend on the basis", ConvergenceWarning,
                stacklevel=3)


def matrix_element(spec, op: str | Callable[[np.ndarray], np.ndarray], i: int, j: int,
                   kind: str = "panels") -> float:
    """⟨i|op|j⟩ between levels i and j of one spectrum; see :func:`operator_matrix`."""
    i = _level(spec, i, "i")
    j = _level(spec, j, "j")
    _warn_unbound(spec, which=(i, j))
    return float(operator_matrix(spec, op, kind, warn=False)[i, j])


def expectation(spec, op: str | Callable[[np.ndarray], np.ndarray], kind: str = "panels"
                ) -> np.ndarray:
    """⟨k|op|k⟩ for every level k; see :func:`operator_matrix`."""
    return np.diag(operator_matrix(spec, op, kind)).copy()


def rms_radius(spec, *, warn: bool = True) -> np.ndarray:
    """√⟨r²⟩ of every level (radial channels), √⟨x²⟩ in 1D (x measured from the origin)."""
    op = "x**2" if _dimension(spec) == 1 else "r**2"
    return np.sqrt(np.diag(operator_matrix(spec, op, warn=warn)))
