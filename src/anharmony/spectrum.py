"""Diagonalisation of one channel, bound-state classification and the reference oscillator.

:func:`solve` is the friendly front end of DESIGN §8: it validates its arguments once, resolves
the reference oscillator, builds the channel matrices and returns a :class:`Spectrum` with an
error bar on every level (:func:`nested_error_estimate`), a basis-independent count of the
channel's bound levels (:func:`bound_count_estimate`) and spectroscopic labels.

Repeated solves are cheap: references, semiclassical tables and channel matrices are kept in
small LRU caches keyed by *value* (the well's frozen terms, unit system and mass, the channel,
size, length and centre), never by object identity, so a changed well never meets a stale
matrix and an equal well rebuilt by ``with_context`` still hits.
"""

from __future__ import annotations

import math
import warnings
from collections import OrderedDict
from collections.abc import Callable, Hashable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy.linalg import eig_banded, eigh, get_lapack_funcs
from scipy.optimize import minimize_scalar

from ._defaults import plain, unset
from .basis import HermiteBasis, RadialBasis
from .errors import ConvergenceWarning, InputError
from .hamiltonian import Channel, ChannelMatrices, channel_hamiltonian, parse_j
from .labels import channel_label
from .units import UnitSystem, get_units
from .well import Well

if TYPE_CHECKING:
    from .geometry import GeometrySpectrum

__all__ = ["BANDED_MAX_RATIO", "DEFAULT_TOLERANCE", "Reference", "Spectrum",
           "band_eigenvalues", "band_error_estimate", "band_rounding", "bound_count_estimate",
           "clear_caches", "diagonalize", "matrix_rounding", "nested_error_estimate",
           "nested_sizes", "reference_oscillator", "resolve_channel", "solve", "upper_band"]

HALF_DEPTH = 0.5  # the well's extent: where V first climbs half-way to the threshold
_VARIATIONAL_SIZE = 16  # "modest basis" for choosing b variationally
BANDED_MAX_RATIO = 0.125  # use the banded solver when half-bandwidth ≤ this · N
ROUNDING_WARN = 1e-9  # warn when eps·‖H‖₁ exceeds this fraction of the energy scale
DEFAULT_TOLERANCE = 1e-8  # error bar allowed, relative to the level spacing (or ħω)
ESTIMATE_WINDOW = 0.25  # nested sub-blocks N − q, N − 2q with q = N/4 (cost ≈ 0.55 eigvalsh)
ESTIMATE_SAFETY = 12.0  # factor on the extrapolated remainder (measured: see RESULTS.md)
ESTIMATE_RATIO_CAP = 0.9  # convergence ratio per window assumed at most this
ESTIMATE_FLOOR = 0.03  # remainder never taken below this fraction of the last difference
WALL_FRACTION = 0.02  # auto length: V at the basis' reach ≤ this · the rounding-warning level
LENGTH_KEEP = 0.1  # auto length: keep a harmonic reference's b within this relative change
_CACHE_SIZES = {"reference": 64, "phase_space": 64, "matrices": 8}


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


class _Deferred:
    """A value made on first read (a :class:`_LazyField` holds it until then)."""

    __slots__ = ("make",)

    def __init__(self, make: Callable[[], Any]) -> None:
        self.make = make


