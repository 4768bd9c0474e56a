"""Diagonalisation of one channel, bound-state classification and the reference oscillator.

:func:`solve` is the friendly front end of DESIGN §8: it validates its arguments once, resolves
the reference oscillator, builds the channel matrices and returns a :class:`Spectrum`.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.linalg import eig_banded, eigh
from scipy.optimize import minimize_scalar

from .basis import HermiteBasis, RadialBasis
from .errors import ConvergenceWarning
from .hamiltonian import Channel, ChannelMatrices, channel_hamiltonian, parse_j
from .units import UnitSystem, get_units
from .well import Well

__all__ = ["BANDED_MAX_RATIO", "Reference", "Spectrum", "diagonalize", "reference_oscillator",
           "resolve_channel", "solve", "upper_band"]

HALF_DEPTH = 0.5  # the well's extent: where V first climbs half-way to the threshold
_VARIATIONAL_SIZE = 16  # "modest basis" for choosing b variationally
BANDED_MAX_RATIO = 0.125  # use the banded solver when half-bandwidth ≤ this · N
ROUNDING_WARN = 1e-9  # warn when eps·‖H‖₁ exceeds this fraction of the energy scale


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
        ``"harmonic"`` (V″ at the minimum), ``"variational"`` (b minimising the lowest levels)
        or ``"given"``.
    reason : str
        Why this choice was made, in words.
    """

    frequency: float
    length: float
    center: float
    v_min: float
    method: str
    reason: str


@dataclass(frozen=True)
class Spectrum:
    """Levels of one channel.

    Attributes
    ----------
    energies : ndarray
        Lowest eigenvalues, ascending, in the unit system's energy unit.
    bound : ndarray of bool
        True where the level lies below the threshold.
    vectors : ndarray
        Eigenvectors in the oscillator basis, shape (N, levels).
    reference_energies : ndarray
        Levels of the reference oscillator in this channel, v_min + ħω (2n + l + d/2).
    rounding : float
        eps · ‖H‖₁, the absolute accuracy floor of the eigenvalues; large when the basis
        reaches far into a steep wall (then :func:`solve` warns).
    """

    energies: np.ndarray
    bound: np.ndarray
    vectors: np.ndarray
    channel: Channel
    basis: HermiteBasis | RadialBasis
    reference: Reference
    threshold: float
    units: UnitSystem
    mass: float | None
    well: Well = field(repr=False)
    reference_energies: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))
    rounding: float = 0.0  # eps·‖H‖₁: the absolute accuracy floor of the eigenvalues

    @property
    def shifts(self) -> np.ndarray:
        """Anharmonic shifts: energy − reference oscillator level."""
        return self.energies - self.reference_energies

    def wavefunctions(self, coords: np.ndarray) -> np.ndarray:
        """ψ of each level at ``coords``, shape (levels, len(coords)); radial: R(r)."""
        return self.vectors.T @ self.basis.functions(coords)

    def expectation(self, f: Callable[[np.ndarray], np.ndarray], kind: str = "panels"
                    ) -> np.ndarray:
        """⟨f⟩ for each level, f a vectorised function of the coordinate."""
        m = self.basis.matrix(f, kind=kind)
        return np.einsum("nk,nm,mk->k", self.vectors, m, self.vectors)

    def coordinate_moment(self, k: int) -> np.ndarray:
        """⟨(x − x₀)^k⟩ (1D) or ⟨r^k⟩ per level; exact for integer k (even k for radial)."""
        b = self.basis.length
        if isinstance(self.basis, HermiteBasis) or k % 2 == 0:
            m = self.basis.coordinate_power(k) * b**k
            return np.einsum("nk,nm,mk->k", self.vectors, m, self.vectors)
        return self.expectation(lambda r: np.abs(r) ** k)


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


def _channel_from(dimension: int, l: int | None, j: Any) -> Channel:
    if isinstance(dimension, bool) or dimension not in (1, 2, 3):
        raise ValueError(f"dimension: must be 1, 2 or 3; got {dimension!r}")
    return Channel(dimension, l, parse_j(j))


def resolve_channel(well: Well, dimension: int, l: int | None, j: Any,
                    units: str | UnitSystem, mass: float | None) -> tuple[Well, Channel]:
    """Validate a channel request against a well; return the well in ``units`` and the channel.

    Raises ``ValueError`` naming the argument: a bad dimension, l or j, j missing where the
    well has spin–orbit terms, or a 1D parity channel of a well that is not symmetric; a
    :class:`TermError` for a formula not in the channel's coordinate (``Well.check_channel``).
    """
    if not isinstance(well, Well):
        raise TypeError(f"well: expected an anharmony.Well; got {type(well).__name__}")
    system = get_units(units)
    if mass is not None and (isinstance(mass, bool) or not isinstance(mass, (int, float))
                             or not math.isfinite(mass) or mass <= 0):
        raise ValueError(f"mass: must be a positive number; got {mass!r}")
    well = well.with_context(system, mass)
    channel = _channel_from(dimension, l, j)
    well.check_channel(channel.dimension)
    if well.has_spin_orbit and channel.dimension == 3 and channel.l and channel.j is None:
        raise ValueError(f"j: required with spin_orbit terms (l = {channel.l}: "
                         f"j = {channel.l - 0.5} or {channel.l + 0.5})")
    if channel.dimension == 1 and channel.l is not None and not well.is_symmetric(0.0):
        raise ValueError("l: 1D parity channels need a well symmetric about x = 0; use l=None "
                         "for the basis without symmetry")
    return well, channel


