"""Diagonalisation of one channel: :func:`solve` and the :class:`Spectrum` it returns.

:func:`solve` is the friendly front end of DESIGN §8: it validates its arguments once
(:func:`~anharmony.request.resolve_channel`), resolves the reference oscillator
(:mod:`anharmony.reference`), builds the channel matrices and returns a :class:`Spectrum` with
an error bar on every level (:func:`~anharmony.errorbars.nested_error_estimate`), a
basis-independent count of the channel's bound levels
(:func:`~anharmony.semiclassical.bound_count_estimate`) and spectroscopic labels.

Repeated solves are cheap: the channel matrices of a (well value, channel, size, length,
centre) are kept in a small LRU cache keyed by *value* (:mod:`anharmony._caches`), as are the
references and semiclassical tables. The names that moved to those modules stay importable
from here.
"""

from __future__ import annotations

import functools
import math
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

# every name this module had before the reference, the semiclassics, the error bars and the
# eigensolvers moved to their own modules is still importable from here ("re-exported")
from ._caches import (
    _CACHE_SIZES,  # noqa: F401  (re-exported)
    _CACHES,  # noqa: F401  (re-exported)
    _cached,
    _well_key,
    clear_caches,
)
from ._defaults import plain, unset
from .basis import HermiteBasis, RadialBasis
from .eigensolvers import (
    ALL_LEVELS_ROWS,  # noqa: F401  (re-exported)
    BANDED_MAX_RATIO,
    ROUNDING_WARN,
    band_eigenvalues,
    band_rounding,
    diagonalize,
    matrix_rounding,
    upper_band,
)
from .errorbars import (
    ESTIMATE_FLOOR,  # noqa: F401  (re-exported)
    ESTIMATE_RATIO_CAP,  # noqa: F401  (re-exported)
    ESTIMATE_SAFETY,  # noqa: F401  (re-exported)
    ESTIMATE_WINDOW,  # noqa: F401  (re-exported)
    band_error_estimate,
    nested_error_estimate,
    nested_sizes,
)
from .errors import AnharmonyError, ConvergenceWarning, InputError
from .hamiltonian import Channel, ChannelMatrices, channel_hamiltonian
from .labels import channel_label
from .reference import (
    HALF_DEPTH,  # noqa: F401  (re-exported)
    LENGTH_KEEP,  # noqa: F401  (re-exported)
    WALL_FRACTION,  # noqa: F401  (re-exported)
    Reference,
    _lowest_oscillator_level,
    default_length,
    reference_oscillator,
)
from .request import _check_levels, _positive, resolve_channel
from .semiclassical import _phase_space, bound_count_estimate
from .units import UnitSystem
from .well import Well

if TYPE_CHECKING:
    from .geometry import GeometrySpectrum

__all__ = ["BANDED_MAX_RATIO", "DEFAULT_TOLERANCE", "Reference", "Spectrum",
           "band_eigenvalues", "band_error_estimate", "band_rounding", "bound_count_estimate",
           "clear_caches", "diagonalize", "matrix_rounding", "nested_error_estimate",
           "nested_sizes", "reference_oscillator", "resolve_channel", "solve", "upper_band"]

DEFAULT_TOLERANCE = 1e-8  # error bar allowed, relative to the level spacing (or ħω)


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
    # an open line (V → −∞ on one side, as under a tilt): the escape barrier (NaN otherwise)
    # and the levels below it, quasi-bound, whose convergence is judged as a bound level's
    barrier: float = math.nan
    quasi_bound: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))

    def __getstate__(self) -> dict[str, Any]:
        # pickled and copied with every lazy field made (a _Deferred holds a closure)
        return {k: getattr(self, k) if isinstance(v, (_Deferred, _LazyField)) else v
                for k, v in self.__dict__.items()}

    @property
    def bound_count_estimate(self) -> float:
        """Bound levels the channel holds, independent of the basis (see
        :func:`bound_count_estimate`); ``inf`` for a confining well."""
        # the well and channel are resolved already: the same count as
        # bound_count_estimate(well, dimension, l, j) without resolving them again
        center = 0.0
        if self.channel.l is None:
            center = _cached("reference", (_well_key(self.well), "minimum", False),
                             lambda: self.well.minimum(radial=False)[:2])[0]
        return _phase_space(self.well, self.channel, center).count()

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