class _LazyField:
    """A dataclass field that may be given as a :class:`_Deferred`: made on first read, then
    kept in the instance (a frozen dataclass still refuses assignment from outside).

    ``default`` makes the field optional (``field(default=<this descriptor>)``): a factory,
    called per instance on first read.
    """

    def __init__(self, name: str, default: Callable[[], Any] | None = None) -> None:
        self.name = name
        self.default = default

    def __get__(self, obj: Any, owner: type | None = None) -> Any:
        if obj is None:  # class access: dataclasses look for a default here
            if self.default is None:
                raise AttributeError(self.name)
            return self
        value = obj.__dict__[self.name]
        if value is self:  # the field's default was taken
            value = _Deferred(self.default)  # type: ignore[arg-type]
        if isinstance(value, _Deferred):
            value = value.make()
            obj.__dict__[self.name] = value
        return value

    def __set__(self, obj: Any, value: Any) -> None:
        obj.__dict__[self.name] = value


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
    reference : Reference
        The reference oscillator (DESIGN §2). With a given ``length`` and
        ``reference="auto"``, :func:`solve` resolves it on first read (its variational search
        is most of a first solve's cost), so an error of that search appears there.
    reference_energies : ndarray
        Levels of the reference oscillator in this channel, v_min + ħω (2n + l + d/2);
        made on first read with the reference.
    rounding : float
        eps · ‖H‖₁, the absolute accuracy floor of the eigenvalues; large when the basis
        reaches far into a steep wall (then :func:`solve` warns).
    error_estimate : ndarray
        A-posteriori error bar of each level (:func:`nested_error_estimate`), in the energy
        unit; an upper estimate of E(N) − E(∞). Meaningless above the threshold.
    converged : ndarray of bool
        Bound, and error_estimate ≤ :attr:`tolerance`.
    tolerance : float
        The absolute tolerance the estimates were held to.
    labels : tuple of str
        Spectroscopic label of each level (:meth:`Channel.level_label`).
    length_reason : str
        How the basis length was chosen.
    """

    energies: np.ndarray
    bound: np.ndarray
    vectors: np.ndarray
    channel: Channel
    basis: HermiteBasis | RadialBasis
    reference: Reference = _LazyField("reference")  # type: ignore[assignment]  # required
    threshold: float
    units: UnitSystem
    mass: float | None
    well: Well = field(repr=False)
    reference_energies: np.ndarray = field(  # type: ignore[assignment]
        repr=False, default=_LazyField("reference_energies", lambda: np.zeros(0)))
    rounding: float = 0.0  # eps·‖H‖₁: the absolute accuracy floor of the eigenvalues
    error_estimate: np.ndarray = field(default_factory=lambda: np.zeros(0))
    converged: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    tolerance: float = math.nan
    labels: tuple[str, ...] = ()
    length_reason: str = ""

    def __getstate__(self) -> dict[str, Any]:
        # pickled and copied with every lazy field made (a _Deferred holds a closure)
        return {k: getattr(self, k) if isinstance(v, (_Deferred, _LazyField)) else v
                for k, v in self.__dict__.items()}

    @property
    def bound_count_estimate(self) -> float:
        """Bound levels the channel holds, independent of the basis (see
        :func:`bound_count_estimate`); ``inf`` for a confining well."""
        return bound_count_estimate(self.well, self.channel.dimension, self.channel.l,
                                    self.channel.j)

    @property
    def shifts(self) -> np.ndarray:
        """Anharmonic shifts: energy − reference oscillator level."""
        return self.energies - self.reference_energies

    def matrix_element(self, op: str | Callable[[np.ndarray], np.ndarray], i: int, j: int
                       ) -> float:
        """⟨i|op|j⟩ between levels i and j: ``op`` a power (``"x**2"``, ``"r**2"``; exact
        from the banded operators) or a function of the coordinate (quadrature), in the phase
        convention of :mod:`anharmony.observables` (docs/observables.md)."""
        from .observables import matrix_element

        return matrix_element(self, op, i, j)

    def wavefunction(self, k: int, grid: np.ndarray) -> np.ndarray:
        """ψ_k on ``grid`` (1D), or the radial function R_k(r) normalised with r^{d−1} dr, in
        the phase convention of :mod:`anharmony.observables`."""
        from .observables import wavefunction

        return wavefunction(self, k, grid)

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


def _positive(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
            or not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name}: must be a positive number; got {value!r}")
    return float(value)


# =========================================================================== value-keyed caches
_CACHES: dict[str, OrderedDict] = {name: OrderedDict() for name in _CACHE_SIZES}


def _well_key(well: Well) -> Hashable | None:
    """A hashable *value* of the well (frozen terms, unit system, mass), or ``None``.

    ``None`` (a term that cannot be hashed) turns caching off for that well: a cache must
    never guess.
    """
    key = (well.terms, well.units, well.mass)
    try:
        hash(key)
    except TypeError:
        return None
    return key


def _cached(kind: str, key: tuple, make: Callable[[], Any]) -> Any:
    """LRU lookup in cache ``kind``; a key holding ``None`` (unhashable well) is not cached."""
    if key[0] is None:
        return make()
    cache = _CACHES[kind]
    try:
        value = cache[key]
    except KeyError:
        value = make()
        cache[key] = value
        while len(cache) > _CACHE_SIZES[kind]:
            cache.popitem(last=False)
        return value
    cache.move_to_end(key)
    return value


def clear_caches() -> None:
    """Empty the reference, phase-space and channel-matrix caches of this module."""
    for cache in _CACHES.values():
        cache.clear()


def _channel_matrices(well: Well, channel: Channel, size: int, length: float, center: float
                      ) -> tuple[ChannelMatrices, np.ndarray]:
    """Channel matrices and their (read-only) sum, from the LRU when the same value was built."""
    def make():
        mats = channel_hamiltonian(well, channel, size, length, center)
        total = mats.total
        total.setflags(write=False)
        return mats, total

    return _cached("matrices", (_well_key(well), channel, int(size), float(length),
                                float(center)), make)


# =========================================================================== semiclassics
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


# =========================================================================== error estimate
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
    at ``ESTIMATE_RATIO_CAP`` and the remainder never below ``ESTIMATE_FLOOR`` · d₁. The
    sub-blocks need eigenvalues only: the cost is ~(¾)³ + (½)³ ≈ 0.55 of an eigenvalue
    solve at N. The constants were chosen on measured ratios to the true error
    (benchmarks/RESULTS.md): it bounds the error on smooth regular convergence and
    overestimates by 1–100×; where a level is still entering the basis (the first drop
    is much steeper than the next) it can underestimate, and the phase-space count
    (:func:`bound_count_estimate`) is the second check there.
    """
    sizes = nested_sizes(h.shape[0], parity_pairs)
    banded = bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * sizes[0]
    band = upper_band(h, bandwidth) if banded else None  # a leading block: its first columns

    def levels_of(m: int, top: int) -> np.ndarray:
        if band is not None and bandwidth is not None and bandwidth <= BANDED_MAX_RATIO * m:
            return band_eigenvalues(band, m, top)
        block = np.ascontiguousarray(h[:m, :m])
        return eigh(block, eigvals_only=True, subset_by_index=(0, top - 1), driver="evr",
                    overwrite_a=True, check_finite=False)

    return _nested_rule(energies, levels_of, sizes, rounding)


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


def _nested_rule(energies: np.ndarray, levels_of: Callable[[int, int], np.ndarray],
                 sizes: tuple[int, int], rounding: float) -> np.ndarray:
    """The estimate of :func:`nested_error_estimate` from E(N) and the sub-blocks' levels
    (``levels_of(m, top)``: the lowest ``top`` eigenvalues of the leading m-block)."""
    k = len(energies)
    e1 = _padded(levels_of, sizes[0], k)
    with np.errstate(invalid="ignore", over="ignore"):
        # differences within the eigensolvers' rounding (a few eps·‖H‖) carry no information
        d1 = np.maximum(e1 - energies - 2.0 * rounding, 0.0)
    if not np.any(d1 != 0.0):  # no level changed beyond rounding (e1 finite: d₁ = 0): the
        # remainder d₁·(…) is 0 whatever the second block holds, so it is not solved
        return np.full(k, rounding)
    e2 = _padded(levels_of, sizes[1], k)
    with np.errstate(invalid="ignore", over="ignore"):
        d0 = np.maximum(e2 - e1 - 2.0 * rounding, 0.0)
        r = np.where(d0 > 0.0, d1 / np.where(d0 > 0.0, d0, 1.0), ESTIMATE_RATIO_CAP)
        r = np.clip(np.where(np.isfinite(r), r, ESTIMATE_RATIO_CAP), 0.0, ESTIMATE_RATIO_CAP)
        remainder = d1 * np.maximum(r / (1.0 - r), ESTIMATE_FLOOR)
        err = ESTIMATE_SAFETY * remainder + rounding
    err[~np.isfinite(e1)] = np.inf
    # two-window extrapolation needs the smaller block: with d₁ only, no sharpening
    only1 = np.isfinite(e1) & ~np.isfinite(e2)
    err[only1] = ESTIMATE_SAFETY * ESTIMATE_RATIO_CAP / (1 - ESTIMATE_RATIO_CAP) * d1[only1] \
        + rounding
    return err


def band_error_estimate(band: np.ndarray, energies: np.ndarray, rounding: float = 0.0,
                        parity_pairs: bool = False) -> np.ndarray:
    """:func:`nested_error_estimate` of a matrix given in LAPACK upper band storage (the same
    rule, for a scan's pencil A + s B kept banded)."""
    return _nested_rule(energies, lambda m, top: band_eigenvalues(band, m, top),
                        nested_sizes(band.shape[1], parity_pairs), rounding)


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


# =========================================================================== default length
def default_length(well: Well, channel: Channel, levels: int, size: int, ref: Reference
                   ) -> tuple[float, str]:
    """The basis length b of ``length="auto"`` and the reason, as :func:`solve` uses it
    (cached by value); :func:`~anharmony.scan.scan` takes the same b."""
    return _cached("reference", (_well_key(well), channel, levels, size, "length", ref),
                   lambda: _auto_length(well, channel, levels, size, ref))


def _auto_length(well: Well, channel: Channel, levels: int, size: int, ref: Reference
                 ) -> tuple[float, str]:
    """Basis length for ``length="auto"`` and the reason (see :func:`solve`, Notes)."""
    if ref.method == "given":
        return ref.length, "the reference oscillator's length (given)"
    if ref.method == "off-centre":  # a disk about r = 0 cannot fit an orbit about r_m > 0
        return ref.length, ("the reference oscillator's length, sized to reach beyond the "
                            "off-centre minimum (see the reference's reason)")
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


def _check_tolerance(tolerance: Any) -> float:
    if isinstance(tolerance, bool) or not isinstance(tolerance, (int, float, np.floating)) \
            or not math.isfinite(tolerance) or tolerance <= 0:
        raise InputError(f"tolerance: must be a positive number (relative to the level "
                         f"spacing); got {tolerance!r}")
    return float(tolerance)


def solve(well: Well, dimension: int = 3, l: int | None = unset(0), j: Any = None, *,
          size: int = unset(60), length: float | str = "auto",
          units: str | UnitSystem = "oscillator", mass: float | None = None, levels: int = 5,
          reference: str | Mapping[str, float] = "auto",
          tolerance: float = unset(DEFAULT_TOLERANCE), geometry: str = "central",
          omega: int | None = None, parity: Any = None, shells: int | None = None,
          truncation: str | None = None) -> Spectrum | GeometrySpectrum:
    """Lowest levels of one channel of a well in an oscillator basis, each with an error bar.

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
        Oscillator length b of the basis (used exactly as given), or ``"auto"`` (see Notes).
    units
        Unit system of DESIGN §5.
    mass
        Particle mass in the system's mass unit (default per system).
    levels
        Number of levels, counted from the lowest of the channel.
    reference
        Reference oscillator: ``"auto"`` or a mapping (see :func:`reference_oscillator`).
    tolerance
        Error bar allowed for a bound level, relative to the mean spacing of the requested
        levels (ħω of the basis when one level is asked for). Bound levels whose
        :attr:`Spectrum.error_estimate` exceeds it are not ``converged`` and raise one
        :class:`~anharmony.errors.ConvergenceWarning` naming them.
    geometry
        ``"central"`` (one (l) or (l, j) channel, the default), ``"cartesian"`` or ``"axial"``
        (wells without spherical symmetry, DESIGN §10): the call goes to
        :func:`anharmony.geometry.solve_geometry` with the same well, units, mass and levels;
        ``l``, ``j``, ``size``, ``reference`` and ``tolerance`` are refused there when
        written, and ``length`` is ``"auto"`` or one length for every axis
        (:mod:`anharmony.geometry.dispatch`).
    omega
        Axial geometry: the Ω (= Λ) block, ``None`` for all.
    parity
        Cartesian: one entry per axis (+1, −1 or ``None``); axial: +1, −1 or ``None``.
    shells
        Cartesian and axial: N_max of the basis (default 12).
    truncation
        Cartesian and axial: ``"shells"`` (default) or ``"energy"``.

    Returns
    -------
    Spectrum
        For the central geometry; a :class:`~anharmony.geometry.GeometrySpectrum` otherwise.

    Notes
    -----
    ``length="auto"`` chooses b for the requested levels, not only the reference oscillator:
    the semiclassical energy E of the highest requested bound level is found from its
    phase-space action, and b is the length whose oscillator phase-space disk
    (x/b)² + (k b)² ≤ q holds the classical orbit at E with the smallest q — the basis' extent
    √q·b and its resolution √q/b then match the orbit's extent and its largest wave number
    together, for every size N. A harmonic reference keeps its own b when the match is within
    ``LENGTH_KEEP`` (10 %) of it (a near-harmonic well), and a given reference keeps its b.
    Measured against the best b of a scan: within the near-optimal band for quartic, Morse,
    Gaussian and Woods–Saxon wells at N = 20…160 (benchmarks/RESULTS.md).

    The error bar is :func:`nested_error_estimate` of the same matrix (no rebuild). The
    channel matrices of a (well value, channel, size, length, centre) are kept in a small LRU
    cache, so a repeated solve costs about one eigensolve.
    """
    if not (isinstance(geometry, str) and geometry == "central") or \
            any(v is not None for v in (omega, parity, shells, truncation)):
        from .geometry.dispatch import solve_in_geometry

        return solve_in_geometry(well, dimension, l, j, geometry=geometry, omega=omega,
                                 parity=parity, shells=shells, truncation=truncation,
                                 size=size, length=length, units=units, mass=mass,
                                 levels=levels, reference=reference, tolerance=tolerance)
    l, size, tolerance = plain(l), plain(size), plain(tolerance)
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    if isinstance(size, bool) or not isinstance(size, (int, np.integer)) or size < 1:
        raise InputError(f"size: must be an integer >= 1; got {size!r}")
    levels = _check_levels(levels, size)
    tolerance = _check_tolerance(tolerance)
    radial = channel.l is not None
    auto_length = isinstance(length, str) and length == "auto"
    if auto_length or not (isinstance(reference, str) and reference == "auto"):
        ref: Reference | _Deferred = reference_oscillator(well, dimension, l, None, levels,
                                                          reference, channel.j)
        center, v_min = (0.0 if radial else ref.center), ref.v_min
    else:
        # a given length needs no reference: its search is made when it is first read
        # (Spectrum.reference, shifts); centre and V_min are those it will take
        center, v_min = _cached("reference", (_well_key(well), "minimum", radial),
                                lambda: well.minimum(radial=radial)[:2])
        center = 0.0 if radial else center
        made: list[Reference] = []

        def make_reference() -> Reference:
            if not made:
                made.append(reference_oscillator(well, dimension, l, None, levels, reference,
                                                 channel.j))
            return made[0]

        ref = _Deferred(make_reference)
    if auto_length:
        b, why = default_length(well, channel, levels, size, ref)  # type: ignore[arg-type]
    else:
        b, why = _positive("length", length), "given"
    mats, h = _channel_matrices(well, channel, size, b, center)
    energies, vectors = diagonalize(h, levels, mats.bandwidth)
    rounding = matrix_rounding(h)
    scale = max(float(np.max(np.abs(energies - v_min))), mats.hbar_omega)
    unit = "" if system.energy == "1" else " " + system.energy
    if rounding > ROUNDING_WARN * scale:
        warnings.warn(
            f"{channel_label(channel.dimension, channel.l, channel.j, units=system)}: "
            f"the Hamiltonian matrix has norm {rounding / np.finfo(float).eps:.1e}"
            f" (the basis reaches far into a steep wall), so its eigenvalues are uncertain by "
            f"about {rounding:.1e}{unit}; use a smaller size or length",
            ConvergenceWarning, stacklevel=2)
    threshold = _cached("reference", (_well_key(well), "threshold", dimension, radial),
                        lambda: well.threshold(dimension, symmetric=radial))
    bound = energies < threshold
    osc = (2.0 * np.arange(levels) + _lowest_oscillator_level(channel) if radial
           else np.arange(levels) + 0.5)
    if isinstance(ref, Reference):
        ref_levels: np.ndarray | _Deferred = ref.v_min + ref.frequency * osc
    else:
        def reference_levels(make: Callable[[], Reference] = ref.make) -> np.ndarray:
            r = make()
            return r.v_min + r.frequency * osc

        ref_levels = _Deferred(reference_levels)
    errors = nested_error_estimate(h, energies, mats.bandwidth, rounding,
                                   parity_pairs=channel.l is None)
    nb = int(np.count_nonzero(bound))
    spacing = (float(energies[nb - 1] - energies[0]) / (nb - 1) if nb > 1 else 0.0) \
        or mats.hbar_omega
    tol = tolerance * spacing
    converged = bound & (errors <= tol)
    labels = tuple(channel.level_label(n, units=system) for n in range(levels))
    spec = Spectrum(energies=energies, bound=bound, vectors=vectors, channel=channel,
                    basis=mats.basis, reference=ref, threshold=threshold, units=system,
                    mass=mass, well=well, reference_energies=ref_levels, rounding=rounding,
                    error_estimate=errors, converged=converged, tolerance=tol, labels=labels,
                    length_reason=why)
    _warn_unconverged(spec, levels, size, length)
    return spec


def _warn_unconverged(spec: Spectrum, levels: int, size: int, length: Any) -> None:
    """One ConvergenceWarning for bound levels above tolerance or missing bound levels."""
    bad = np.flatnonzero(spec.bound & ~spec.converged)
    problems = []
    unit = "" if spec.units.energy == "1" else " " + spec.units.energy
    if bad.size:
        worst = float(np.max(spec.error_estimate[bad]))
        names = ", ".join(spec.labels[k] for k in bad[:8]) + (", …" if bad.size > 8 else "")
        problems.append(f"level(s) {names} not converged (error estimate up to {worst:.2e}"
                        f"{unit}, tolerance {spec.tolerance:.2e}{unit})")
    found = int(np.count_nonzero(spec.bound))
    if found < levels and math.isfinite(spec.threshold):
        expected = spec.bound_count_estimate
        if math.isfinite(expected) and found < min(levels, expected):
            problems.append(f"the channel holds about {expected:.0f} bound levels "
                            f"(phase-space count) but the basis finds {found} below the "
                            "threshold")
    if not problems:
        return
    hint = ("increase size" if not isinstance(length, str)
            else "increase size (length is chosen automatically)")
    if not isinstance(length, str):
        hint += ", or try length='auto'"
    name = channel_label(spec.channel.dimension, spec.channel.l, spec.channel.j,
                         units=spec.units)
    warnings.warn(f"{name}: " + "; ".join(problems) + f" with size={size}; "
                  f"{hint}", ConvergenceWarning, stacklevel=3)