def _check_levels(levels: Any, size: int) -> int:
    if isinstance(levels, bool) or not isinstance(levels, (int, np.integer)) or levels < 1:
        raise ValueError(f"levels: must be an integer >= 1; got {levels!r}")
    if levels > size:
        raise ValueError(f"levels: {levels} levels need a basis of at least that size; "
                         f"got size={size}")
    return int(levels)


def _lowest_oscillator_level(channel: Channel) -> float:
    """Lowest oscillator energy of the channel in units of ħω."""
    if channel.l is None:
        return 0.5
    return channel.l + 0.5 * channel.dimension


def reference_oscillator(well: Well, dimension: int = 3, l: int | None = 0,
                         mass: float | None = None, levels: int = 5,
                         spec: str | Mapping[str, float] = "auto", j: Any = None) -> Reference:
    """Resolve the reference oscillator of DESIGN §2.

    Parameters
    ----------
    spec
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
    if isinstance(spec, Mapping):
        unknown = set(spec) - {"frequency", "length", "center"}
        if unknown:
            raise ValueError(f"reference: unknown key {sorted(unknown)[0]!r}; expected "
                             "frequency or length, and center")
        if ("frequency" in spec) == ("length" in spec):
            raise ValueError("reference: give exactly one of frequency or length")
        if "frequency" in spec:
            hw = _positive("reference.frequency", spec["frequency"])
            b = math.sqrt(2.0 * c / hw)
        else:
            b = _positive("reference.length", spec["length"])
            hw = 2.0 * c / b**2
        x0 = 0.0 if radial else float(spec.get("center", well.minimum()[0]))
        vmin = float(well.value(np.array([x0]))[0])
        return Reference(hw, b, x0, vmin, "given", "reference oscillator given in the case")
    if spec != "auto":
        raise ValueError(f"reference: expected 'auto' or a mapping; got {spec!r}")
    key = ("reference", channel, levels)
    if key not in well._memo:  # the well is immutable: resolve its reference once per channel
        well._memo[key] = _auto_reference(well, channel, levels, c, radial)
    return well._memo[key]


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


def _positive(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
            or not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name}: must be a positive number; got {value!r}")
    return float(value)


def solve(well: Well, dimension: int = 3, l: int | None = 0, j: Any = None,
          size: int = 60, length: float | str = "auto", units: str | UnitSystem = "oscillator",
          mass: float | None = None, levels: int = 5,
          reference: str | Mapping[str, float] = "auto") -> Spectrum:
    """Lowest levels of one channel of a well in an oscillator basis.

    Parameters
    ----------
    well
        The well (:meth:`Well.from_terms`).
    dimension
        1, 2 or 3.
    l
        Angular quantum number; in 1D ``None`` is the basis without symmetry, 0/1 the even/odd
        parity of a symmetric well.
    j
        Total angular momentum (3D with spin–orbit terms): 2.5 or ``"5/2"``.
    size
        Number of basis states N.
    length
        Oscillator length b of the basis, or ``"auto"`` for the reference oscillator's.
    units
        Unit system of DESIGN §5.
    mass
        Particle mass in the system's mass unit (default per system).
    levels
        Number of levels, counted from the lowest of the channel.
    reference
        Reference oscillator: ``"auto"`` or a mapping (see :func:`reference_oscillator`).

    Returns
    -------
    Spectrum
    """
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    if isinstance(size, bool) or not isinstance(size, (int, np.integer)) or size < 1:
        raise ValueError(f"size: must be an integer >= 1; got {size!r}")
    levels = _check_levels(levels, size)
    ref = reference_oscillator(well, dimension, l, None, levels, reference, channel.j)
    b = ref.length if length == "auto" else _positive("length", length)
    center = ref.center if channel.l is None else 0.0
    mats: ChannelMatrices = channel_hamiltonian(well, channel, size, b, center)
    energies, vectors = diagonalize(mats.total, levels, mats.bandwidth)
    rounding = float(np.finfo(float).eps * np.max(np.sum(np.abs(mats.total), axis=0)))
    scale = max(float(np.max(np.abs(energies - ref.v_min))), mats.hbar_omega)
    if rounding > ROUNDING_WARN * scale:
        warnings.warn(
            f"{channel.label}: the Hamiltonian matrix has norm {rounding / np.finfo(float).eps:.1e}"
            f" (the basis reaches far into a steep wall), so its eigenvalues are uncertain by "
            f"about {rounding:.1e}{'' if system.energy == '1' else ' ' + system.energy}; "
            "use a smaller size or length",
            ConvergenceWarning, stacklevel=2)
    radial = channel.l is not None
    threshold = well.threshold(dimension, symmetric=radial)
    bound = energies < threshold
    osc = (2.0 * np.arange(levels) + _lowest_oscillator_level(channel) if radial
           else np.arange(levels) + 0.5)
    ref_levels = ref.v_min + ref.frequency * osc
    return Spectrum(energies=energies, bound=bound, vectors=vectors, channel=channel,
                    basis=mats.basis, reference=ref, threshold=threshold, units=system,
                    mass=mass, well=well, reference_energies=ref_levels, rounding=rounding)
