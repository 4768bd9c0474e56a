"""The semiclassical phase space of one channel and the basis-independent count of its
bound levels (:func:`bound_count_estimate`)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ._caches import _cached, _well_key
from .hamiltonian import Channel
from .request import resolve_channel
from .units import UnitSystem
from .well import Well

__all__ = ["bound_count_estimate"]


class _PhaseSpace:
    """The classical phase space of one channel: V (with a Langer-corrected centrifugal term in
    radial channels, and ⟨l·s⟩ V_ls) on a grid, the action I(E) = ∫ k dx over the allowed
    region (k = sqrt((E − V)/(ħ²/2m))), and the orbits it bounds.
    """

    _POINTS = 6001

    def __init__(self, well: Well, channel: Channel, center: float) -> None:
        self.c = well.units.hbar2_over_2m(well.mass)
        self.radial = channel.l is not None and channel.dimension > 1
        self.parity = channel.l if channel.dimension == 1 else None
        self.center = 0.0 if channel.l is not None else center
        self.threshold = well.threshold(channel.dimension, symmetric=channel.l is not None)
        self.nu2 = (channel.l + 0.5 * channel.dimension - 1.0) ** 2 if self.radial else 0.0
        self.ls = channel.ls
        self.well = well
        self.span = 30.0 * well.scale
        self._grids: dict[float, tuple[np.ndarray, np.ndarray, float]] = {}
        self._memo: dict[str, float] = {}
        self.x, self.v, self.dx = self._grid(self.span)
        self.v_min = float(np.min(self.v))

    def _grid(self, span: float) -> tuple[np.ndarray, np.ndarray, float]:
        """Nodes, V and spacing over ``span`` (cached: every answer depends only on its
        arguments, never on the order of earlier calls)."""
        if span in self._grids:
            return self._grids[span]
        if self.radial:
            x = np.linspace(0.0, span, self._POINTS + 1)[1:]
        elif self.parity is not None:
            x = np.linspace(0.0, span, self._POINTS)
        else:
            x = self.center + np.linspace(-span, span, 2 * self._POINTS - 1)
        with np.errstate(all="ignore"):
            v = np.asarray(self.well.value(x), dtype=float)
            if self.ls:
                v = v + self.ls * np.asarray(self.well.spin_orbit_value(x), dtype=float)
            if self.radial:
                v = v + self.c * self.nu2 / x**2
        self._grids[span] = (x, np.where(np.isnan(v), np.inf, v), float(x[1] - x[0]))
        return self._grids[span]

    def _orbit(self, e: float) -> tuple[np.ndarray, np.ndarray, float]:
        """(x, k, dx) on the narrowest grid (the base span × 2^i) that holds the orbit at e."""
        span = self.span
        for _ in range(7):  # an orbit that reaches the grid's edge: a grid twice as wide
            x, v, dx = self._grid(span)
            with np.errstate(invalid="ignore"):
                k = np.sqrt(np.maximum(e - v, 0.0) / self.c)
            if k[-1] == 0.0 and (self.radial or self.parity is not None or k[0] == 0.0):
                break
            span *= 2.0
        return x, k, dx

    def k(self, e: float) -> np.ndarray:
        """Local wave number on the base grid."""
        with np.errstate(invalid="ignore"):
            return np.sqrt(np.maximum(e - self.v, 0.0) / self.c)

    def quanta(self, e: float) -> float:
        """I(E)/π: the semiclassical count of levels below E is floor(I/π + ½) (full line)."""
        _, k, dx = self._orbit(e)
        total = float(np.sum(k) - 0.5 * (k[0] + k[-1])) * dx / math.pi
        return 2.0 * total if self.parity is not None else total  # parity: half the line

    def line_count(self) -> float:
        """Semiclassical number of levels below the threshold (1D parity: of the full line)."""
        if "line_count" not in self._memo:  # depends on the well only: made once
            self._memo["line_count"] = self._line_count()
        return self._memo["line_count"]

    def _line_count(self) -> float:
        if self.threshold == math.inf:
            return math.inf
        if self.threshold == -math.inf or self.v_min >= self.threshold:
            return 0.0
        return float(math.floor(self.quanta(self.threshold) + 0.5))

    def count(self) -> float:
        """Semiclassical number of levels below the threshold, in this channel."""
        full = self.line_count()
        if self.parity is None or not math.isfinite(full):
            return full
        return float((full + 1) // 2 if self.parity == 0 else full // 2)

    def level(self, v: int) -> float:
        """Semiclassical energy of level v (the full-line index in 1D parity channels)."""
        target = v + 0.5
        lo = self.v_min
        hi = self.threshold if math.isfinite(self.threshold) else None
        if hi is None:
            hi = lo + max(abs(lo), 1.0)
            while self.quanta(hi) < target:
                hi = lo + 2.0 * (hi - lo)
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if self.quanta(mid) < target else (lo, mid)
        return 0.5 * (lo + hi)

    def matched_length(self, e: float) -> tuple[float, float]:
        """(b, q): the oscillator length whose phase-space disk of radius² q — the smallest
        possible — holds the classical orbit of energy ``e``:
        q = min_b max_orbit [(x − x₀)²/b² + k² b²]."""
        x, k, _ = self._orbit(e)
        on = k > 0
        if not on.any():
            return math.nan, math.nan
        r2 = (x[on] - self.center) ** 2
        k2 = k[on] ** 2
        guess = math.sqrt(math.sqrt(float(np.max(r2)) / float(np.max(k2))))
        logs = math.log(guess) + np.linspace(-3.0, 3.0, 121)
        for _ in range(3):  # the max of functions convex in log b is convex: zoom in
            b2 = np.exp(2.0 * logs)
            f = np.max(r2[None, :] / b2[:, None] + k2[None, :] * b2[:, None], axis=1)
            i = int(np.argmin(f))
            best = (float(logs[i]), float(f[i]))
            logs = np.linspace(logs[max(i - 1, 0)], logs[min(i + 1, logs.size - 1)], 41)
        return math.exp(best[0]), best[1]

    def tail_ends(self, e: float, depth: float) -> tuple[float, float, float, float]:
        """(x₋, x₊, y₋, y₊): the outermost turning points of the orbit at ``e`` on the line
        (no symmetry) and the points beyond them where the WKB tail has decayed by
        ∫ κ dx = ``depth`` (κ = sqrt((V − e)/(ħ²/2m))); NaN without an orbit.

        The tail ψ ∝ exp(−∫ κ dx) of a bound level (the WKB approximation, e.g. L. D. Landau
        and E. M. Lifshitz, *Quantum Mechanics*, the chapter on the quasi-classical case;
        quoted from memory) is what a basis must reach beyond the
        classical orbit: ψ² has fallen by e^{−2·depth} at y±. Where the grid ends before, the
        rest is extrapolated with the κ of the grid's last node (a limit of V: a constant κ).
        """
        x, k, dx = self._orbit(e)
        on = np.flatnonzero(k > 0)
        if not on.size or self.radial or self.parity is not None:
            return math.nan, math.nan, math.nan, math.nan
        i_lo, i_hi = int(on[0]), int(on[-1])
        with np.errstate(invalid="ignore"):
            kappa = np.sqrt(np.maximum(self.well_values(x) - e, 0.0) / self.c)
        kappa = np.where(np.isnan(kappa), np.inf, kappa)

        def reach(side: np.ndarray, start: float, step: float) -> float:
            if depth <= 0.0:
                return start
            cum = np.cumsum(kappa[side]) * dx
            j = int(np.searchsorted(cum, depth))
            if j < side.size:
                return float(x[side[j]])
            end = kappa[side[-1]] if side.size else 0.0
            last = float(x[side[-1]]) if side.size else start
            left = depth - (float(cum[-1]) if side.size else 0.0)
            if not end > 0.0:  # V at the grid's end equals e: no decay to extrapolate
                return last
            return last + step * min(left / float(end), float(x[-1] - x[0]))

        y_hi = reach(np.arange(i_hi + 1, x.size), float(x[i_hi]), 1.0)
        y_lo = reach(np.arange(i_lo - 1, -1, -1), float(x[i_lo]), -1.0)
        return float(x[i_lo]), float(x[i_hi]), y_lo, y_hi

    def well_values(self, x: np.ndarray) -> np.ndarray:
        """V (with ⟨l·s⟩ V_ls) at the nodes of one of this phase space's grids."""
        for xs, v, _ in self._grids.values():
            if xs is x:
                return v
        with np.errstate(all="ignore"):
            v = np.asarray(self.well.value(x), dtype=float)
        return np.where(np.isnan(v), np.inf, v)

    def covering_disk(self, e: float, depth: float) -> tuple[float, float, float, str]:
        """(x₀, b, q, text): the centre and length of the smallest oscillator phase-space disk
        (x − x₀)²/b² + (k b)² ≤ q that holds the classical orbit at ``e`` together with its
        evanescent tails out to ∫ κ dx = ``depth`` beyond both turning points (the tail ends
        as points of zero momentum), on the line without symmetry.

        The disk is what a Hermite basis of N states centred at x₀ spans (q ≈ 2N + 1): its
        reach √q·b and resolution √q/b. :meth:`matched_length` fixes x₀ at the minimum; here x₀
        is free, so an asymmetric orbit (a Morse level near its threshold: a steep inner wall,
        a long outer tail) is not paid for twice. The minimax is convex in x₀ at fixed b
        (a maximum of parabolas) and is found by bisection there, on a zoomed grid in log b.
        NaN without an orbit.
        """
        x_lo, x_hi, y_lo, y_hi = self.tail_ends(e, depth)
        if not math.isfinite(x_lo):
            return math.nan, math.nan, math.nan, "no classical orbit"
        x, k, _ = self._orbit(e)
        on = np.flatnonzero(k > 0)
        step = max(1, on.size // 300)  # the orbit on ≤ ~300 of its nodes, ends kept
        pick = np.unique(np.concatenate([on[::step], on[-1:]]))
        px = np.concatenate([x[pick], [x_lo, x_hi, y_lo, y_hi]])
        pk2 = np.concatenate([k[pick] ** 2, [0.0, 0.0, 0.0, 0.0]])
        span = max(y_hi - y_lo, float(np.max(px) - np.min(px)), 1e-300)
        kmax2 = float(np.max(pk2))
        guess = math.sqrt(0.5 * span / math.sqrt(kmax2)) if kmax2 > 0 else 0.5 * span

        def best_centre(b2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            lo = np.full(b2.shape, float(np.min(px)))
            hi = np.full(b2.shape, float(np.max(px)))
            w = pk2[None, :] * b2[:, None] ** 2  # (k b)² b², so that f·b² = (x − c)² + w
            for _ in range(44):  # bisection on the sign of the (sub)gradient (2^-44 of the span)
                c = 0.5 * (lo + hi)
                g = (px[None, :] - c[:, None]) ** 2 + w
                i = np.argmax(g, axis=1)
                right = px[i] > c  # the farthest point lies to the right: move right
                lo, hi = np.where(right, c, lo), np.where(right, hi, c)
            c = 0.5 * (lo + hi)
            f = np.max(((px[None, :] - c[:, None]) ** 2) / b2[:, None]
                       + pk2[None, :] * b2[:, None], axis=1)
            return c, f

        logs = math.log(guess) + np.linspace(-3.0, 3.0, 41)
        for _ in range(3):  # zoom in log b around the best
            c, f = best_centre(np.exp(2.0 * logs))
            i = int(np.argmin(f))
            best = (float(c[i]), math.exp(float(logs[i])), float(f[i]))
            logs = np.linspace(logs[max(i - 1, 0)], logs[min(i + 1, logs.size - 1)], 21)
        text = (f"turning points {x_lo:.4g} … {x_hi:.4g}, tails to {y_lo:.4g} … {y_hi:.4g}")
        return best[0], best[1], best[2], text


    def wall_distance(self, v_cap: float) -> float:
        """Distance from the centre (outwards from the minimum in radial channels) at which
        V first exceeds ``v_cap``; ``inf`` if it does not within the grid."""
        d = np.abs(self.x - self.center)
        over = self.v > v_cap
        if self.radial or self.parity is not None:  # half line: the wall outside the minimum
            over &= self.x > self.x[int(np.argmin(self.v))]  # not a centrifugal/1/x² core
        return float(np.min(d[over])) if over.any() else math.inf


def _phase_space(well: Well, channel: Channel, center: float) -> _PhaseSpace:
    return _cached("phase_space", (_well_key(well), channel, float(center)),
                   lambda: _PhaseSpace(well, channel, center))


def bound_count_estimate(well: Well, dimension: int = 3, l: int | None = 0, j: Any = None, *,
                         units: str | UnitSystem | None = None, mass: float | None = None
                         ) -> float:
    """How many bound levels a channel holds, independent of any basis (semiclassical).

    Parameters
    ----------
    well, dimension, l, j, mass
        As for :func:`solve`.
    units
        Unit system; default: the well's own.

    Returns
    -------
    float
        The count (an integer value); ``inf`` for a confining well, 0 for one unbounded below.

    Notes
    -----
    Phase-space (Bohr–Sommerfeld) count at the threshold: floor(I/π + ½), I = ∫ k dx over the
    classically allowed region, k² = (V_thr − V)/(ħ²/2m). Radial channels in d dimensions
    carry the Langer-corrected centrifugal term (ħ²/2m) ν²/r², ν = l + d/2 − 1 (R. E. Langer,
    Phys. Rev. 51, 669 (1937)); 1D parity channels take every other level of the full line.
    Exact for Morse, floor(λ − ½) + 1 with λ = sqrt(2mD)/(αħ) (P. M. Morse, Phys. Rev. 34, 57
    (1929)); for Pöschl–Teller the count can be one short where s = ½(−1 + sqrt(1 + 8mV₀a²/ħ²))
    lies just above an integer (the semiclassical action is sqrt(2mV₀)a/ħ, not s + ½).
    """
    well, channel = resolve_channel(well, dimension, l, j,
                                    well.units if units is None else units,
                                    well.mass if mass is None else mass)
    center = well.minimum()[0] if channel.l is None else 0.0
    return _phase_space(well, channel, center).count()
