"""Integrals between the levels of two spectra: overlaps, Franck–Condon factors, transitions.

The two spectra may use different oscillator bases (another length b, another centre, another
effective λ). The product of a basis function of each is a polynomial times one Gaussian, so a
Gauss rule built for that Gaussian integrates every product exactly:

- 1D: φ_m^a φ_n^b ∝ poly(x) exp(−(x − x_c)²/2σ²), 1/σ² = 1/b_a² + 1/b_b², and
  x_c = σ² (x_a/b_a² + x_b/b_b²): Gauss–Hermite in ξ = (x − x_c)/(σ√2).
- radial: R_m^a R_n^b r^{k+d−1} ∝ t^α poly(t) e^{−t} with t = r²/s², 1/s² = 1/2b_a² + 1/2b_b²
  and α = (λ_a + λ_b + k + d)/2 − 1: generalised Gauss–Laguerre, exact for any power r^k
  (odd k and different l included).

The polynomial has degree N_a + N_b − 2 (+ k in 1D), so ⌈(N_a + N_b + k)/2⌉ points suffice.
Nodes and weights come from :class:`~anharmony.basis.OrthogonalFamily` with the weights kept in
log form (no underflow at far nodes). A function that is not a polynomial is integrated with
the same rule, grown until the matrix stops changing.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..basis import HermiteBasis
from ..errors import InputError
from .integrals import (
    _function_matrix,
    _hermite_power_matrix,
    radial_power_matrix,
)
from .levels import _warn_unbound, fix_phases

__all__ = ["FranckCondon", "franck_condon", "overlaps", "radial_power_matrix",
           "transition_matrix"]

def _check_pair(spec_a, spec_b, name: str) -> None:
    ha = isinstance(spec_a.basis, HermiteBasis)
    hb = isinstance(spec_b.basis, HermiteBasis)
    if ha != hb:
        raise InputError(f"{name}: the two spectra must both be 1D without symmetry or both "
                         f"radial channels; got {spec_a.channel.label!r} and "
                         f"{spec_b.channel.label!r}")
    if spec_a.channel.dimension != spec_b.channel.dimension:
        raise InputError(f"{name}: the two spectra have dimensions {spec_a.channel.dimension} "
                         f"and {spec_b.channel.dimension}")
    if spec_a.units != spec_b.units:
        raise InputError(f"{name}: the two spectra are in different unit systems "
                         f"({spec_a.units.name!r} and {spec_b.units.name!r}); solve both in one")


def overlaps(spec_a, spec_b) -> np.ndarray:
    """Overlap matrix ⟨a_i|b_j⟩ of the levels of two wells (rows: levels of ``spec_a``).

    Parameters
    ----------
    spec_a, spec_b : Spectrum
        Both 1D without symmetry, or the same radial channel (same d, l and j). The bases may
        differ in length, centre and effective λ.

    Returns
    -------
    ndarray, shape (levels_a, levels_b)
        Exact for the truncated expansions (see the module notes); eigenvectors in the phase
        convention of :mod:`anharmony.observables.levels`.
    """
    _check_pair(spec_a, spec_b, "spec_b")
    ca, cb = spec_a.channel, spec_b.channel
    if (ca.l, ca.j) != (cb.l, cb.j):
        raise InputError(f"spec_b: overlaps need one channel; got {ca.label!r} and "
                         f"{cb.label!r} (states of different l or j are orthogonal; use "
                         "transition_matrix for a radial integral between channels)")
    a, b = fix_phases(spec_a), fix_phases(spec_b)
    _warn_unbound(a, b)
    m = (_hermite_power_matrix(a.basis, b.basis, 0) if isinstance(a.basis, HermiteBasis)
         else radial_power_matrix(a.basis, b.basis, 0))
    return a.vectors.T @ m @ b.vectors


def transition_matrix(spec_a, spec_b, op: str | int | Callable[[np.ndarray], np.ndarray]
                      ) -> np.ndarray:
    """⟨a_i|f|b_j⟩ between the levels of two wells, f a function of the coordinate.

    Parameters
    ----------
    spec_a, spec_b : Spectrum
        Both 1D without symmetry, or radial channels of one dimension (l may differ: then this
        is the radial integral ∫ R_a f R_b r^{d−1} dr, without angular factors).
    op
        A power ``"x**k"`` / ``"r**k"`` (or the integer k), exact (between 1D parity
        channels ``"x**k"`` is x^k on the whole line, ``"r**k"`` is |x|^k); or a smooth vectorised
        function f (a dipole function μ(x)), integrated by the joint Gauss rule grown until
        the matrix settles to :data:`PAIR_RTOL`.

    Returns
    -------
    ndarray, shape (levels_a, levels_b)
    """
    _check_pair(spec_a, spec_b, "spec_b")
    a, b = fix_phases(spec_a), fix_phases(spec_b)
    hermite = isinstance(a.basis, HermiteBasis)
    if callable(op):
        m = _function_matrix(a.basis, b.basis, op)
    else:
        var, k = _power_of(a, op)
        if hermite:
            m = _hermite_power_matrix(a.basis, b.basis, k)
        elif var == "x" and (a.channel.l + b.channel.l + k) % 2:
            m = np.zeros((a.basis.size, b.basis.size))  # 1D parity: x^k has parity (−1)^k
        else:
            m = radial_power_matrix(a.basis, b.basis, k)
    _warn_unbound(a, b)
    return a.vectors.T @ m @ b.vectors


def _power_of(spec, op) -> tuple[str, int]:
    if isinstance(op, (int, np.integer)) and not isinstance(op, bool) and op >= 0:
        return ("x" if spec.channel.dimension == 1 else "r"), int(op)
    from .levels import parse_power

    return parse_power(spec, op)


@dataclass(frozen=True)
class FranckCondon:
    """Franck–Condon factors of a band system.

    Attributes
    ----------
    overlaps : ndarray, shape (upper levels, lower levels)
        ⟨v′|v″⟩, rows v′ of the upper well.
    factors : ndarray
        |⟨v′|v″⟩|².
    sums : ndarray, shape (lower levels,)
        Σ_{v′} |⟨v′|v″⟩|² over the upper levels computed, for each v″: 1 when those levels
        exhaust the lower state, less when part of it projects on higher or unbound levels.
    """

    overlaps: np.ndarray
    factors: np.ndarray
    sums: np.ndarray


def franck_condon(upper, lower) -> FranckCondon:
    """Franck–Condon factors |⟨v′|v″⟩|² between the levels of two wells.

    Parameters
    ----------
    upper, lower : Spectrum
        Levels v′ (rows) and v″ (columns); as for :func:`overlaps`.
    """
    s = overlaps(upper, lower)
    f = s * s
    return FranckCondon(overlaps=s, factors=f, sums=f.sum(axis=0))
