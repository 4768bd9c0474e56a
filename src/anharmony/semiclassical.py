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
