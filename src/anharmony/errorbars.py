"""A-posteriori error bars of the lowest Ritz values from nested sub-blocks of the same
matrix (:func:`nested_error_estimate`), dense or in band storage."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy.linalg import eigh

from .eigensolvers import BANDED_MAX_RATIO, band_eigenvalues, upper_band

__all__ = ["band_error_estimate", "nested_error_estimate", "nested_sizes", "window_floor"]

ESTIMATE_WINDOW = 0.25  # nested sub-blocks N − q, N − 2q with q = N/4 (cost ≈ 0.55 eigvalsh)
ESTIMATE_SAFETY = 12.0  # factor on the extrapolated remainder (measured: see RESULTS.md)
ESTIMATE_RATIO_CAP = 0.9  # convergence ratio per window assumed at most this
ESTIMATE_FLOOR = 0.05  # remainder never below this fraction of the last difference …
ESTIMATE_FLOOR_STATES = 8  # … for windows of at most this many states (of the level's parity
ESTIMATE_FLOOR_POWER = 4.0  # block); above, the floor falls as (8/q)⁴ (RESULTS.md, 2026-12-04 c)
ESTIMATE_SETTLED = 0.1  # … for levels whose last change d₁ is below this × the level spacing
DENSE_ALL_ROWS = 12  # dense, eigenvalues only: all of them (syev) beat a selection (syevr)
# below about 12 rows per wanted level (measured on Woods–Saxon and Morse blocks, m = 30…300:
# benchmarks/RESULTS.md, 2026-12-04)


def nested_error_estimate(h: np.ndarray, energies: np.ndarray,
                          bandwidth: int | None = None, rounding: float = 0.0,
                          parity_pairs: bool = False) -> np.ndarray:
    """A-posteriori error bar of the lowest Ritz values of ``h`` from its nested sub-blocks.

    Parameters
    ----------
    h
        The N × N matrix (its leading blocks are the smaller bases of the same length).
    energies
        Its lowest eigenvalues E_k(N), ascending.
    bandwidth
        Half-bandwidth for the banded solver, or ``None``.
    rounding
        Accuracy floor eps·‖H‖₁, added to every estimate.
    parity_pairs
        Drop an even number of states (1D basis without symmetry: even and odd states
        alternate).

    Returns
    -------
    ndarray
        err_k ≥ 0; ``inf`` where the sub-blocks are too small to hold level k.

    Notes
    -----
    With q = N/4, the leading blocks N − q and N − 2q give the differences
    d₁ = E(N − q) − E(N) and d₀ = E(N − 2q) − E(N − q) (both ≥ 0 by Cauchy interlacing, the
    Hylleraas–Undheim–MacDonald theorem). For convergence by a ratio r = d₁/d₀ per window the
    remainder is d₁ r/(1 − r) (Aitken's Δ² extrapolation; A. C. Aitken, Proc. R. Soc. Edinb.
    46, 289 (1926)); the estimate is that remainder times ``ESTIMATE_SAFETY``, with r capped
    at ``ESTIMATE_RATIO_CAP``. The remainder is never taken below ``ESTIMATE_FLOOR`` · d₁
    while a window holds at most ``ESTIMATE_FLOOR_STATES`` states of the level's parity
    block (q, or q/2 on a line whose matrix has no even–odd elements): over so few states
    the ratio of one window says little about the next (measured: a level can converge by
    1e-2 per window twice and then by 0.5). Over longer windows the ratio is steadier and the
    floor falls as (8/q)⁴, so fast convergence (Morse at N = 80: r ≈ 1e-3) is sharpened —
    for settled levels only (d₁ below ``ESTIMATE_SETTLED`` of the distance to a neighbouring
    level): a level still entering the basis has a large d₀ because the N − 2q block barely
    holds it, and r is small for that reason (Morse levels at the threshold, N = 60).
    Where the differences grow (d₁ > d₀: no regular convergence yet) r is the mean ratio
    √(d₁/d₋₁) over two windows, from a third block N − 3q (solved only then; cost
    (¼)³) where it holds the level and d₋₁ > d₁, else the cap. The sub-blocks need
    eigenvalues only: the cost is ~(¾)³ + (½)³ ≈ 0.55 of an eigenvalue solve at N. The
    constants were chosen on measured ratios to the true error (benchmarks/RESULTS.md,
    tests/test_error_estimates.py, with hold-out wells): it bounds the error on smooth
    convergence and overestimates by 1.6–300× there (most within 100×; short windows whose
    floor binds, such as the quartic at N ≤ 32, up to ~800×). It can fall under where a
    slow algebraic tail lies below a fast start (Woods–Saxon 1p₁/₂ at N = 40, error
    1.9e-10 MeV: at the same length it falls only as N^−2.4 up to N = 100, presumably from
    the well's part odd in r at r = 0) or where a level is still entering the basis; the
    phase-space count (:func:`bound_count_estimate`) and ``converge`` are the second checks
    there.
    """
    sizes = nested_sizes(h.shape[0], parity_pairs)
    banded = bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * sizes[0]
    band = upper_band(h, bandwidth) if banded else None  # a leading block: its first columns

    def levels_of(m: int, top: int) -> np.ndarray:
        if band is not None and bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * m:
            return band_eigenvalues(band, m, top)
        block = np.ascontiguousarray(h[:m, :m])
        if m < DENSE_ALL_ROWS * top:  # all eigenvalues (syev: QR on the tridiagonal form)
            return eigh(block, eigvals_only=True, driver="ev", overwrite_a=True,
                        check_finite=False)[:top]
        return eigh(block, eigvals_only=True, subset_by_index=(0, top - 1), driver="evr",
                    overwrite_a=True, check_finite=False)

    split = parity_pairs and not np.any(np.abs(h[0::2, 1::2]) > rounding)
    return _nested_rule(energies, levels_of, sizes, rounding, split)


def nested_sizes(n: int, parity_pairs: bool = False) -> tuple[int, int]:
    """The sub-block sizes N − q, N − 2q of :func:`nested_error_estimate` (q = N/4; even q for
    ``parity_pairs``)."""
    q = max(1, round(ESTIMATE_WINDOW * n))
    if parity_pairs:
        q = 2 * max(1, round(ESTIMATE_WINDOW * n / 2))
    return n - q, n - 2 * q


def _padded(levels_of: Callable[[int, int], np.ndarray], m: int, k: int) -> np.ndarray:
    """The lowest k eigenvalues of the leading m-block, ``inf`` where it has fewer."""
    out = np.full(k, np.inf)
    if m >= 1:
        top = min(k, m)
        out[:top] = levels_of(m, top)[:top]
    return out


def window_floor(states: float) -> float:
    """The floor of the remainder, as a fraction of d₁, for windows of ``states`` states of
    the level's parity block (:func:`nested_error_estimate`)."""
    return ESTIMATE_FLOOR * min(1.0, (ESTIMATE_FLOOR_STATES / states) ** ESTIMATE_FLOOR_POWER)


def _nested_rule(energies: np.ndarray, levels_of: Callable[[int, int], np.ndarray],
                 sizes: tuple[int, int], rounding: float, split: bool = False) -> np.ndarray:
    """The estimate of :func:`nested_error_estimate` from E(N) and the sub-blocks' levels
    (``levels_of(m, top)``: the lowest ``top`` eigenvalues of the leading m-block); ``split``:
    even and odd states do not couple (a window holds q/2 states of each parity)."""
    k = len(energies)
    e1 = _padded(levels_of, sizes[0], k)
    with np.errstate(invalid="ignore", over="ignore"):
        # differences within the eigensolvers' rounding (a few eps·‖H‖) carry no information
        d1 = np.maximum(e1 - energies - 2.0 * rounding, 0.0)
    if not np.any(d1 != 0.0):  # no level changed beyond rounding (e1 finite: d₁ = 0): the
        # remainder d₁·(…) is 0 whatever the second block holds, so it is not solved
        return np.full(k, rounding)
    e2 = _padded(levels_of, sizes[1], k)
    cap = ESTIMATE_RATIO_CAP
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        d0 = np.maximum(e2 - e1 - 2.0 * rounding, 0.0)
        r = d1 / d0  # 0/0, inf/inf: nan; x/0: inf — both taken as the cap below
        grown = r >= 1.0  # differences growing (finite d₀ > 0, d₁ ≥ d₀)
        if grown.any():  # the mean ratio of two windows, if a third block N − 3q holds it
            e3 = _padded(levels_of, 2 * sizes[1] - sizes[0], k)
            dm = np.maximum(e3 - e2 - 2.0 * rounding, 0.0)
            r = np.where(grown & (dm > d1) & (dm < np.inf), np.sqrt(d1 / dm), r)
        r = np.where(r < cap, r, cap)  # nan → cap as well
        # the lower floor of long windows only for levels that moved by less than
        # ESTIMATE_SETTLED of the distance to a neighbouring level in the last window: a level
        # still entering the basis has a large d₀ for that reason, not by fast convergence
        q = sizes[0] - sizes[1]
        floor = np.full(k, window_floor(q / 2 if split else q))
        if k > 1:
            near = ESTIMATE_SETTLED * np.diff(energies)
            floor[:-1][d1[:-1] >= near] = ESTIMATE_FLOOR
            floor[1:][d1[1:] >= near] = ESTIMATE_FLOOR
        err = ESTIMATE_SAFETY * d1 * np.maximum(r / (1.0 - r), floor) + rounding
    err[~np.isfinite(e1)] = np.inf
    # two-window extrapolation needs the smaller block: with d₁ only, no sharpening
    only1 = np.isfinite(e1) & ~np.isfinite(e2)
    err[only1] = ESTIMATE_SAFETY * cap / (1 - cap) * d1[only1] + rounding
    return err


def band_error_estimate(band: np.ndarray, energies: np.ndarray, rounding: float = 0.0,
                        parity_pairs: bool = False) -> np.ndarray:
    """:func:`nested_error_estimate` of a matrix given in LAPACK upper band storage (the same
    rule, for a scan's pencil A + s B kept banded)."""
    u = band.shape[0] - 1
    split = parity_pairs and not any(np.any(np.abs(band[u - d, d:]) > rounding)
                                     for d in range(1, u + 1, 2))
    return _nested_rule(energies, lambda m, top: band_eigenvalues(band, m, top),
                        nested_sizes(band.shape[1], parity_pairs), rounding, split)
