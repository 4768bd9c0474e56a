"""The reference oscillator of a well (DESIGN §2) and the default basis length.

:func:`reference_oscillator` resolves a given or an automatic reference (harmonic at the
minimum, sized for an off-centre radial minimum, or variational); :func:`default_length` is
the basis length b of ``length="auto"``, matched to the classical orbit of the highest
requested bound level. Both are cached by value (:mod:`anharmony._caches`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import minimize_scalar

from ._caches import _cached, _well_key
from .eigensolvers import ROUNDING_WARN, diagonalize
from .errors import InputError
from .hamiltonian import Channel, channel_hamiltonian
from .request import _channel_from, _positive
from .semiclassical import _phase_space
from .well import Well

__all__ = ["Reference", "basis_centre", "default_length", "reference_oscillator"]

HALF_DEPTH = 0.5  # the well's extent: where V first climbs half-way to the threshold
_VARIATIONAL_SIZE = 16  # "modest basis" for choosing b variationally
WALL_FRACTION = 0.02  # auto length: V at the basis' reach ≤ this · the rounding-warning level
LENGTH_KEEP = 0.1  # auto length: keep a harmonic reference's b within this relative change
SYMMETRY_RTOL = 1e-12  # basis centre: a well symmetric about a point to this is centred there


@dataclass(frozen=True)
class Reference:
    """The reference oscillator of a well (DESIGN §2).

    Attributes
    ----------
    frequency : float
        ħω in the unit system's energy unit.
    length : float
        b = sqrt(ħ/(mω)) in the length unit.
    center : float
        Centre x₀ (0 for central wells).
    v_min : float
        Value of the well at the centre; H_ref = v_min + ħω (oscillator level).
    method : str
        ``"harmonic"`` (V″ at the minimum), ``"variational"`` (b minimising the lowest levels),
        ``"off-centre"`` (a radial well whose minimum lies at r_m > 0: b sized to reach beyond
        r_m and resolve the well there) or ``"given"``.
    reason : str
        Why this choice was made, in words.
    """

    frequency: float
    length: float
    center: float
    v_min: float
    method: str
    reason: str


def _lowest_oscillator_level(channel: Channel) -> float:
    """Lowest oscillator energy of the channel in units of ħω."""
    if channel.l is None:
        return 0.5
    return channel.l + 0.5 * channel.dimension


def reference_oscillator(well: Well, dimension: int = 3, l: int | None = 0,
                         mass: float | None = None, levels: int = 5,
                         reference: str | Mapping[str, float] = "auto", j: Any = None
                         ) -> Reference:
    """Resolve the reference oscillator of DESIGN §2.

    Parameters
    ----------
    reference
        ``"auto"``, or a mapping with ``frequency`` (ħω) or ``length`` (b), and optionally
        ``center`` (1D without symmetry).

    Notes
    -----
    ``auto`` takes the harmonic approximation V″(x_min) = mω² at the local minimum nearest the
    centre of the terms when it is fair: V″ > 0 and the lowest oscillator level lies inside
    the well — below the threshold, and with its classical turning point within the well's
    half-depth extent (where V first climbs half-way from V_min to the threshold; unlimited
    for confining wells). A Woods–Saxon well fails (cusp at r = 0, flat bottom). Otherwise b
    minimises the sum of the lowest ``levels`` energies of the channel in a basis of 16
    states (each clamped at the threshold, so that continuum states do not pull b outwards).
    """
    if mass is not None:
        well = well.with_context(well.units, mass)
    channel = _channel_from(dimension, l, j)
    c = well.units.hbar2_over_2m(well.mass)
    radial = channel.l is not None
    spec = reference
    if isinstance(spec, Mapping):
        unknown = set(spec) - {"frequency", "length", "center"}
        if unknown:
            raise InputError(f"reference: unknown key {sorted(unknown)[0]!r}; expected "
                             "frequency or length, and center")
        if ("frequency" in spec) == ("length" in spec):
            raise InputError("reference: give exactly one of frequency or length")
        if "frequency" in spec:
            hw = _positive("reference.frequency", spec["frequency"])
            b = math.sqrt(2.0 * c / hw)
        else:
            b = _positive("reference.length", spec["length"])
            hw = 2.0 * c / b**2
        x0 = 0.0 if radial else float(spec.get("center", well.minimum()[0]))
        # a radial channel absorbs inverse-square terms into its basis (they belong to H_ref
        # and would make V(0) infinite): v_min is the value of the rest at the centre
        rest = well
        if radial and any(t.inverse_square is not None for t in well.terms):
            kept = [t for t in well.terms if t.inverse_square is None]
            rest = Well.from_terms(kept, well.units, well.mass) if kept else None
        vmin = 0.0 if rest is None else float(rest.value(np.array([x0]))[0])
        return Reference(hw, b, x0, vmin, "given", "reference oscillator given in the case")
    if spec != "auto":
        raise InputError(f"reference: expected 'auto' or a mapping; got {spec!r}")
    # the well is immutable: resolve its reference once per (well value, channel, levels)
    return _cached("reference", (_well_key(well), channel, levels),
                   lambda: _auto_reference(well, channel, levels, c, radial))


def _auto_reference(well: Well, channel: Channel, levels: int, c: float, radial: bool
                    ) -> Reference:
    dimension = channel.dimension
    threshold = well.threshold(dimension, symmetric=radial)

    if radial:
        x0, vmin, v2 = well.minimum(radial=True)
        why = ""
        if x0 != 0.0:
            # The radial basis sits at r = 0 and the well at r_m = x0 > 0 (a bond length, a
            # shell). N states of length b reach out to about b·s and resolve momenta up to
            # ħ s/b (s² ≈ 4N); the lowest levels need r up to r_m + k b_m and momenta up to
            # ħ k/b_m, b_m the harmonic length at r_m. The b meeting both with the fewest
            # states is b² = b_m (r_m + k b_m)/k; it needs N ≈ k (r_m/b_m + k)/4. Measured on
            # Morse wells (r_m/b_m = 12…54, lowest 5 levels, k = 6): error ≤ 1e-10 ħω once N
            # reaches that, near the best b of a scan; b = b_m needs 1.5–2× the states, and a
            # b chosen variationally in a 16-state basis stalls at 1e-2…1 ħω for r_m/b_m ≳ 30.
            if v2 > 0:
                hw_m = math.sqrt(2.0 * c * v2)
                b_m = math.sqrt(2.0 * c / hw_m)
                extent = _well_extent(well, x0, vmin, threshold, radial)
                if vmin + 0.5 * hw_m >= threshold:
                    why = ("the lowest level of the harmonic approximation at the radial "
                           f"minimum r = {x0:.6g} lies above the threshold")
                elif b_m > extent:
                    why = (f"the harmonic length {b_m:.4g} at the radial minimum r = {x0:.6g} "
                           f"exceeds the well's half-depth extent {extent:.4g}")
                else:
                    k = 3.0 + math.sqrt(2.0 * levels + 1.0)
                    b = math.sqrt(b_m * (x0 + k * b_m) / k)
                    need = math.ceil(k * (x0 / b_m + k) / 4.0)
                    return Reference(
                        2.0 * c / b**2, b, 0.0, vmin, "off-centre",
                        f"the minimum is at r = {x0:.6g}, not at r = 0 where the basis sits: "
                        f"b = sqrt(b_m (r_m + k b_m)/k) = {b:.4g} with the harmonic length "
                        f"b_m = {b_m:.4g} there (V'' = {v2:.6g}) and k = {k:.3g}, so that the "
                        f"basis reaches r_m + k b_m and resolves the well; needs about "
                        f"N >= {need} states")
            else:
                why = f"V'' <= 0 at the radial minimum r = {x0:.6g}"
            v2, x0 = 0.0, 0.0  # the radial basis is centred at r = 0; vmin stays V(r_m)
    else:
        x0, vmin, v2 = well.minimum()
        why = ""
    e_low = _lowest_oscillator_level(channel)
    s = well.scale
    rise = abs(float(well.value(np.array([x0 + s]))[0]) - vmin) / s**2
    if 0 < v2 <= 1e-10 * rise:  # curvature at rounding level: a pure quartic, say
        v2 = 0.0
    if v2 > 0 and not why:
        hw = math.sqrt(2.0 * c * v2)
        b = math.sqrt(2.0 * c / hw)
        xt = b * math.sqrt(2.0 * e_low)  # classical turning point of the lowest level
        excitation = hw * e_low
        extent = _well_extent(well, x0, vmin, threshold, radial)
        if vmin + excitation >= threshold and threshold != -math.inf:
            why = "the lowest oscillator level lies above the threshold"
        elif xt > extent:
            why = (f"the lowest oscillator level reaches out to {xt:.4g}, beyond the well's "
                   f"half-depth extent {extent:.4g} (a flat-bottomed well)")
        else:
            note = ("; the well is unbounded below, so this is a formal expansion about the "
                    "local minimum" if threshold == -math.inf else "")
            inside = ("" if not math.isfinite(extent)
                      else f", inside the well's half-depth extent {extent:.4g}")
            return Reference(hw, b, x0, vmin, "harmonic",
                             f"harmonic approximation at the minimum x = {x0:.6g}: "
                             f"V'' = {v2:.6g}; the lowest level's turning point {xt:.4g}"
                             f"{inside}{note}")
    elif not why:
        slope = float(well.d1(np.array([x0]))[0]) if radial and x0 == 0.0 else 0.0
        if radial and abs(slope) > 1e-9 * max(1.0, abs(vmin)) / well.scale:
            why = (f"V'(0) = {slope:.3g} at r = 0: the well has a cusp there and no parabolic "
                   "bottom (flat-bottomed, like Woods–Saxon)")
        else:
            why = ("V'' = 0 at the minimum" if v2 == 0
                   else "V'' <= 0 at the minimum (a cusp or a maximum)")
    b = _variational_length(well, channel, x0, levels, guess=well.scale)
    hw = 2.0 * c / b**2
    return Reference(hw, b, x0, vmin, "variational",
                     f"b chosen to minimise the sum of the lowest {levels} levels in a "
                     f"{_VARIATIONAL_SIZE}-state basis, because {why}")


def _well_extent(well: Well, x0: float, vmin: float, threshold: float, radial: bool) -> float:
    """Distance from x₀ at which V first climbs half-way to the threshold (the nearer side).

    Radial wells: outward from r = 0, or both ways from a radial minimum r_m > 0, inward at
    most r_m (where the channel ends). ``inf`` for wells that confine (threshold +∞) or are
    unbounded below (−∞), and on a side where V never gets there within 20 length scales of
    the terms.
    """
    if not math.isfinite(threshold):
        return math.inf
    level = vmin + HALF_DEPTH * (threshold - vmin)
    t = np.linspace(0.0, 20.0 * well.scale, 4001)[1:]
    out = math.inf
    for side in ((1.0,) if radial and x0 == 0.0 else (-1.0, 1.0)):
        # inward from a radial minimum r_m > 0 the channel ends at r = 0: at most r_m
        ts = t[t <= x0] if radial and side < 0 else t
        with np.errstate(all="ignore"):
            v = well.value(x0 + side * ts)
        hit = np.flatnonzero(~(v < level))  # NaN or +inf count as climbed
        if hit.size:
            out = min(out, float(ts[hit[0]]))
        elif radial and side < 0:
            out = min(out, x0)
    return out


def _variational_length(well: Well, channel: Channel, x0: float, levels: int, guess: float
                        ) -> float:
    size = max(_VARIATIONAL_SIZE, levels + 4)
    k = min(levels, size)
    threshold = well.threshold(channel.dimension, symmetric=channel.l is not None)

    def total(logb: float) -> float:
        m = channel_hamiltonian(well, channel, size, math.exp(logb), x0)
        e, _ = diagonalize(m.total, k, m.bandwidth)
        # levels above the threshold are continuum states: clamped, they cannot drag b outwards
        return float(np.sum(np.minimum(e, threshold)))

    lo, hi = math.log(guess) - math.log(20.0), math.log(guess) + math.log(5.0)
    grid = np.linspace(lo, hi, 13)
    vals = [total(g) for g in grid]
    i = int(np.argmin(vals))
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    res = minimize_scalar(total, bounds=(a, b), method="bounded", options={"xatol": 1e-4})
    return float(math.exp(res.x))


def default_length(well: Well, channel: Channel, levels: int, size: int, ref: Reference
                   ) -> tuple[float, str]:
    """The basis length b of ``length="auto"`` and the reason, as :func:`solve` uses it
    (cached by value); :func:`~anharmony.scan.scan` takes the same b."""
    return _cached("reference", (_well_key(well), channel, levels, size, "length", ref),
                   lambda: _auto_length(well, channel, levels, size, ref))


def _is_oscillator(well: Well, center: float) -> bool:
    """Whether the well is c₀ + c₂ (x − center)² alone (no other power, no non-central term)."""
    if len(well.central_terms) != len(well.terms):
        return False
    poly = well.polynomial(center)
    if poly is None or not poly.get(2, 0.0) > 0.0:
        return False
    scale = abs(poly[2]) * well.scale**2
    return all(p in (0, 2) or abs(c) * well.scale**p <= 1e-14 * scale for p, c in poly.items())


def _auto_length(well: Well, channel: Channel, levels: int, size: int, ref: Reference
                 ) -> tuple[float, str]:
    """Basis length for ``length="auto"`` and the reason (see :func:`solve`, Notes)."""
    if ref.method == "given":
        return ref.length, "the reference oscillator's length (given)"
    if ref.method == "off-centre":  # a disk about r = 0 cannot fit an orbit about r_m > 0
        return ref.length, ("the reference oscillator's length, sized to reach beyond the "
                            "off-centre minimum (see the reference's reason)")
    if ref.method == "harmonic" and _is_oscillator(well, ref.center):
        return ref.length, ("the reference oscillator's length: the well is that oscillator, "
                            "whose levels this basis holds exactly")
    ps = _phase_space(well, channel, ref.center)
    parity = channel.l if channel.dimension == 1 else None
    top = levels - 1 if parity is None else 2 * (levels - 1) + parity  # full-line index
    count = ps.line_count()
    if top > count - 1:  # only bound levels have an orbit: match the highest one
        top = int(count - 1) if parity is None or (count - 1 - parity) % 2 == 0 \
            else int(count - 2)
    if top < 0:
        return ref.length, "the reference oscillator's length (no bound level to match)"
    e_top = ps.level(top)
    b, q = ps.matched_length(e_top)
    if not (math.isfinite(b) and b > 0):
        return ref.length, "the reference oscillator's length (no classical orbit to match)"
    if ref.method == "harmonic" and abs(b / ref.length - 1.0) <= LENGTH_KEEP:
        return ref.length, (f"the reference oscillator's length: the phase-space match of the "
                            f"highest requested bound level, {b:.4g}, is within "
                            f"{LENGTH_KEEP:.0%} of it")
    why = (f"matched to the classical orbit of level {top} (semiclassical E = {e_top:.6g}): "
           f"the smallest phase-space disk (x/b)² + (kb)² ≤ {q:.3g} that holds it")
    # the basis reaches out to about sqrt(q_N)·b; beyond a steep wall its matrix norm (and the
    # eigenvalues' rounding, eps·‖H‖) explodes: keep that reach inside the wall
    q_n = 2 * size + 1 if channel.l is None else 4 * size + 2 * channel.l + channel.dimension
    v_cap = ps.v_min + WALL_FRACTION * ROUNDING_WARN / np.finfo(float).eps * (e_top - ps.v_min)
    b_wall = ps.wall_distance(v_cap) / math.sqrt(q_n)
    if b > b_wall:
        b = b_wall
        why += (f", shortened to {b:.4g} so that the basis' reach √(q_N)·b stays inside the "
                "steep wall")
    return b, why


TAIL_FRACTIONS = tuple(k / 8 for k in range(8, -1, -1))  # basis centre: tail depths tried
DISK_SHARE = 0.5  # basis centre: the orbit and its tails within this share of the basis' disk
#                   area, q ≤ DISK_SHARE·(2N + 1); states near the disk's edge converge last.
#                   Measured on Morse wells at N = 320 (λ = 12.6 and 25.3): shares of 0.3–0.6
#                   converge every level the minimum's centre converges, 0.85 none of them


def basis_centre(well: Well, channel: Channel, levels: int, tolerance: float, ref: Reference,
                 size: int | None = None) -> tuple[float, str]:
    """Centre x₀ of the Hermite basis of the line without symmetry, and the reason (cached by
    value): the centre of the smallest phase-space disk that holds the classical orbit of the
    highest requested bound level and its evanescent tails to ``tolerance``.

    Parameters
    ----------
    tolerance
        Energy (the unit system's unit) to which the tails must be covered: the tail of a
        level of excitation S = E − V_min is followed until ψ² has fallen by tolerance/S,
        ∫ κ dx = ½ ln(S/tolerance) beyond each turning point.
    size
        Basis size N: the disk may fill only ``DISK_SHARE`` of the basis' own,
        q ≤ DISK_SHARE·(2N + 1). The deepest of the tail depths ``TAIL_FRACTIONS`` ×
        ½ ln(S/tolerance) that fits is taken; where not even the bare orbit fits (a small
        basis for a long orbit), the reference centre. ``None``: no limit.

    Notes
    -----
    Cutting a bound level's tail off where ψ² has fallen by a factor f changes its energy by
    about f times its energy scale (common practice, no source), hence the depth of the tail.
    An oscillator basis of N states spans the phase-space disk (x − x₀)²/b² + (kb)² ≤ 2N + 1
    (the classical orbit of its highest state). A well symmetric about the reference centre or
    about the mean centre of its terms keeps that point exactly (the symmetric disk's centre).
    Radial channels, 1D parity channels, a given reference and a channel with no bound level
    to match keep the reference centre.
    """
    return _cached("reference", (_well_key(well), channel, levels, float(tolerance), "centre",
                                 ref, size),
                   lambda: _auto_centre(well, channel, levels, float(tolerance), ref, size))


def _auto_centre(well: Well, channel: Channel, levels: int, tolerance: float, ref: Reference,
                 size: int | None) -> tuple[float, str]:
    if channel.l is not None:
        return 0.0, "radial and parity bases are centred at the origin"
    if ref.method == "given":
        return ref.center, "the reference oscillator's centre (given)"
    for point in (ref.center, well.center):
        if well.is_symmetric(point, SYMMETRY_RTOL):
            return point, f"the well's symmetry point {point:.6g}"
    ps = _phase_space(well, channel, ref.center)
    count = ps.line_count()
    top = min(levels - 1, int(count - 1)) if math.isfinite(count) else levels - 1
    if top < 0:
        return ref.center, "the reference oscillator's centre (no bound level to match)"
    e_top = ps.level(top)
    excitation = e_top - ps.v_min
    full = 0.5 * math.log(excitation / tolerance) if excitation > tolerance > 0 else 0.0
    budget = math.inf if size is None else DISK_SHARE * (2.0 * size + 1.0)
    q = math.nan
    for frac in TAIL_FRACTIONS:
        x0, b, q, where = _cached("phase_space", (_well_key(well), channel, float(ref.center),
                                                  "disk", e_top, frac * full),
                                  lambda f=frac: ps.covering_disk(e_top, f * full))
        if not math.isfinite(x0):
            return ref.center, "the reference oscillator's centre (no classical orbit to match)"
        if q <= budget:
            deep = ("" if frac == 1.0 else
                    f"; the tails only to {frac:.0%} of that depth, as deep as a basis of "
                    f"{size} states holds within {DISK_SHARE:.0%} of its disk")
            return x0, (f"centre of the smallest phase-space disk (x − x₀)²/b² + (kb)² ≤ "
                        f"{q:.3g} (b = {b:.4g}) holding the classical orbit of level {top} "
                        f"(semiclassical E = {e_top:.6g}) and its tails ({where}) to where ψ² "
                        f"has fallen by {tolerance:.2g}/{excitation:.3g}{deep}")
    return ref.center, (f"the reference oscillator's centre: {DISK_SHARE:.0%} of the disk of a "
                        f"basis of {size} states ({budget:.0f}) cannot hold the classical orbit "
                        f"of level {top}, which needs {q:.3g}")
