"""The pencil H(s) = A + s B of one channel: built once, diagonalised per value of s.

:mod:`anharmony.scan` splits a well into the part a scanned parameter multiplies and the rest
(or, for the coupling λ, into H_ref and H − H_ref) and hands the wells here; A and B are kept in
LAPACK band storage where the core's banded solver applies, so each value costs one banded
eigensolve, and its error estimate the eigenvalues of two leading blocks of the same band.

When the terms of a well carry perturbation orders (:attr:`anharmony.terms.base.Term.order`),
the coupling path is the series' own, H(λ) = H_ref + Σ_k λ^k W_k: a polynomial pencil
A + s B + Σ_{k≥2} s^k B_k (:func:`order_pencil`), its matrices built once as well.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy.linalg import eig_banded

from .eigensolvers import (
    BANDED_MAX_RATIO,
    band_eigenvalues,
    band_rounding,
    diagonalize,
    matrix_rounding,
    upper_band,
)
from .errorbars import band_error_estimate, nested_error_estimate
from .hamiltonian import Channel, channel_hamiltonian
from .well import Well

__all__ = ["Pencil", "coupling_pencil", "coupling_threshold", "linear_threshold",
           "order_pencil", "term_pencil"]


class Pencil:
    """H(s) = A + s B (+ Σ_{k≥2} s^k B_k) of one channel, kept banded where the core's solver
    would be.

    ``higher`` maps a power k ≥ 2 to its matrix B_k (a polynomial pencil); without it the
    pencil is linear and :meth:`at` costs one scaled addition.
    """

    def __init__(self, a: np.ndarray, b: np.ndarray, bandwidth: int | None,
                 higher: Mapping[int, np.ndarray] | None = None) -> None:
        n = a.shape[0]
        self.banded = bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * n
        higher = dict(sorted((higher or {}).items()))
        if self.banded:
            self.a, self.b = upper_band(a, bandwidth), upper_band(b, bandwidth)
            self.higher = {k: upper_band(m, bandwidth) for k, m in higher.items()}
        else:
            self.a, self.b = a, b
            self.higher = higher

    @property
    def degree(self) -> int:
        """The highest power of s (1 for a linear pencil)."""
        return max(self.higher, default=1)

    def at(self, s: float) -> np.ndarray:
        """A + s B + Σ s^k B_k (in band storage when banded)."""
        h = self.a + s * self.b
        for k, m in self.higher.items():
            h += s**k * m
        return h

    def levels(self, h: np.ndarray, size: int, count: int, vectors: bool = False
               ) -> tuple[np.ndarray, np.ndarray | None]:
        """Lowest ``count`` eigenvalues (NaN-padded) of the leading size×size block of ``h``,
        and the eigenvectors when asked for."""
        out = np.full(count, np.nan)
        k = min(count, size)
        if not self.banded:
            e, v = diagonalize(np.ascontiguousarray(h[:size, :size]), k, None)
            out[:k] = e[:k]
            return out, (v if vectors else None)
        # the leading block of an upper-banded matrix is its first `size` columns;
        # A and B are finite by construction: skip scipy's finiteness scan per value
        if vectors:
            e, v = eig_banded(h[:, :size], lower=False, select="i", select_range=(0, k - 1),
                              check_finite=False)
            out[:k] = e[:k]
            return out, v
        out[:k] = band_eigenvalues(h, size, k)[:k]
        return out, None

    def error_estimate(self, h: np.ndarray, energies: np.ndarray, parity_pairs: bool = False
                       ) -> tuple[np.ndarray, float]:
        """:func:`~anharmony.spectrum.nested_error_estimate` of ``h`` (as :meth:`at` gives it)
        for its lowest levels ``energies``, and the rounding floor eps·‖H‖₁ it includes."""
        if self.banded:
            rounding = band_rounding(h)
            return band_error_estimate(h, energies, rounding, parity_pairs), rounding
        rounding = matrix_rounding(h)
        return nested_error_estimate(h, energies, None, rounding, parity_pairs), rounding


def _bandwidth(*bws: int | None) -> int | None:
    return None if any(b is None for b in bws) else max(bws)  # type: ignore[type-var]


def coupling_pencil(well: Well, reference_well: Well, channel: Channel, size: int, b: float,
                    center: float) -> tuple[Pencil, float, float, Any]:
    """H_ref + λ (H − H_ref): A = T + V_ref, B = V + V_so − V_ref.

    Returns the pencil, the threshold of the physical well, NaN, and the basis.
    """
    full = channel_hamiltonian(well, channel, size, b, center)
    href = channel_hamiltonian(reference_well, channel, size, b, center)
    a = full.kinetic + href.potential
    bmat = full.potential + full.spin_orbit - href.potential
    thr = float(well.threshold(channel.dimension, symmetric=channel.l is not None))
    return Pencil(a, bmat, _bandwidth(full.bandwidth, href.bandwidth)), thr, math.nan, full.basis


def order_pencil(parts: Mapping[int, Well], reference_well: Well, channel: Channel, size: int,
                 b: float, center: float) -> tuple[Pencil, Any]:
    """H_ref + λ W₁ + Σ_{k≥2} λ^k W_k: A = T + V_ref, B₁ = V₁ + V_so,₁ − V_ref, B_k = V_k + V_so,k.

    ``parts`` are the terms of the well grouped by perturbation order (:meth:`Well.by_order`;
    a missing order 1 is an empty part), the series' own split
    (:func:`anharmony.series.series`). Returns the pencil and the basis.
    """
    href = channel_hamiltonian(reference_well, channel, size, b, center)
    mats = {k: channel_hamiltonian(part, channel, size, b, center) for k, part in parts.items()}
    a = href.total
    bmat = -href.potential
    if 1 in mats:
        bmat = bmat + mats[1].potential + mats[1].spin_orbit
    higher = {k: m.potential + m.spin_orbit for k, m in mats.items() if k != 1}
    bandwidth = _bandwidth(href.bandwidth, *(m.bandwidth for m in mats.values()))
    return Pencil(a, bmat, bandwidth, higher), href.basis


def term_pencil(unit_well: Well, rest_well: Well | None, channel: Channel, size: int, b: float,
                center: float) -> tuple[Pencil, float, float, Any]:
    """H(s) = H_rest + s V_unit, ``unit_well`` the scanned term with its parameter set to 1.

    Returns the pencil, the thresholds of the rest and of the unit term, and the basis.
    """
    radial = channel.l is not None
    mb = channel_hamiltonian(unit_well, channel, size, b, center)
    if rest_well is not None:
        rest = channel_hamiltonian(rest_well, channel, size, b, center)
        a, bw_a = rest.total, rest.bandwidth
        thr_rest = float(rest_well.threshold(channel.dimension, symmetric=radial))
    else:
        a, bw_a = mb.kinetic, (1 if radial else 2)
        thr_rest = 0.0
    bmat = mb.potential + mb.spin_orbit
    thr_unit = float(unit_well.threshold(channel.dimension, symmetric=radial))
    return Pencil(a, bmat, _bandwidth(bw_a, mb.bandwidth)), thr_rest, thr_unit, mb.basis


def coupling_threshold(thr: float, lam: float) -> float:
    """Threshold of λ V + (1 − λ) V_ref from that of V (V_ref confines)."""
    if lam == 1.0:
        return thr
    if lam < 1.0:
        return math.inf  # (1 − λ) V_ref confines
    # λ > 1: −(λ − 1) V_ref wins at large r unless V itself grows without bound
    return math.inf if thr == math.inf else -math.inf


def linear_threshold(thr_rest: float, thr_unit: float, s: float) -> float:
    """lim V of A + s B at infinity from the limits of its two parts (NaN if undecided)."""
    if s == 0.0 or thr_unit == 0.0:
        return thr_rest
    return float(thr_rest) + float(s) * float(thr_unit)  # Python floats: inf - inf is nan
