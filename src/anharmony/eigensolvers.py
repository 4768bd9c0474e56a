"""Eigensolvers of the core: the lowest eigenpairs of a symmetric matrix, dense or banded,
and the rounding floor eps·‖H‖₁ of its eigenvalues."""

from __future__ import annotations

import numpy as np
from scipy.linalg import eig_banded, eigh, get_lapack_funcs

__all__ = ["BANDED_MAX_RATIO", "band_eigenvalues", "band_rounding", "diagonalize",
           "matrix_rounding", "upper_band"]

BANDED_MAX_RATIO = 0.125  # use the banded solver when half-bandwidth ≤ this · N
ROUNDING_WARN = 1e-9  # warn when eps·‖H‖₁ exceeds this fraction of the energy scale


def upper_band(h: np.ndarray, bandwidth: int) -> np.ndarray:
    """LAPACK upper band storage of a symmetric matrix: ab[u + i − j, j] = h[i, j]."""
    u, n = bandwidth, h.shape[0]
    ab = np.zeros((u + 1, n))
    for d in range(u + 1):
        ab[u - d, d:] = np.diagonal(h, d)
    return ab


def diagonalize(h: np.ndarray, levels: int, bandwidth: int | None = None
                ) -> tuple[np.ndarray, np.ndarray]:
    """Lowest ``levels`` eigenpairs of a symmetric matrix (banded solver where it pays)."""
    n = h.shape[0]
    levels = min(levels, n)
    if bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * n:
        return eig_banded(upper_band(h, bandwidth), lower=False, select="i",
                          select_range=(0, levels - 1))
    return eigh(h, subset_by_index=(0, levels - 1), driver="evr")


def matrix_rounding(h: np.ndarray) -> float:
    """eps · ‖H‖₁, the absolute accuracy floor of the eigenvalues of a dense matrix."""
    return float(np.finfo(float).eps * np.max(np.sum(np.abs(h), axis=0)))


def band_rounding(band: np.ndarray) -> float:
    """eps · ‖H‖₁ of a symmetric matrix in upper band storage (the column sums of |H|)."""
    u = band.shape[0] - 1
    a = np.abs(band)
    cols = a.sum(axis=0)  # the upper triangle and the diagonal of each column
    for d in range(1, u + 1):  # H[j + d, j] = H[j, j + d] = band[u − d, j + d]
        cols[:-d] += a[u - d, d:]
    return float(np.finfo(float).eps * np.max(cols))


_SBEVD = get_lapack_funcs(("sbevd",), (np.zeros((1, 1)),))[0]
ALL_LEVELS_ROWS = 24  # banded, eigenvalues only: all of them (sbevd) beat a selection (sbevx)
# below about 24 rows per wanted level (measured on N = 50…800: RESULTS.md)


def band_eigenvalues(band: np.ndarray, m: int, top: int) -> np.ndarray:
    """Lowest ``top`` eigenvalues of the leading m × m block of a matrix in upper band
    storage (the block's band is the first m columns)."""
    block = band[:, :m]
    if m > ALL_LEVELS_ROWS * top:
        return eig_banded(block, lower=False, eigvals_only=True, select="i",
                          select_range=(0, top - 1), check_finite=False)
    w, _, info = _SBEVD(block, compute_v=0, lower=0, overwrite_ab=0)
    if info != 0:
        raise np.linalg.LinAlgError(f"the banded eigensolver (sbevd) failed, info = {info}")
    return w[:top]
