"""Families of near-diagonal Padé approximants and the spread that measures their uncertainty.

A single approximant has no error bar of its own. What the computed orders do say is how much
the answer moves between approximants that use them in equally reasonable ways: the
neighbours [L±1/M∓1] of the near-diagonal [L/M], and the same built from one or two orders
fewer. Approximants spoiled by a pole where they are evaluated are left out (not averaged in),
and the spread of the rest about the highest-order one is the uncertainty.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["FamilyValue", "combine", "family"]

ORDER_DROPS = 2  # approximants from K, K−1 and K−2 orders make the family
EXTRA_DROPS = 6  # ... and up to this many further drops when too few survive the pole checks
MIN_MEMBERS = 3  # fewer surviving approximants leave the spread unmeasured
TRUST_FRACTION = 0.5  # an uncertainty above half the correction |E − E_0| fixes nothing
SPREAD_FACTOR = 2.0  # the best approximant need not lie inside the others: twice their spread
ROUNDING_FLOOR = 4 * np.finfo(float).eps  # relative: the value is a double in the end


def _row(order: int, centre: tuple[int, int] | None, drop: int, min_m: int
         ) -> list[tuple[int, int]]:
    """The near-diagonal [L/M] from ``order − drop`` coefficients and its two neighbours."""
    if centre is None:
        n = order - drop
        m = n // 2
        l = n - m
    else:
        l = centre[0] - drop // 2
        m = centre[1] - (drop - drop // 2)
    out = []
    for dl in (0, 1, -1):
        a, b = l + dl, m - dl
        if a >= 0 and b >= min_m:
            out.append((a, b))
    return out


def family(order: int, centre: tuple[int, int] | None = None,
           drops: int = ORDER_DROPS, min_m: int = 1) -> Iterator[tuple[int, tuple[int, int]]]:
    """(drop, (L, M)) in order of preference: highest order first, most diagonal first.

    ``centre`` is the top approximant (default the near-diagonal one of ``order``
    coefficients); each further drop removes one coefficient, alternately from M and L.
    """
    seen = set()
    for drop in range(drops + 1):
        for lm in _row(order, centre, drop, min_m):
            if lm not in seen and sum(lm) <= order:
                seen.add(lm)
                yield drop, lm


@dataclass(frozen=True)
class FamilyValue:
    """One resummed value with its uncertainty and why it is (not) to be trusted."""

    value: float
    uncertainty: float
    trusted: bool
    reason: str
    members: tuple[tuple[int, int], ...]  # the approximants kept, best first
    rejected: tuple[tuple[int, int], ...]  # left out for a pole on the path / near the point


def combine(
    order: int,
    evaluate: Callable[[tuple[int, int]], tuple[float, float] | str],
    *,
    c0: float,
    centre: tuple[int, int] | None = None,
    what: str = "approximant",
    min_m: int = 1,
) -> FamilyValue:
    """Evaluate the family and reduce it to (value, uncertainty, trusted, reason).

    ``evaluate(lm)`` returns (value, own error) or a string saying why the approximant is
    left out (a pole on the path, a singular system). The value is that of the best kept
    approximant; the uncertainty is twice the largest distance of any kept one from it (the
    best one is not always inside the others: along a monotone Padé sequence the neighbours'
    errors are only 1.5–3 times its own), plus the largest own error (quadrature, rounding),
    and never below rounding. Trusted needs at
    least :data:`MIN_MEMBERS` kept approximants and an uncertainty below half the resummed
    correction |value − c0|.
    """
    kept: list[tuple[tuple[int, int], float, float]] = []
    rejected: list[tuple[int, int]] = []
    reasons: list[str] = []
    limit = ORDER_DROPS
    drop_seen = -1
    gen = family(order, centre, ORDER_DROPS + EXTRA_DROPS, min_m)
    for drop, lm in gen:
        if drop > limit:
            if len(kept) >= MIN_MEMBERS:
                break
            limit = drop  # too few survived: widen the family by one more order
        drop_seen = max(drop_seen, drop)
        got = evaluate(lm)
        if isinstance(got, str):
            rejected.append(lm)
            reasons.append(got)
            continue
        v, e = got
        if math.isfinite(v):
            kept.append((lm, float(v), float(e)))
        else:
            rejected.append(lm)
            reasons.append("not finite")
    span = f"{len(kept)} of {len(kept) + len(rejected)} {what}s from orders " \
           f"{order - drop_seen}…{order}"
    if not kept:
        why = reasons[0] if reasons else "no approximant could be formed"
        return FamilyValue(math.nan, math.inf, False, f"no usable {what} ({why}); {span}",
                           (), tuple(rejected))
    best = kept[0][1]
    spread = max(abs(v - best) for _, v, _ in kept)
    own = max(e for _, _, e in kept)
    unc = SPREAD_FACTOR * spread + own + ROUNDING_FLOOR * abs(best)
    members = tuple(lm for lm, _, _ in kept)
    if len(kept) < MIN_MEMBERS:
        return FamilyValue(best, math.inf, False,
                           f"only {span} survive the pole checks: the spread is not measured",
                           members, tuple(rejected))
    correction = abs(best - c0)
    if not unc < TRUST_FRACTION * correction:
        return FamilyValue(best, unc, False,
                           f"spread {unc:.2g} is not below half the resummed correction "
                           f"|E − E_0| = {correction:.2g} ({span})", members, tuple(rejected))
    return FamilyValue(best, unc, True, f"{span}", members, tuple(rejected))


def near_point(points: Sequence[complex] | np.ndarray, end: float, rtol: float) -> np.ndarray:
    """True for points within ``rtol·|end|`` of ``end``, or within ``rtol`` rad of the
    segment (0, end] (seen from the origin, so a cut along the opposite axis is clear)."""
    p = np.asarray(points, dtype=complex)
    if p.size == 0 or end == 0:
        return np.zeros(p.shape, dtype=bool)
    w = p / end
    with np.errstate(all="ignore"):
        along = (w.real > 0) & (np.abs(np.angle(w)) <= rtol) & (np.abs(w) <= 1 + rtol)
    return along | (np.abs(w - 1) <= rtol)


def guard_path(coefficients: Sequence, lam: np.ndarray, uncs: list, trusted: list,
               reasons: list) -> None:
    """Untrust (in place) the values at couplings where the measured geometric growth puts a
    singularity on the path (:func:`~.growth.path_singularities`), and widen their
    uncertainty to at least the geometric tail estimate."""
    from .growth import path_singularities

    for i, hit in enumerate(path_singularities(coefficients, lam)):
        if hit is None:
            continue
        uncs[i] = max(uncs[i], hit.tail)
        trusted[i] = False
        reasons[i] = f"{reasons[i]}; not trusted: {hit.reason}"
