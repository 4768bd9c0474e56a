"""Floating-point Rayleigh–Schrödinger coefficients to high order.

The energy coefficients of a divergent RS series grow factorially (the 1D quartic oscillator:
|E_k| ~ 3^k Γ(k + ½), past 1e308 near k = 150), and so do the wavefunction corrections ψ_k.
Each E_k and ψ_k is therefore carried as a mantissa (|m| < 1, or a vector whose largest entry
is below 1 in magnitude) times 2^e with an integer exponent e kept apart; every linear
combination in the recursion is formed relative to the largest exponent among its terms, so
nothing overflows at any order and terms that are smaller than the largest by more than the
double range simply underflow to zero, which is harmless.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import mpmath
import numpy as np

from anharmony.errors import DegenerateLevelError, InputError

__all__ = ["ScaledCoefficients", "bands_of", "rs_numeric"]

DEGENERACY_RTOL = 1e-12  # level spacings below this (relative) count as degenerate


@dataclass(frozen=True, eq=False)
class ScaledCoefficients:
    """RS coefficients E_k = mantissas[k] · 2**exponents[k] (exactly as computed).

    Attributes
    ----------
    mantissas : ndarray, shape (K+1,)
        |m_k| in [0.5, 1), or 0.
    exponents : ndarray of int, shape (K+1,)
    level : int
        Index of the reference state in the basis.
    size : int
        Basis size used.
    bandwidth : int or None
        Half-bandwidth of W, None for a dense W.
    vectors, vector_exponents : ndarray or None
        ψ_k = vectors[k] · 2**vector_exponents[k] (intermediate normalisation, components in
        the basis of H_ref), when asked for.
    """

    mantissas: np.ndarray
    exponents: np.ndarray
    level: int
    size: int
    bandwidth: int | None
    vectors: np.ndarray | None = None
    vector_exponents: np.ndarray | None = None

    @property
    def order(self) -> int:
        """Highest order K."""
        return len(self.mantissas) - 1

    def floats(self) -> np.ndarray:
        """E_k as float64; ±inf where |E_k| exceeds the double range."""
        with np.errstate(over="ignore"):
            return np.array(
                [_ldexp_inf(m, int(e)) for m, e in zip(self.mantissas, self.exponents, strict=True)]
            )

    def mp(self) -> list:
        """E_k as :class:`mpmath.mpf` (exact images of the computed values, any size)."""
        return [mpmath.ldexp(mpmath.mpf(float(m)), int(e)) for m, e in
                zip(self.mantissas, self.exponents, strict=True)]

    def log2_abs(self) -> np.ndarray:
        """log2 |E_k| (−inf for zeros), valid beyond the double range."""
        with np.errstate(divide="ignore"):
            return np.log2(np.abs(self.mantissas)) + self.exponents


def _ldexp_inf(m: float, e: int) -> float:
    if m == 0.0:
        return 0.0
    if e > 1100:
        return float(np.copysign(np.inf, m))
    return float(np.ldexp(m, e))


def bands_of(matrix: np.ndarray, bandwidth: int) -> dict[int, np.ndarray]:
    """``bands[d][i] = matrix[i, i + d]`` for |d| ≤ bandwidth (zero-padded to length N)."""
    n = matrix.shape[0]
    out = {}
    for d in range(-bandwidth, bandwidth + 1):
        diag = np.diagonal(matrix, offset=d)
        if not np.any(diag):
            continue
        band = np.zeros(n)
        if d >= 0:
            band[: n - d] = diag
        else:
            band[-d:] = diag
        out[d] = band
    return out


def rs_numeric(
    diagonal: np.ndarray,
    perturbation: np.ndarray,
    level: int,
    order: int,
    *,
    bandwidth: int | None = None,
    vectors: bool = False,
    higher: Mapping[int, np.ndarray] | None = None,
) -> ScaledCoefficients:
    """RS energy coefficients E_0..E_K of one level of H = diag(diagonal) + λ W₁ + Σ λ^k W_k.

    Parameters
    ----------
    diagonal : ndarray, shape (N,)
        Eigenvalues of H_ref, diagonal in the basis.
    perturbation : ndarray, shape (N, N)
        W₁, the part of the perturbation at first order in λ, in the same basis (need not be
        symmetric).
    level : int
        Index n of the reference state.
    order : int
        Highest order K.
    bandwidth : int, optional
        Half-bandwidth h of every W_k: entries with |i − j| > h are taken as zero and ψ_k is
        propagated only on its support n ± k·h. None: dense.
    vectors : bool
        Also return ψ_0..ψ_K.
    higher : mapping, optional
        ``{k: W_k}`` for the powers k ≥ 2 of λ at which the perturbation has parts (a
        perturbation polynomial in λ, :attr:`anharmony.terms.base.Term.order`); arrays of
        shape (N, N). Powers above K do not enter. None (the default): W = λ W₁.

    Returns
    -------
    ScaledCoefficients

    Raises
    ------
    DegenerateLevelError
        If another diagonal entry equals the level's (relative spacing < 1e-12).

    Notes
    -----
    Intermediate normalisation ⟨n|ψ_k⟩ = δ_{k0}, reduced resolvent R = Q/(E_0 − H_ref).
    Collecting the power λ^k of (H_ref + Σ_j λ^j W_j) Σ_m λ^m ψ_m = Σ_j λ^j E_j Σ_m λ^m ψ_m
    gives (E_0 − H_ref) ψ_k = Σ_{j=1}^{k} W_j ψ_{k−j} − Σ_{j=1}^{k} E_j ψ_{k−j}; its
    projection on ⟨n| and its Q-part are

        E_k = Σ_{j=1}^{k} ⟨n|W_j|ψ_{k−j}⟩,
        ψ_k = R [Σ_{j=1}^{k} W_j ψ_{k−j} − Σ_{j=1}^{k−1} E_j ψ_{k−j}]

    (the j = k energy term is E_k |n⟩, which Q removes). With W₁ alone this is the usual
    E_k = ⟨n|W|ψ_{k−1}⟩, ψ_k = R [W ψ_{k−1} − Σ_{j=1}^{k−1} E_j ψ_{k−j}] (e.g. Sakurai,
    *Modern Quantum Mechanics*, §5.1), and it runs the same arithmetic as before `higher`
    existed. Only the powers present cost a product. For banded W_k the result is exact for
    the infinite basis once N ≥ n + (K − 1)·h + 1 (ψ_1..ψ_K exact for N ≥ n + K·h + 1): the
    support of ψ_k grows by at most h per order whichever W_j made it. Cost O(K²·N) for the
    sums plus one banded (or dense) product per order and power of λ present.
    """
    d = np.asarray(diagonal, dtype=float)
    parts = {1: np.asarray(perturbation, dtype=float)}
    for k, wk in (higher or {}).items():
        if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or k < 2:
            raise InputError(f"higher: powers of λ must be integers >= 2 (W₁ is the "
                             f"perturbation argument); got {k!r}")
        if int(k) <= order:
            parts[int(k)] = np.asarray(wk, dtype=float)
    size = d.shape[0]
    for k, wk in parts.items():
        if wk.shape != (size, size):
            raise InputError(f"perturbation at order {k}: expected shape {(size, size)}; got "
                             f"{wk.shape}")
    e0 = d[level]
    gaps = e0 - d
    gaps[level] = np.inf
    close = np.flatnonzero(np.abs(gaps) <= DEGENERACY_RTOL * max(1.0, abs(e0)))
    if close.size:
        raise DegenerateLevelError(
            f"reference level {level} (E_0 = {e0!r}) is degenerate with basis state(s) "
            f"{close.tolist()}; non-degenerate perturbation theory does not apply",
            levels=(level, *close.tolist()),
        )
    inv = 1.0 / gaps
    inv[level] = 0.0
    bands = ({k: bands_of(wk, bandwidth) for k, wk in parts.items()}
             if bandwidth is not None else None)
    h = size if bandwidth is None else bandwidth

    rows = max(order, 1) + (1 if vectors else 0)
    psi = np.zeros((rows, size))
    vexp = np.zeros(rows, dtype=np.int64)
    psi[0, level] = 0.5  # ψ_0 = |n> = 0.5 · 2^1
    vexp[0] = 1
    mant = np.zeros(order + 1)
    expo = np.zeros(order + 1, dtype=np.int64)
    mant[0], expo[0] = np.frexp(e0)
    lo, hi = level, level + 1
    for k in range(1, order + 1):
        r0, r1 = max(0, lo - h), min(size, hi + h)
        # Σ_j W_j ψ_{k-j} on rows r0:r1, scaled by 2^-top_w (top_w: largest exponent of ψ_{k-j})
        powers = [j for j in parts if j <= k]
        top_w = max(int(vexp[k - j]) for j in powers)
        u = np.zeros(r1 - r0)
        for j in powers:
            prev = psi[k - j]
            if bands is None:
                uj = parts[j][r0:r1, lo:hi] @ prev[lo:hi]
            else:
                uj = np.zeros(r1 - r0)
                for off, b in bands[j].items():  # rows i with lo <= i + off < hi
                    a0, a1 = max(r0, lo - off), min(r1, hi - off)
                    if a1 > a0:
                        uj[a0 - r0 : a1 - r0] += b[a0:a1] * prev[a0 + off : a1 + off]
            shift = int(vexp[k - j]) - top_w
            u += uj if shift == 0 else np.ldexp(uj, max(shift, -2000))
        m, e = np.frexp(u[level - r0])  # E_k = Σ_j <n|W_j|ψ_{k-j}>
        mant[k], expo[k] = m, (e + top_w) if m else 0
        if k == order and not vectors:
            break
        # v = Σ_j W_j ψ_{k-j} − Σ_j E_j ψ_{k-j}, all scaled by 2^-top (top = largest exponent)
        alive = mant[1:k] != 0.0
        term_exp = expo[1:k] + vexp[k - 1 : 0 : -1]
        top = max(top_w, int(term_exp[alive].max()) if alive.any() else -(2**62))
        v = np.ldexp(u, top_w - top)
        if alive.any():
            coef = np.where(alive, np.ldexp(mant[1:k], np.maximum(term_exp - top, -2000)), 0.0)
            v -= coef @ psi[k - 1 : 0 : -1, r0:r1]
        y = v * inv[r0:r1]
        big = np.max(np.abs(y)) if y.size else 0.0
        s = int(np.frexp(big)[1]) if big else 0
        psi[k, r0:r1] = np.ldexp(y, -s)
        vexp[k] = top + s
        lo, hi = r0, r1
    return ScaledCoefficients(
        mantissas=mant,
        exponents=expo,
        level=int(level),
        size=int(size),
        bandwidth=bandwidth,
        vectors=psi[: order + 1].copy() if vectors else None,
        vector_exponents=vexp[: order + 1].copy() if vectors else None,
    )
