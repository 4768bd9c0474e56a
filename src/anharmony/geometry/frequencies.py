"""Harmonic frequencies of a well at its minimum, from the numerical Hessian of V.

The minimum is found by BFGS from ``start`` (default the origin) and polished by Newton steps
on finite-difference derivatives. The Hessian uses central differences with steps of 5% of the
local oscillator length in each direction, Richardson-extrapolated (error O(h⁴)); its
eigenvalues k_i give ħω_i = √(2 (ħ²/2m) k_i) = ħ√(k_i/m), its eigenvectors the principal axes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from ..errors import InputError
from .potential import cartesian_value

__all__ = ["TrapFrequencies", "hessian", "trap_frequencies_of"]

_STEP = 0.05  # finite-difference step, in units of the local oscillator length


@dataclass(frozen=True)
class TrapFrequencies:
    """Principal harmonic frequencies of a well at its minimum.

    Attributes
    ----------
    frequencies : ndarray
        ħω_i along the principal axes, ascending, in the energy unit.
    axes : ndarray
        Unit vectors of the principal axes, one per column (``axes[:, i]`` goes with ω_i).
    minimum : ndarray
        Position of the minimum.
    value : float
        V at the minimum.
    hessian : ndarray
        ∂²V/∂x_i∂x_j there.
    """

    frequencies: np.ndarray
    axes: np.ndarray
    minimum: np.ndarray
    value: float
    hessian: np.ndarray


def _v(well, p: np.ndarray) -> float:
    return float(cartesian_value(well, [np.array(c) for c in p]))


def hessian(well, point: np.ndarray, steps: np.ndarray) -> np.ndarray:
    """Central-difference Hessian with steps h and h/2, Richardson-combined."""

    def once(h):
        d = len(point)
        out = np.empty((d, d))
        v0 = _v(well, point)
        for i in range(d):
            e = np.zeros(d)
            e[i] = h[i]
            out[i, i] = (_v(well, point + e) - 2.0 * v0 + _v(well, point - e)) / h[i] ** 2
            for j in range(i):
                f = np.zeros(d)
                f[j] = h[j]
                out[i, j] = out[j, i] = (_v(well, point + e + f) - _v(well, point + e - f)
                                         - _v(well, point - e + f)
                                         + _v(well, point - e - f)) / (4.0 * h[i] * h[j])
        return out

    return (4.0 * once(steps / 2.0) - once(steps)) / 3.0


def _gradient(well, point, steps):
    g = np.empty(len(point))
    for i in range(len(point)):
        e = np.zeros(len(point))
        e[i] = steps[i]
        g[i] = (_v(well, point + e) - _v(well, point - e)) / (2.0 * steps[i])
    return g


def trap_frequencies_of(well, dimension: int, hbar2_2m: float,
                        start: np.ndarray | None = None) -> TrapFrequencies:
    """See :func:`anharmony.geometry.trap_frequencies` (this one trusts its inputs)."""
    x = np.zeros(dimension) if start is None else np.asarray(start, dtype=float)
    scale = well.scale
    res = minimize(lambda p: _v(well, p), x, method="BFGS",
                   options={"gtol": 1e-12 * max(1.0, abs(_v(well, x))) / scale})
    x = np.asarray(res.x, dtype=float)
    steps = np.full(dimension, 1e-3 * scale)
    for _ in range(4):  # local oscillator lengths set the steps, then Newton polishes x
        h = hessian(well, x, steps)
        diag = np.abs(np.diag(h))
        if np.any(diag == 0):
            break
        b = np.sqrt(2.0 * hbar2_2m / np.sqrt(2.0 * hbar2_2m * diag))
        steps = _STEP * b
        try:
            dx = np.linalg.solve(hessian(well, x, steps), _gradient(well, x, steps / 10.0))
        except np.linalg.LinAlgError:
            break
        if np.all(np.abs(dx) <= 1e-12 * b):
            break
        x = x - dx
    h = hessian(well, x, steps)
    k, vecs = np.linalg.eigh(0.5 * (h + h.T))
    if not np.all(k > 0):
        raise InputError(f"the well has no minimum near {np.round(x, 6).tolist()} (Hessian "
                         f"eigenvalues {k.tolist()}): it holds nothing there — a tilt stronger "
                         "than the trap, say; or, from Python, give start= nearer to a minimum")
    hw = np.sqrt(2.0 * hbar2_2m * k)
    for i in range(vecs.shape[1]):  # sign convention: largest component positive
        if vecs[np.argmax(np.abs(vecs[:, i])), i] < 0:
            vecs[:, i] = -vecs[:, i]
    return TrapFrequencies(hw, vecs, x, _v(well, x), h)
