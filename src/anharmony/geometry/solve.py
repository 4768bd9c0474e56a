"""The front door of the geometries: :func:`solve_geometry` and :func:`trap_frequencies`.

A well without spherical symmetry is solved in a Cartesian product basis (2D or 3D) or, when
it is symmetric about z, in the axial basis |n_ρ Λ n_z⟩. Conserved parities split the
Hamiltonian into blocks (DESIGN §10); each block is built (kinetic and polynomial terms exact,
the rest by verified quadrature) and diagonalised densely; the levels of all requested blocks
are merged in ascending order.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import ConvergenceWarning, InputError
from ..units import UnitSystem, get_units
from ..well import Well
from .blocks import cartesian_states, quanta_weights
from .build import _axial, _cartesian, _split
from .frequencies import TrapFrequencies, trap_frequencies_of
from .nested import (
    excluded_floor,
    measure,
    nested_error,
    nested_ladder,
    nested_step,
    oscillator_energy,
)
from .potential import (
    axial_polynomial,
    cartesian_polynomial,
    check_terms,
    geometry_threshold,
    is_central,
)
from .spin import has_spin

__all__ = ["GEOMETRIES", "GeometrySpectrum", "shells_for_count", "solve_geometry",
           "trap_frequencies"]

GEOMETRIES = ("cartesian", "axial")
# a bound (or quasi-bound) level whose error bar exceeds this share of the mean level spacing
# is named in a ConvergenceWarning
GEOMETRY_TOLERANCE = 1e-6


@dataclass(frozen=True)
class GeometrySpectrum:
    """Levels of a well in a Cartesian or axial basis.

    Attributes
    ----------
    energies : ndarray
        Lowest levels of the requested blocks, ascending, in the energy unit.
    bound : ndarray of bool
        Below the continuum threshold.
    labels : list of str
        Cartesian: the dominant quanta ``(n_x,n_y,n_z)``; axial: ``Ω^π[N n_z Λ]`` with the
        dominant asymptotic quantum numbers (π left out when parity is not conserved; Ω
        written ``1/2``, ``3/2`` … with spin).
    blocks : list of tuple
        The block of each level: per-axis parities (0 even, 1 odd, None) in the Cartesian
        basis, (Ω, π or None) in the axial one (Ω = Λ without spin, a half-integer float
        with it).
    error_estimate : ndarray
        The error bar of each level from its values in the nested truncations N_max − 2,
        N_max − 4, … of its block (:func:`nested_error`); ``inf`` where a smaller basis has
        no such level, or where the level is ``incomplete``; ``nan`` when not computed. The
        bar belongs to the level of its block (the k-th of the block): in the merged ladder a
        level whose bar is large or infinite may truly lie below its neighbours, so the n-th
        entry is the well's n-th level only within the bars of the entries above it.
    vectors : ndarray
        Eigenvectors on :attr:`states`, shape (states, levels).
    states : ndarray
        Quanta of every basis state of the requested blocks: (n_x, n_y[, n_z]), (n_ρ, Λ, n_z),
        or with spin (n_ρ, Λ, n_z, 2Σ).
    barrier : float
        The escape barrier of an open well (threshold −∞, as under a tilt), NaN otherwise.
    quasi_bound : ndarray of bool
        Open well: the level lies below the escape barrier (its error bar is judged as a
        bound level's is).
    incomplete : ndarray of bool
        The level's energy in the basis oscillator, ⟨H₀⟩, comes within half a quantum of
        ``complete_below``: the truncated basis may lack a state below it, so the level may
        not be the n-th of the well (error bar ``inf``).
    complete_below : float
        The lowest basis-oscillator energy of a state the truncation leaves out, over the
        requested blocks.
    """

    energies: np.ndarray
    bound: np.ndarray
    labels: list[str]
    blocks: list[tuple]
    error_estimate: np.ndarray
    vectors: np.ndarray
    states: np.ndarray
    geometry: str
    dimension: int
    lengths: tuple[float, ...]
    centers: tuple[float, ...]
    shells: int
    truncation: str
    threshold: float
    units: UnitSystem
    mass: float | None
    well: Well = field(repr=False)
    barrier: float = math.nan
    quasi_bound: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    incomplete: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    complete_below: float = math.inf


def _resolve(well, units, mass) -> Well:
    if not isinstance(well, Well):
        raise InputError(f"well: expected an anharmony.Well; got {type(well).__name__}")
    if mass is not None and (isinstance(mass, bool) or not isinstance(mass, (int, float))
                             or not math.isfinite(mass) or mass <= 0):
        raise InputError(f"mass: must be a positive number; got {mass!r}")
    return well.with_context(get_units(units), mass)


def _check_dimension(dimension: Any) -> int:
    if isinstance(dimension, bool) or dimension not in (2, 3):
        raise InputError(f"dimension: Cartesian and axial bases need 2 or 3; got {dimension!r}")
    return int(dimension)


def trap_frequencies(well: Well, dimension: int = 3, *, units: str | UnitSystem = "oscillator",
                     mass: float | None = None, start: Any = None) -> TrapFrequencies:
    """Principal ħω values and axes of the Hessian of V at its minimum.

    Parameters
    ----------
    well
        The well; its terms follow the geometry protocol (:mod:`anharmony.geometry.potential`).
    dimension
        2 or 3.
    units, mass
        Unit system and particle mass (as :func:`anharmony.solve`).
    start
        Where the search for the minimum starts (default the origin); with a tilt the minimum
        is the shifted one.
    """
    well = _resolve(well, units, mass)
    dimension = _check_dimension(dimension)
    check_terms(well, dimension, "cartesian")
    if start is not None:
        start = np.asarray(start, dtype=float)
        if start.shape != (dimension,) or not np.all(np.isfinite(start)):
            raise InputError(f"start: expected {dimension} finite numbers; got {start!r}")
    return trap_frequencies_of(well, dimension, well.units.hbar2_over_2m(well.mass), start)


def _auto_lengths(well, dimension, geometry, c, levels):
    """Basis lengths and centres: the reference oscillator of the well, or of its spherical
    counterpart (deformed terms declare ``spherical()``: a deformed Woods–Saxon surface has
    no useful curvature at the centre), else the Hessian at the minimum."""
    if all(is_central(t) or hasattr(t, "spherical") for t in well.terms):
        from ..reference import reference_oscillator

        central = [t if is_central(t) else t.spherical() for t in well.terms]
        round_well = Well(terms=tuple(central), units=well.units, mass=well.mass)
        b = reference_oscillator(round_well, dimension, 0, None, min(levels, 5),
                                 j=0.5 if has_spin(well) else None).length
        return (b,) * (2 if geometry == "axial" else dimension), \
            (0.0,) * (1 if geometry == "axial" else dimension)
    tf = trap_frequencies_of(well, dimension, c)
    diag = np.diag(tf.hessian)
    hw = np.sqrt(2.0 * c * diag)
    b = np.sqrt(2.0 * c / hw)
    if geometry == "axial":
        return (float(b[0]), float(b[2])), (float(tf.minimum[2]),)
    return tuple(float(v) for v in b), tuple(float(v) for v in tf.minimum)


def _check_lengths(lengths, n, name):
    vals = np.atleast_1d(np.asarray(lengths, dtype=float)) if not isinstance(lengths, str) else \
        None
    if vals is None or vals.ndim != 1 or len(vals) not in (1, n) or \
            not np.all(np.isfinite(vals)) or np.any(vals <= 0 if name == "lengths" else False):
        raise InputError(f"{name}: expected {'1 or ' if n > 1 else ''}{n} "
                         f"{'positive ' if name == 'lengths' else ''}numbers; got {lengths!r}")
    return tuple(float(v) for v in np.broadcast_to(vals, (n,)))


MAX_COUNT = 100_000  # states a count truncation accepts (a dense block of that is hours)


def shells_for_count(count: Any, geometry: str, weights: np.ndarray) -> int:
    """The smallest N_max whose Cartesian basis (weighted by ``weights``) holds ``count``
    states or more; the shell it ends in is kept whole."""
    if geometry != "cartesian":
        raise InputError("count: a count of states cuts the Cartesian basis; the axial basis is "
                         "cut by shells")
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)) or \
            not 1 <= count <= MAX_COUNT:
        raise InputError(f"count: must be an integer from 1 to {MAX_COUNT}; got {count!r}")
    top = 0
    while len(cartesian_states(top, weights)) < count:
        top += 1
    return top


def prepare(well, dimension, geometry, shells, levels, lengths, centers, truncation, units,
            mass):
    """The checked request of a geometry solve: the well in its units, the dimension, ħ²/2m,
    the basis lengths and centres (given, or ``_auto_lengths``) and the quanta weights."""
    well = _resolve(well, units, mass)
    if geometry not in GEOMETRIES:
        raise InputError(f"geometry: expected one of {', '.join(GEOMETRIES)}; got {geometry!r}")
    dimension = _check_dimension(dimension)
    if geometry == "axial" and dimension != 3:
        raise InputError(f"dimension: the axial basis is 3D; got {dimension} (a 2D well "
                         "symmetric about its centre is central: use anharmony.solve)")
    if isinstance(shells, bool) or not isinstance(shells, (int, np.integer)) or shells < 0:
        raise InputError(f"shells: must be an integer >= 0; got {shells!r}")
    if isinstance(levels, bool) or not isinstance(levels, (int, np.integer)) or levels < 1:
        raise InputError(f"levels: must be an integer >= 1; got {levels!r}")
    check_terms(well, dimension, geometry)
    c = well.units.hbar2_over_2m(well.mass)
    naxes = 2 if geometry == "axial" else dimension
    ncent = 1 if geometry == "axial" else dimension
    if lengths is None:
        b, x0 = _auto_lengths(well, dimension, geometry, c, levels)
    else:
        b, x0 = _check_lengths(lengths, naxes, "lengths"), (0.0,) * ncent
    if centers is not None:
        x0 = _check_lengths(centers, ncent, "centers")
    weights = quanta_weights([2.0 * c / v**2 for v in b], truncation)
    return well, dimension, c, b, x0, weights


def solve_shells(well, dimension, geometry, shells, levels, lengths, centers, truncation,
                 units, mass, count, parity=None, omega=None, error_estimate=True):
    """The blocks of a geometry solve at N_max = ``shells`` (chosen from ``count`` when given)
    and the nested truncations below it, for the error bars: the work :func:`solve_geometry`
    and :func:`~anharmony.geometry.by_block.solve_blocks` share.

    Returns a :class:`Blocks`.
    """
    well, dimension, c, b, x0, weights = prepare(well, dimension, geometry, shells, levels,
                                                 lengths, centers, truncation, units, mass)
    if count is not None:
        shells = shells_for_count(count, geometry, weights)
    solver = _cartesian if geometry == "cartesian" else _axial
    main = solver(well, dimension, b, x0, shells, weights, parity, omega, c, levels)
    hw = np.array([2.0 * c / v**2 for v in b])
    step = nested_step(weights)
    poly = (lambda t: cartesian_polynomial(t, dimension)) if geometry == "cartesian" else \
        axial_polynomial
    smooth = _split(well, poly)[2] == "weight" and not has_spin(well)
    ladders, made = {}, {}
    for key, (_, _, st, h) in main.items() if error_estimate else ():
        if id(h) not in made:  # ±Λ (±Ω) share their matrix
            made[id(h)] = nested_ladder(h, measure(geometry, st, weights), shells, levels,
                                        step)
        ladders[key] = made[id(h)]
    return Blocks(well=well, dimension=dimension, hbar2_2m=c, lengths=tuple(b),
                  centers=tuple(x0), shells=int(shells), weights=weights, hw=hw,
                  geometry=geometry, main=main, ladders=ladders, parity=parity, omega=omega,
                  smooth=smooth)


@dataclass(frozen=True)
class Blocks:
    """The solved blocks of one geometry request.

    ``main``: block key → (energies, vectors, states, matrix) at N_max; ``ladders``: block
    key → array (steps, levels) of the same levels in the nested truncations N_max − 2,
    N_max − 4, … (``inf`` where the smaller basis has no such level; empty without error
    estimate); ``hw``: ħω of each basis axis; ``smooth``: every term is a polynomial or
    analytic (quadrature by the Gauss rule of the basis), so the levels converge
    exponentially; a kink or cusp (panels) or a spin–orbit term converges algebraically.
    """

    well: Well
    dimension: int
    hbar2_2m: float
    lengths: tuple[float, ...]
    centers: tuple[float, ...]
    shells: int
    weights: np.ndarray
    hw: np.ndarray
    geometry: str
    main: dict
    ladders: dict
    parity: Any = None
    omega: Any = None
    smooth: bool = True

    def errors(self, key) -> np.ndarray:
        """The error bar of each level of block ``key`` (:func:`nested_error`)."""
        e = self.main[key][0]
        if key not in self.ladders:
            return np.full(len(e), math.nan)
        ladder = self.ladders[key].copy()
        # a sub-basis that lacks an oscillator state below the level (its ⟨H₀⟩ reaches the
        # sub-basis' floor) may hold another state in its place: no change is read there
        content = self.content(key)
        step = nested_step(self.weights)
        for j in range(len(ladder)):
            floor = excluded_floor(self.geometry, self.shells - step * (j + 1), self.weights,
                                   self.hw, [key])
            ladder[j, :len(e)][content > floor - self.margin()] = math.inf
        return nested_error(e, ladder, self.smooth)

    def content(self, key) -> np.ndarray:
        """⟨H₀⟩ of each level of block ``key``: its energy in the basis oscillator."""
        _, vec, st, _ = self.main[key]
        return oscillator_energy(self.geometry, st, self.hw) @ (vec * vec)

    def floor(self, keys=None) -> float:
        """The lowest basis-oscillator energy of a state that the truncation leaves out, over
        the blocks ``keys`` (default: every block of the request, the empty ones included):
        below it the basis holds every oscillator state of those blocks."""
        return excluded_floor(self.geometry, self.shells, self.weights, self.hw,
                              self.main if keys is None else keys,
                              every=keys is None and self.omega is None, parity=self.parity)

    def margin(self) -> float:
        """Half the smallest basis quantum: how far below :meth:`floor` a level's ⟨H₀⟩ must
        lie to count as complete."""
        return 0.5 * float(np.min(self.hw))


def solve_geometry(well: Well, dimension: int = 3, *, geometry: str = "cartesian",
                   omega: int | None = None, parity: Any = None, shells: int = 12,
                   lengths: Any = None, centers: Any = None, truncation: str = "shells",
                   units: str | UnitSystem = "oscillator", mass: float | None = None,
                   levels: int = 10, error_estimate: bool = True,
                   count: int | None = None) -> GeometrySpectrum:
    """Lowest levels of a well in a Cartesian or axial oscillator basis.

    Parameters
    ----------
    well
        The well (terms follow :mod:`anharmony.geometry.potential`).
    dimension
        2 or 3 (axial: 3).
    geometry
        ``"cartesian"`` or ``"axial"``.
    omega
        Axial only: the Ω block; ``None`` for every block, each level listed for +Ω and −Ω
        (Λ ≠ 0 without spin). Without spin–orbit terms Ω = Λ, an integer; with a
        ``spin_orbit`` or ``deformed_spin_orbit`` term the particle has spin ½, Ω = Λ + Σ is a
        half-integer (0.5 or ``"1/2"``), and each block joins Λ = Ω − ½ (spin up) and
        Λ = Ω + ½ (spin down) (:mod:`anharmony.geometry.spin`).
    parity
        Cartesian: ``None`` (every block) or one entry per axis, +1, −1 or ``None`` (both);
        axial: ``None`` (both parities in one list), +1 or −1. A parity needs a well even
        about the basis centre along that axis.
    shells
        N_max of the truncation.
    lengths
        Oscillator lengths, one per axis ((b_⊥, b_z) axial); ``None``: the reference
        oscillator (central wells) or the Hessian at the minimum.
    centers
        Basis centres, one per axis (axial: c_z only); with ``lengths=None`` the minimum.
    truncation
        ``"shells"`` (quanta ≤ N_max) or ``"energy"`` (deformed-basis energy ≤ N_max ħω₀);
        see :mod:`anharmony.geometry.blocks`.
    levels
        Number of levels returned (fewer if the blocks hold fewer states).
    error_estimate
        Also solve the nested truncations N_max − 2, N_max − 4, … (sub-blocks of the same
        matrices) and report each level's error bar (:func:`nested_error`).
    count
        Cartesian only: instead of ``shells``, the smallest N_max (of the ``truncation``)
        whose basis holds at least this many states; the last shell is kept whole, so that
        no symmetry is cut (:func:`shells_for_count`).
    """
    if omega is not None and geometry != "axial":
        raise InputError("omega: only the axial geometry has Ω blocks")
    res = solve_shells(well, dimension, geometry, shells, levels, lengths, centers, truncation,
                       units, mass, count, parity, omega, error_estimate)
    well, main, shells = res.well, res.main, res.shells
    energies, where = [], []
    for key, (e, _, _, _) in main.items():
        energies += list(e)
        where += [(key, k) for k in range(len(e))]
    order = np.argsort(energies, kind="stable")[:levels]
    states = np.concatenate([st for _, _, st, _ in main.values()])
    offsets = np.cumsum([0] + [len(st) for _, _, st, _ in main.values()])
    offset_of = dict(zip(main, offsets[:-1], strict=True))
    vectors = np.zeros((len(states), len(order)))
    labels, blocks, err = [], [], np.full(len(order), np.nan)
    content = np.zeros(len(order))
    errors = {key: res.errors(key) for key in main} if error_estimate else {}
    contents = {key: res.content(key) for key in main}
    for col, i in enumerate(order):
        key, k = where[i]
        e, vec, st, _ = main[key]
        v = vec[:, k]
        vectors[offset_of[key]:offset_of[key] + len(st), col] = v
        labels.append(_label(geometry, key, st[np.argmax(v * v)]))
        blocks.append(key)
        content[col] = contents[key][k]
        if error_estimate:
            err[col] = errors[key][k]
    if len(order) < levels:
        raise InputError(f"levels: {levels} levels asked for, but the requested blocks hold "
                         f"{len(order)} states up to shells = {shells}; raise shells or ask "
                         "for fewer levels")
    # the merged ladder is complete below the lowest oscillator state any requested block
    # lacks (a missing state of one block would sit between the levels of the others)
    complete_below = res.floor()
    incomplete = content > complete_below - res.margin()
    err[incomplete] = math.inf
    e_out = np.asarray(energies)[order]
    threshold = geometry_threshold(well, dimension)
    barrier = open_barrier(well, dimension, res.hbar2_2m, threshold)
    bound = e_out < threshold
    quasi = ~bound & (e_out < barrier)
    warn_levels(e_out, err, labels, bound, quasi, incomplete, shells, truncation, barrier,
                tolerance=None)
    return GeometrySpectrum(
        energies=e_out, bound=bound, labels=labels, blocks=blocks,
        error_estimate=err, vectors=vectors, states=states, geometry=geometry,
        dimension=dimension, lengths=tuple(res.lengths), centers=tuple(res.centers),
        shells=int(shells), truncation=truncation, threshold=threshold, units=well.units,
        mass=well.mass, well=well, barrier=barrier, quasi_bound=quasi, incomplete=incomplete,
        complete_below=complete_below)


def open_barrier(well, dimension: int, hbar2_2m: float, threshold: float) -> float:
    """The escape barrier of an open well (threshold −∞), NaN otherwise or when the well has
    no minimum to start from (:func:`~anharmony.geometry.saddle.escape_barrier`)."""
    if threshold != -math.inf:
        return math.nan
    from ..errors import AnharmonyError
    from .saddle import escape_barrier

    try:
        minimum = trap_frequencies_of(well, dimension, hbar2_2m).minimum
        return float(escape_barrier(well, dimension, minimum))
    except (AnharmonyError, ValueError, ArithmeticError, np.linalg.LinAlgError):
        return math.nan


def judged(bound: np.ndarray, quasi: np.ndarray) -> np.ndarray:
    """The levels whose convergence is judged: bound, or quasi-bound below the barrier."""
    return np.asarray(bound) | np.asarray(quasi)


def warn_levels(energies, err, labels, bound, quasi, incomplete, shells, truncation, barrier,
                tolerance=None, where="") -> None:
    """The ConvergenceWarnings of a geometry solve.

    - levels whose ⟨H₀⟩ reaches the lowest oscillator state the basis leaves out (error bar
      ``inf``): the basis may skip states below them;
    - bound or quasi-bound levels whose error bar exceeds ``tolerance`` (energy), or, without
      one, :data:`GEOMETRY_TOLERANCE` of the mean spacing of those levels;
    - in an open well, how many levels lie above the escape barrier (not judged).
    """
    energies, err = np.asarray(energies, dtype=float), np.asarray(err, dtype=float)
    labels = list(labels)
    if np.any(incomplete):
        names = [lab for lab, f in zip(labels, incomplete, strict=True) if f]
        hint = ("raise shells, or use truncation='energy' (it keeps the states of the soft "
                "axes)" if truncation == "shells" else "raise shells")
        warnings.warn(f"{len(names)} level(s){where} lie where the truncated basis (shells = "
                      f"{shells}, truncation '{truncation}') lacks some oscillator states "
                      f"below them, so a lower level may be missing: {_shown(names)}; their "
                      f"error bar is inf; {hint}", ConvergenceWarning, stacklevel=3)
    look = judged(bound, quasi) & ~np.asarray(incomplete)
    if tolerance is None:
        e = np.unique(energies[look])
        spacing = float(np.mean(np.diff(e))) if e.size > 1 else 1.0
        tol, said = GEOMETRY_TOLERANCE * spacing, f"{GEOMETRY_TOLERANCE:g} of the level spacing"
    else:
        tol, said = tolerance, f"{tolerance:g}"
    bad = [lab for lab, j, x in zip(labels, look, err, strict=True)
           if j and not math.isnan(x) and not x <= tol]  # NaN: not estimated
    kind = "bound or quasi-bound" if np.any(quasi) or math.isfinite(barrier) else "bound"
    if bad:
        warnings.warn(f"{len(bad)} {kind} level(s) not converged{where} (error bar from the "
                      f"nested truncations below shells = {shells} above {said}): "
                      f"{_shown(bad)}; raise shells", ConvergenceWarning, stacklevel=3)
    if math.isfinite(barrier):
        above = int(np.count_nonzero(~np.asarray(bound) & ~np.asarray(quasi)
                                     & np.isfinite(energies)))
        if above:
            warnings.warn(f"the well is open{where}: {above} level(s) lie above its escape "
                          f"barrier {barrier:.6g} (they are not quasi-bound; their error bars "
                          "are not judged)", ConvergenceWarning, stacklevel=3)


def _shown(names) -> str:
    return ", ".join(names[:8]) + (", …" if len(names) > 8 else "")


def _label(geometry, key, quanta):
    if geometry == "cartesian":
        return "(" + ",".join(str(int(n)) for n in quanta) + ")"
    n_rho, lam, n_z = (int(v) for v in quanta[:3])
    big_n = 2 * n_rho + abs(lam) + n_z
    pi = key[1]
    sign = "" if pi is None else ("+" if pi > 0 else "-")
    om = key[0]
    shown = str(om) if float(om).is_integer() else f"{round(2 * om)}/2"
    q = (big_n, n_z, abs(lam))
    # [N n_z Λ] written together as the trade does while every number is one digit; with a
    # number of two digits ([10 1 9] would read [1019]) they are separated by commas
    inner = "".join(map(str, q)) if max(q) < 10 else ",".join(map(str, q))
    return f"{shown}{sign}[{inner}]"
