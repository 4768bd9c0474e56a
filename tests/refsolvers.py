"""Independent reference eigenvalue solvers for tests (scipy only; never imports anharmony).

They check the oscillator-basis results of the package by a different method:

- finite differences on a uniform grid, second order, solved as a symmetric tridiagonal
  eigenproblem with :func:`scipy.linalg.eigh_tridiagonal` (``select="i"``);
- Richardson extrapolation in h² over three grids, with an error estimate;
- a shooting solver (:func:`scipy.integrate.solve_ivp` + :func:`scipy.optimize.brentq`) that
  finds level k of a channel by counting nodes (Prüfer angle), with no energy guess, for
  levels near threshold, where a grid would need a very large box.

Problems
--------
Radial, in ``d`` dimensions, for ``u(r) = r^((d-1)/2) R(r)`` and ``l_eff = l + (d-3)/2``::

    -c [u'' - l_eff (l_eff + 1) u / r²] + V(r) u = E u,     c = ħ²/2m,

with ``u`` regular at 0 and ``u(r_max) = 0``. A spin–orbit term is simply part of ``V``
(the caller passes ``V(r) + <l·s> V_ls(r)``). In 1D, ``l = 0`` is the even and ``l = 1`` the
odd parity channel of a symmetric well on ``[-r_max, r_max]``. On a line without symmetry::

    -c ψ'' + V(x) ψ = E ψ,   ψ(x_min) = ψ(x_max) = 0.

Discretisations (common practice, no source; see e.g. R. J. LeVeque, *Finite Difference
Methods for Ordinary and Partial Differential Equations*, SIAM 2007, ch. 2):

- odd ``d`` with ``l_eff >= 0`` (3D; 1D odd): ``u`` on the vertex grid ``r_i = i h``,
  ``i = 1..n``, ``h = r_max/(n+1)``, 3-point second difference, Dirichlet at 0 and ``r_max``.
  For a potential analytic and even in r the solution extends smoothly to an odd function and
  the eigenvalue error is a series in h², h⁴, ...
- even ``d`` (2D), and 1D even parity: ``R`` in flux (finite-volume) form
  ``-(1/r^(d-1)) (r^(d-1) R')' + l(l+d-2)/r² R`` on the cell-centred grid
  ``r_i = (i - 1/2) h``, ``h = r_max/(n + 1/2)``, zero flux through ``r = 0`` and ``R = 0`` at
  ``r_max``; symmetrised with the cell measure ``r_i^(d-1) h``. (The ``u`` form converges only
  like h for 2D, l = 0, where ``u ~ r^(1/2)``.)
- line: vertex grid on ``[x_min, x_max]``, 3-point difference, Dirichlet at both ends.

Limitations: the box error (``~ exp(-2 κ r_max)`` for a level bound by ``c κ²``) is not a power
of h and survives the extrapolation; a potential that is not smooth at the origin (Coulomb:
``u = r e^{-r}`` has an odd extension with a kink in ``u''``) spoils the pure-h² series beyond
the leading terms, so the extrapolated error is larger than for smooth wells; rounding of
``eigh_tridiagonal`` is about ``eps · 4c/h²`` absolute.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp
from scipy.linalg import eigh_tridiagonal
from scipy.optimize import brentq

__all__ = [
    "Extrapolated",
    "line_fd_levels",
    "line_richardson_levels",
    "radial_fd_levels",
    "radial_fd_step",
    "richardson",
    "richardson_levels",
    "shooting_level",
]

Potential = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class Extrapolated:
    """Levels extrapolated to zero grid step.

    Attributes
    ----------
    energies
        Extrapolated levels, shape ``(levels,)``.
    error
        Error estimate, ``truncation + rounding``.
    truncation
        ``|T[-1, -1] - T[-1, -2]|``, the difference between the last two entries of the
        Richardson table (the last step's correction). Conservative: it is the error of the
        second-to-last entry, so the final value is usually much better.
    rounding
        Bound of the rounding of the eigenvalues (``eps`` × the largest matrix norm),
        amplified by the sum of the absolute Richardson weights.
    raw
        Finite-difference levels of each grid, shape ``(len(grids), levels)``.
    steps
        Grid step h of each grid.
    grids
        Number of grid points of each grid.
    """

    energies: np.ndarray
    error: np.ndarray
    truncation: np.ndarray
    rounding: np.ndarray
    raw: np.ndarray
    steps: np.ndarray
    grids: tuple[int, ...]


# --------------------------------------------------------------------------- validation
def _positive(name: str, value: float) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{name} must be a finite positive number; got {value!r}")
    return value


def _count(name: str, value: int, minimum: int) -> int:
    if isinstance(value, bool) or int(value) != value or value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value!r}")
    return int(value)


def _channel(l: int, dimension: int) -> tuple[int, int]:
    dimension = _count("dimension", dimension, 1)
    l = _count("l", l, 0)
    if dimension == 1 and l > 1:
        raise ValueError(f"l must be 0 (even) or 1 (odd) in one dimension; got {l!r}")
    return l, dimension


def _potential_values(V: Potential, coords: np.ndarray) -> np.ndarray:
    values = np.broadcast_to(np.asarray(V(coords), dtype=float), coords.shape)
    if not np.all(np.isfinite(values)):
        bad = coords[~np.isfinite(values)][0]
        raise ValueError(f"V must be finite on the grid; V({bad!r}) = {V(np.array([bad]))!r}")
    return values


def _lowest(diag: np.ndarray, off: np.ndarray, levels: int) -> np.ndarray:
    if levels > diag.size:
        raise ValueError(
            f"levels must be at most the number of grid points {diag.size}; got {levels}"
        )
    return eigh_tridiagonal(diag, off, eigvals_only=True, select="i", select_range=(0, levels - 1))


# -------------------------------------------------------------------------- radial grids
def _vertex_scheme(l: int, dimension: int) -> bool:
    """True for the u-form on the vertex grid; False for the flux form on cell centres."""
    return dimension % 2 == 1 and l + (dimension - 3) // 2 >= 0


def radial_fd_step(l: int, dimension: int, r_max: float, n_grid: int) -> float:
    """Grid step h that :func:`radial_fd_levels` uses for these arguments."""
    l, dimension = _channel(l, dimension)
    if _vertex_scheme(l, dimension):
        return float(r_max) / (n_grid + 1)
    return float(r_max) / (n_grid + 0.5)


def _radial_matrix(
    V: Potential, l: int, dimension: int, c: float, r_max: float, n: int
) -> tuple[np.ndarray, np.ndarray]:
    """Diagonal and off-diagonal of the symmetric tridiagonal radial matrix."""
    h = radial_fd_step(l, dimension, r_max, n)
    if _vertex_scheme(l, dimension):
        r = h * np.arange(1, n + 1)
        le = l + (dimension - 3) / 2
        diag = 2.0 * c / h**2 + c * le * (le + 1.0) / r**2 + _potential_values(V, r)
        return diag, np.full(n - 1, -c / h**2)
    # flux form for R on the cell-centred grid r_i = (i - 1/2) h
    r = h * (np.arange(1, n + 1) - 0.5)
    faces = h * np.arange(0, n + 1)  # face j between cells j and j+1; face 0 is r = 0
    w = faces ** (dimension - 1)
    w[0] = 0.0  # no flux through the origin (1D: even parity, R'(0) = 0)
    measure = r ** (dimension - 1) * h
    centrifugal = l * (l + dimension - 2) / r**2
    # face n is shared with the Dirichlet point r_max = (n + 1/2) h, a distance h from r_n
    k_diag = c * (w[:-1] + w[1:]) / h + measure * (c * centrifugal + _potential_values(V, r))
    k_off = -c * w[1:-1] / h
    s = 1.0 / np.sqrt(measure)
    return k_diag * s * s, k_off * s[:-1] * s[1:]


def _line_matrix(
    V: Potential, c: float, x_min: float, x_max: float, n: int
) -> tuple[np.ndarray, np.ndarray]:
    h = (x_max - x_min) / (n + 1)
    x = x_min + h * np.arange(1, n + 1)
    return 2.0 * c / h**2 + _potential_values(V, x), np.full(n - 1, -c / h**2)


def _norm(diag: np.ndarray, off: np.ndarray) -> float:
    """Infinity norm of the tridiagonal matrix (scale of eigh_tridiagonal's rounding)."""
    row = np.abs(diag).copy()
    row[:-1] += np.abs(off)
    row[1:] += np.abs(off)
    return float(row.max())


def radial_fd_levels(
    V: Potential,
    l: int,
    dimension: int,
    hbar2_2m: float,
    r_max: float,
    n_grid: int,
    levels: int,
) -> np.ndarray:
    """Lowest levels of a central well in ``dimension`` dimensions by finite differences.

    Parameters
    ----------
    V
        Vectorised potential ``V(r)`` (include any spin–orbit term already multiplied by
        ``<l·s>``). Never evaluated at ``r = 0``.
    l
        Angular momentum (1D: 0 even, 1 odd parity).
    dimension
        1, 2, 3 (any d >= 1 works).
    hbar2_2m
        ħ²/2m in the energy × length² unit of ``V``.
    r_max
        Box radius; ``u(r_max) = 0``.
    n_grid
        Number of unknowns.
    levels
        How many of the lowest levels to return.

    Returns
    -------
    ndarray
        ``levels`` eigenvalues in ascending order. Second-order accurate in
        ``h = radial_fd_step(...)``; rounding about ``eps · 4c/h²`` absolute.
    """
    l, dimension = _channel(l, dimension)
    c = _positive("hbar2_2m", hbar2_2m)
    r_max = _positive("r_max", r_max)
    n = _count("n_grid", n_grid, 3)
    levels = _count("levels", levels, 1)
    return _lowest(*_radial_matrix(V, l, dimension, c, r_max, n), levels)


def line_fd_levels(
    V: Potential, hbar2_2m: float, x_min: float, x_max: float, n_grid: int, levels: int
) -> np.ndarray:
    """Lowest levels of ``-c ψ'' + V ψ = E ψ`` on ``[x_min, x_max]`` with ψ = 0 at both ends.

    The vertex grid has ``n_grid`` interior points and step
    ``h = (x_max - x_min)/(n_grid + 1)``. Second-order accurate.
    """
    c = _positive("hbar2_2m", hbar2_2m)
    x_min, x_max = _interval(x_min, x_max)
    n = _count("n_grid", n_grid, 3)
    levels = _count("levels", levels, 1)
    return _lowest(*_line_matrix(V, c, x_min, x_max, n), levels)


def _interval(x_min: float, x_max: float) -> tuple[float, float]:
    x_min, x_max = float(x_min), float(x_max)
    if not (math.isfinite(x_min) and math.isfinite(x_max) and x_max > x_min):
        raise ValueError(f"x_max must be finite and above x_min; got [{x_min!r}, {x_max!r}]")
    return x_min, x_max


# ------------------------------------------------------------------------------ Richardson
def richardson(values: np.ndarray, steps: Sequence[float], power: int = 2) -> np.ndarray:
    """Richardson table for values with an error series in ``h^power, h^(2 power), ...``.

    Parameters
    ----------
    values
        Shape ``(m, ...)``: the quantity on ``m`` grids.
    steps
        The ``m`` grid steps (any distinct values; they need not halve).

    Returns
    -------
    ndarray
        Shape ``(m, m, ...)``: ``T[i, k]`` eliminates the first ``k`` error terms using grids
        ``i-k .. i`` (Neville's scheme in ``t = h^power``); ``T[-1, -1]`` is the final value.

    Notes
    -----
    ``T[i, k] = T[i, k-1] + (T[i, k-1] - T[i-1, k-1]) t_i / (t_{i-k} - t_i)`` — polynomial
    extrapolation to t = 0 (L. F. Richardson, Phil. Trans. R. Soc. A 210, 307 (1911);
    Neville's algorithm, e.g. Press et al., *Numerical Recipes*, 3rd ed., §3.2).
    """
    values = np.asarray(values, dtype=float)
    t = np.asarray(steps, dtype=float) ** power
    m = values.shape[0]
    if t.shape != (m,) or len(set(t.tolist())) != m:
        raise ValueError(f"steps must be {m} distinct grid steps; got {list(steps)!r}")
    table = np.full((m, m, *values.shape[1:]), np.nan)
    table[:, 0] = values
    for k in range(1, m):
        for i in range(k, m):
            table[i, k] = table[i, k - 1] + (table[i, k - 1] - table[i - 1, k - 1]) * t[i] / (
                t[i - k] - t[i]
            )
    return table


def _extrapolate(
    matrices: list[tuple[np.ndarray, np.ndarray]],
    levels: int,
    steps: np.ndarray,
    grids: tuple[int, ...],
) -> Extrapolated:
    raw = np.array([_lowest(d, o, levels) for d, o in matrices])
    table = richardson(raw, steps, power=2)
    best = table[-1, -1]
    truncation = np.abs(best - table[-1, -2])
    # The final value is sum_i w_i E_i (linear in the raw levels): rounding of each raw level,
    # bounded by eps times the matrix norm, is amplified by sum |w_i|.
    weights = richardson(np.eye(len(grids)), steps, power=2)[-1, -1]
    bound = np.finfo(float).eps * max(_norm(d, o) for d, o in matrices)
    rounding = np.full_like(best, float(np.sum(np.abs(weights))) * bound)
    return Extrapolated(
        energies=best,
        error=truncation + rounding,
        truncation=truncation,
        rounding=rounding,
        raw=raw,
        steps=steps,
        grids=grids,
    )


def _grids(grids: Sequence[int]) -> tuple[int, ...]:
    grids = tuple(_count("grids[]", g, 3) for g in grids)
    if len(grids) < 2 or len(set(grids)) != len(grids):
        raise ValueError(f"grids must hold at least two distinct sizes; got {grids!r}")
    return grids


def richardson_levels(
    V: Potential,
    l: int,
    dimension: int,
    hbar2_2m: float,
    r_max: float,
    levels: int,
    grids: Sequence[int] = (1000, 2000, 4000),
) -> Extrapolated:
    """:func:`radial_fd_levels` on several grids, extrapolated in h² (Richardson).

    With three grids the h² and h⁴ terms are removed, with four also h⁶. The box error is not
    (choose ``r_max`` so that the levels' tails are negligible there). Finer grids lower the
    truncation error but raise rounding (``∝ 1/h²``); for wells a few length units wide,
    steps of 1e-3 to 1e-2 of ``r_max`` balance the two.
    """
    l, dimension = _channel(l, dimension)
    c = _positive("hbar2_2m", hbar2_2m)
    r_max = _positive("r_max", r_max)
    levels = _count("levels", levels, 1)
    grids = _grids(grids)
    matrices = [_radial_matrix(V, l, dimension, c, r_max, n) for n in grids]
    steps = np.array([radial_fd_step(l, dimension, r_max, n) for n in grids])
    return _extrapolate(matrices, levels, steps, grids)


def line_richardson_levels(
    V: Potential,
    hbar2_2m: float,
    x_min: float,
    x_max: float,
    levels: int,
    grids: Sequence[int] = (1000, 2000, 4000),
) -> Extrapolated:
    """:func:`line_fd_levels` on several grids, extrapolated in h² (Richardson)."""
    c = _positive("hbar2_2m", hbar2_2m)
    x_min, x_max = _interval(x_min, x_max)
    levels = _count("levels", levels, 1)
    grids = _grids(grids)
    matrices = [_line_matrix(V, c, x_min, x_max, n) for n in grids]
    steps = np.array([(x_max - x_min) / (n + 1) for n in grids])
    return _extrapolate(matrices, levels, steps, grids)


# -------------------------------------------------------------------------------- shooting
def shooting_level(
    V: Potential,
    l: int,
    hbar2_2m: float,
    level: int,
    r_max: float,
    dimension: int = 3,
    r_start: float = 1e-6,
    rtol: float = 1e-12,
) -> float:
    """Level number ``level`` of the radial problem, found on its own by counting nodes.

    Parameters
    ----------
    V, l, hbar2_2m, dimension
        As for :func:`radial_fd_levels`.
    level
        Which level of the channel: 0 is the lowest; level k is the one whose ``u`` has k
        nodes in ``(0, ∞)``. No energy guess is needed.
    r_max
        Outer end, where the inward solution starts on the decaying WKB branch
        ``u'/u = -κ``, ``κ² = l_eff(l_eff+1)/r² + (V - E)/c``; it can be far out, which is
        what near-threshold levels need. Levels at or above ``V(r_max)`` are refused.
    r_start
        Inner start of the outward solution, ``u ~ r^(l_eff+1)``; the error it leaves is
        of order ``r_start²`` relative. The 1D even channel starts at 0 with ``u' = 0``.
    rtol
        Relative tolerance of :func:`solve_ivp` (DOP853).

    Returns
    -------
    float
        The level, to about ``rtol`` relative.

    Raises
    ------
    ValueError
        If the channel has at most ``level`` levels below ``V(r_max)``.

    Notes
    -----
    Counting: the Prüfer angle θ, ``u = ρ sin θ``, ``u' = ρ cos θ``, of the outward solution
    of ``u'' = q u`` obeys ``θ' = cos²θ − q sin²θ``; θ rises through every multiple of π
    (θ' = 1 there), so ``floor(θ/π)`` is the number of nodes so far. Beyond the outermost
    classical turning point (q > 0) a θ with ``sin 2θ > 0`` stays in its π-interval, so the
    count is final there. By the Sturm oscillation theorem the count is the number of levels
    below E; bisection on it, from ``min V`` (below the whole spectrum) to ``V(r_max)``,
    isolates level ``level`` between two energies. Matching: in that interval the level is
    the unique zero of the Wronskian ``u_out u_in' − u_out' u_in`` at the turning point of
    outward and inward unit-vector solutions (``v' = A v − (vᵀ A v) v``,
    ``A = [[0, 1], [q, 0]]``, so neither end overflows), found by
    :func:`scipy.optimize.brentq`. Sturm oscillation theorem and the Prüfer angle: E. A.
    Coddington & N. Levinson, *Theory of Ordinary Differential Equations* (McGraw-Hill 1955),
    ch. 8; shooting to a fitting point: W. H. Press et al., *Numerical Recipes*, 3rd ed.,
    §18.1.
    """
    l, dimension = _channel(l, dimension)
    c = _positive("hbar2_2m", hbar2_2m)
    r_max = _positive("r_max", r_max)
    level = _count("level", level, 0)
    le = l + (dimension - 3) / 2
    cent = le * (le + 1.0)

    def vat(r: float) -> float:
        return float(np.asarray(V(np.array([r])), dtype=float)[0])

    def q(r: float, e: float) -> float:
        return (cent / r**2 if cent else 0.0) + (vat(r) - e) / c

    if le == -1.0:  # 1D even parity: regular start at the origin, u(0) = 1, u'(0) = 0
        r0, start = 0.0, np.array([1.0, 0.0])
    else:
        r0 = float(r_start)
        start = np.array([r0, le + 1.0])  # (u, u') ∝ (r, s) for u = r^s, s = l_eff + 1
        start /= np.linalg.norm(start)
    theta0 = math.atan2(start[0], start[1])

    rs = np.linspace(r_max * 1e-5, r_max, 20001)
    barrier = cent / rs**2 if cent else np.zeros_like(rs)
    v_grid = _potential_values(V, rs)
    lo = float(np.min(v_grid + c * np.minimum(barrier, 0.0)))
    lo -= 1.0 + 1e-3 * abs(lo)  # below the whole spectrum (the kinetic energy is >= 0)
    top = vat(r_max)

    def turning_point(e: float) -> float | None:
        """Outermost grid radius with q <= 0 (classically allowed), None if there is none."""
        allowed = np.nonzero(barrier + (v_grid - e) / c <= 0.0)[0]
        return float(rs[allowed[-1]]) if allowed.size else None

    def theta_rhs(e: float):
        def rhs(r, y):
            sn, cs = math.sin(y[0]), math.cos(y[0])
            return [cs * cs - q(r, e) * sn * sn]

        return rhs

    def nodes(e: float) -> int:
        """Nodes of the outward solution on (0, r_max) (= levels below e, Sturm)."""
        r_t = turning_point(e)
        if r_t is None or e <= lo:
            return 0
        r_t = min(max(r_t, r0), r_max)
        rhs = theta_rhs(e)
        sol = solve_ivp(rhs, (r0, r_t), [theta0], method="DOP853", rtol=rtol, atol=rtol * 1e-2)
        th = float(sol.y[0, -1])
        if math.sin(2.0 * th) <= 0.0 and r_t < r_max:  # not settled: follow until it is

            def settled(r, y):
                return math.sin(2.0 * y[0])

            settled.terminal, settled.direction = True, 1.0
            sol = solve_ivp(rhs, (r_t, r_max), [th], method="DOP853", rtol=rtol,
                            atol=rtol * 1e-2, events=settled)
            th = float(sol.y[0, -1])
        if not sol.success:
            raise RuntimeError(f"solve_ivp failed at E = {e!r}: {sol.message}")
        # a stop on the event leaves θ at a multiple of π/2 to rounding: at mπ (a node just
        # passed) the count is m, at (m − ½)π it is m − 1; both are floor(θ/π + tiny)
        return math.floor(th / math.pi + 1e-9)

    if nodes(top) <= level:
        raise ValueError(
            f"level {level} is not bound below V(r_max) = {top:.6g}: the channel has only "
            f"{nodes(top)} level(s) there (raise r_max, or ask for a lower level)"
        )
    hi = top
    n_lo, n_hi = 0, nodes(hi)
    # isolate level `level` in (lo, hi), with hi below the top: a threshold state at V(r_max)
    # (a half-bound state, as in Pöschl–Teller wells of integer s) zeroes the matching there
    while not (n_lo == level and n_hi == level + 1) or hi == top:
        mid = 0.5 * (lo + hi)
        n_mid = nodes(mid)
        if n_mid <= level:
            lo, n_lo = mid, n_mid
        else:
            hi, n_hi = mid, n_mid

    r_match = turning_point(0.5 * (lo + hi)) or 0.5 * r_max
    r_match = min(max(r_match, r0 + 1e-3 * r_max), 0.999 * r_max)

    def direction(e: float, r_from: float, r_to: float, v0: np.ndarray) -> np.ndarray:
        def rhs(r, v):
            av = np.array([v[1], q(r, e) * v[0]])
            return av - (v @ av) * v

        sol = solve_ivp(rhs, (r_from, r_to), v0, method="DOP853", rtol=rtol, atol=rtol * 1e-2)
        if not sol.success:
            raise RuntimeError(f"solve_ivp failed at E = {e!r}: {sol.message}")
        return sol.y[:, -1]

    def mismatch(e: float) -> float:
        v_out = direction(e, r0, r_match, start)
        kappa2 = q(r_max, e)
        kappa = math.sqrt(kappa2) if kappa2 > 0 else 0.0
        v_in0 = np.array([1.0, -kappa]) / math.hypot(1.0, kappa)
        v_in = direction(e, r_max, r_match, v_in0)
        return float(v_out[0] * v_in[1] - v_out[1] * v_in[0])

    f_lo, f_hi = mismatch(lo), mismatch(hi)
    if f_lo * f_hi > 0:
        raise RuntimeError(
            f"level {level} lies in ({lo!r}, {hi!r}) by its node count, but the matching "
            f"function has the same sign at both ends ({f_lo:.3g}, {f_hi:.3g})"
        )
    return float(brentq(mismatch, lo, hi, xtol=1e-15 * max(1.0, abs(lo), abs(hi)), rtol=1e-15))