def _channel_matrices(well: Well, channel: Channel, size: int, length: float, center: float
                      ) -> tuple[ChannelMatrices, np.ndarray]:
    """Channel matrices and their (read-only) sum, from the LRU when the same value was built
    (spin–orbit and potential panel terms integrated together: only the sum is used)."""
    def make():
        mats = channel_hamiltonian(well, channel, size, length, center, combined=True)
        total = mats.total
        total.setflags(write=False)
        return mats, total

    return _cached("matrices", (_well_key(well), channel, int(size), float(length),
                                float(center)), make)


@functools.lru_cache(maxsize=256)
def _labels(channel: Channel, levels: int, system: UnitSystem) -> tuple[str, ...]:
    """Spectroscopic labels of the lowest ``levels`` levels (pure: cached by value)."""
    return tuple(channel.level_label(n, units=system) for n in range(levels))


def check_tolerance(tolerance: Any) -> float:
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
          omega: int | float | str | None = None, parity: Any = None, shells: int | None = None,
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
    tolerance = check_tolerance(tolerance)
    radial = channel.l is not None
    auto_length = isinstance(length, str) and length == "auto"
    if auto_length or not (isinstance(reference, str) and reference == "auto"):
        ref: Reference | _Deferred = reference_oscillator(well, dimension, l, None, levels,
                                                          reference, channel.j)
        center, v_min = (0.0 if radial else ref.center), ref.v_min
    else:
        # a given length needs no reference: its search is made when it is first read
        # (Spectrum.reference, shifts); centre and V_min are those it will take
        def minimum() -> tuple[float, float]:
            return _cached("reference", (_well_key(well), "minimum", radial),
                           lambda: well.minimum(radial=radial)[:2])

        # a radial basis is centred at r = 0 whatever the minimum: V_min is then only the
        # scale of the rounding warning, found below if that warning is in question
        center, v_min = (0.0, None) if radial else minimum()
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
    if v_min is None:  # scale ≥ ħω: no warning below ROUNDING_WARN · ħω whatever V_min is
        v_min = minimum()[1] if rounding > ROUNDING_WARN * mats.hbar_omega else 0.0
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
    barrier, pass_x, side = (line_pass(well) if threshold == -math.inf and not radial
                             else (math.nan, math.nan, math.nan))
    quasi = ~bound & (energies < barrier)
    if quasi.any() and vectors.shape[1] == len(energies):
        # below the pass but living beyond it: a discretised state of the open side
        quasi &= inside_share(mats.basis, vectors, pass_x, side) > QUASI_INSIDE
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
    converged, tol = judge_levels(energies, bound, quasi, errors, tolerance, mats.hbar_omega)
    labels = _labels(channel, levels, system)
    spec = Spectrum(energies=energies, bound=bound, vectors=vectors, channel=channel,
                    basis=mats.basis, reference=ref, threshold=threshold, units=system,
                    mass=mass, well=well, reference_energies=ref_levels, rounding=rounding,
                    error_estimate=errors, converged=converged, tolerance=tol, labels=labels,
                    length_reason=why, barrier=barrier, quasi_bound=quasi)
    _warn_unconverged(spec, levels, size, length)
    return spec


def judge_levels(energies: np.ndarray, bound: np.ndarray, quasi: np.ndarray,
                 errors: np.ndarray, tolerance: float, hbar_omega: float
                 ) -> tuple[np.ndarray, float]:
    """``converged`` of each level and the absolute tolerance, as :func:`solve` judges them:
    a bound or quasi-bound level whose error estimate is within ``tolerance`` × the mean
    spacing of the bound levels (ħω of the basis with fewer than two bound levels)."""
    nb = int(np.count_nonzero(bound))
    spacing = (float(energies[nb - 1] - energies[0]) / (nb - 1) if nb > 1 else 0.0) \
        or hbar_omega
    tol = tolerance * spacing
    return (bound | quasi) & (errors <= tol), tol


def line_pass(well: Well) -> tuple[float, float, float]:
    """(energy, position, side) of the escape barrier of an open line: from the minimum, the
    highest V on each side up to where V falls below V_min (far out, 10³ length scales),
    lowest over the sides that fall; ``side`` is +1 or −1, the direction from the minimum in
    which V falls beyond the pass. NaNs if no side falls below V_min or there is no minimum."""
    from scipy.optimize import minimize_scalar

    try:
        x0, v0, _ = well.minimum(radial=False)
    except (AnharmonyError, ValueError, ArithmeticError):
        return math.nan, math.nan, math.nan
    r = np.concatenate([[0.0], np.geomspace(1e-3, 1e3, 2000) * well.scale])
    best = (math.nan, math.nan, math.nan)
    for side in (1.0, -1.0):
        with np.errstate(all="ignore"):
            v = np.asarray(well.value(x0 + side * r), dtype=float)
        below = np.flatnonzero(v < v0)
        if below.size == 0:
            continue
        stop = int(below[0])
        i = int(np.argmax(v[:stop + 1]))
        lo, hi = r[max(i - 1, 0)], r[min(i + 1, stop)]
        peak, at = float(v[i]), float(r[i])
        if hi > lo:
            def minus(t: float, s: float = side) -> float:
                with np.errstate(all="ignore"):
                    return -float(well.value(np.array([x0 + s * t]))[0])

            res = minimize_scalar(minus, bounds=(lo, hi), method="bounded",
                                  options={"xatol": 1e-12 * max(hi, 1.0)})
            if -float(res.fun) > peak:
                peak, at = -float(res.fun), float(res.x)
        if math.isnan(best[0]) or peak < best[0]:
            best = (peak, x0 + side * at, side)
    return best


QUASI_INSIDE = 0.5  # a quasi-bound level holds more than this share of its density inside


def inside_share(basis: Any, vectors: np.ndarray, position: float, side: float
                 ) -> np.ndarray:
    """Share of each level's density on the well's side of the pass at ``position`` (the
    rest lies beyond it, on the side ``side`` where V falls): a discretised state of the
    open side has most of its density beyond the pass."""
    reach = 1.2 * basis.length * math.sqrt(2.0 * basis.size + 1.0)
    x = np.linspace(basis.center - reach, basis.center + reach, 8 * basis.size + 401)
    dens = (vectors.T @ basis.functions(x)) ** 2
    total = dens.sum(axis=1)
    inside = dens[:, (x - position) * side <= 0.0].sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total > 0, inside / total, 0.0)


def _warn_unconverged(spec: Spectrum, levels: int, size: int, length: Any) -> None:
    """One ConvergenceWarning for bound (or quasi-bound) levels above tolerance, missing bound
    levels, and the levels of an open line above its escape barrier."""
    judged = spec.bound | spec.quasi_bound
    bad = np.flatnonzero(judged & ~spec.converged)
    problems = []
    unit = "" if spec.units.energy == "1" else " " + spec.units.energy
    name = channel_label(spec.channel.dimension, spec.channel.l, spec.channel.j,
                         units=spec.units)
    if math.isfinite(spec.barrier) and np.any(~judged):
        above = int(np.count_nonzero(~judged & (spec.energies >= spec.barrier)))
        beyond = int(np.count_nonzero(~judged & (spec.energies < spec.barrier)))
        parts = [f"{above} above it"] if above else []
        if beyond:
            parts.append(f"{beyond} below it that live beyond the pass (states of the open "
                         "side)")
        warnings.warn(f"{name}: the well is open (V falls without bound on one side): "
                      f"{int(np.count_nonzero(spec.quasi_bound))} level(s) lie below its "
                      f"escape barrier {spec.barrier:.6g}{unit} and are quasi-bound, "
                      f"{' and '.join(parts)} (not quasi-bound: their error bars are not "
                      "judged)", ConvergenceWarning, stacklevel=3)
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
    warnings.warn(f"{name}: " + "; ".join(problems) + f" with size={size}; "
                  f"{hint}", ConvergenceWarning, stacklevel=3)
