"""How the terms of a well are evaluated off the line: the geometry protocol.

A term enters a Cartesian or axial basis through at most three optional methods; a term that
has none of them must be central (a function of r = |x| alone, centred at 0) and falls back on
its ``value(r)``:

==========================================  ====================================================
method                                      meaning
==========================================  ====================================================
``value_cartesian(*coords)``                V at Cartesian points (x, y) or (x, y, z), arrays
                                            that broadcast against each other
``value_axial(rho, z)``                     V at cylindrical points; only for terms symmetric
                                            about the z axis (``is_axial()``, when present,
                                            says whether this instance is)
``polynomial_cartesian(dimension)``         {(p_x, p_y[, p_z]): c} with V = Σ c x^p_x y^p_y z^p_z
                                            (absolute coordinates), or ``None``; polynomial
                                            terms enter exactly (Kronecker products of banded
                                            coordinate powers)
``polynomial_axial()``                      {(p_ρ, p_z): c} with V = Σ c ρ^p_ρ z^p_z, p_ρ even,
                                            or ``None``
==========================================  ====================================================

A non-central term declares ``central = False``; its ``limits()[1]`` is read as the lowest value
it tends to far from the centre in any direction (its share of the continuum threshold).
A non-central term with an ``axis`` attribute (``"x"``, ``"y"`` or ``"z"``, like ``tilt``) is a
function of that coordinate alone: ``value(x_axis)``, its ``polynomial()`` in that coordinate,
and ``min(limits())`` as its share of the threshold; it is axial when the axis is z. When the
shares add up to ∞ − ∞ the threshold is found by probing V far out in 26 directions.
Spin–orbit terms (``spin_orbit`` and ``deformed_spin_orbit``) enter the axial geometry only,
through ``gradient_axial(rho, z)`` (:mod:`anharmony.geometry.spin`); they are left out of the
potential sums below.

An open well (threshold −∞) holds quasi-bound levels below its escape energy:
:func:`escape_saddle` finds the lowest mountain pass out of the basin of the minimum (a grid
flood by V, refined to a first-order saddle), :func:`escape_barrier` its energy.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from itertools import product

import numpy as np

from ..errors import AnharmonyWarning, InputError

__all__ = [
    "EscapeSaddle",
    "axial_polynomial",
    "axial_value",
    "cartesian_polynomial",
    "cartesian_value",
    "check_terms",
    "escape_barrier",
    "escape_saddle",
    "geometry_threshold",
    "is_central",
    "needs_panels",
    "reflection_symmetric",
]


_AXES = ("x", "y", "z")


def axis_of(term) -> int | None:
    """The index of the one Cartesian coordinate a non-central term depends on, or ``None``."""
    if getattr(term, "central", True) or hasattr(term, "value_cartesian"):
        return None
    axis = getattr(term, "axis", None)
    return _AXES.index(axis) if axis in _AXES else None


def is_central(term) -> bool:
    """True for a term that is a function of r alone (the fallback of the protocol)."""
    return bool(getattr(term, "central", True)) and not hasattr(term, "value_cartesian")


def check_terms(well, dimension: int, geometry: str) -> None:
    """Refuse terms that cannot enter a basis of this geometry, naming them."""
    for i, t in enumerate(well.terms):
        where = f"well[{i}].{t.kind}"
        if getattr(t, "spin_orbit", False):
            if geometry != "axial" or not hasattr(t, "gradient_axial"):
                raise InputError(f"{where}: spin-orbit terms need the axial geometry (Ω "
                                 "blocks with spin 1/2); the Cartesian basis has no spin")
            continue
        if is_central(t):
            if getattr(t, "center", 0.0) != 0.0:
                raise InputError(f"{where}.center: a central term in {dimension}D must be "
                                 f"centred at r = 0; got {t.center}")
            continue
        axis = axis_of(t)
        if axis is not None:
            if axis >= dimension:
                raise InputError(f"{where}.axis: {_AXES[axis]} is not an axis in {dimension}D")
            if geometry == "axial" and axis != 2:
                raise InputError(f"{where}.axis: only a term along z keeps the symmetry about "
                                 "the z axis; use geometry='cartesian'")
            continue
        axial = hasattr(t, "value_axial") and getattr(t, "is_axial", lambda: True)()
        if geometry == "axial" and not axial:
            raise InputError(f"{where}: the term is not symmetric about the z axis; use "
                             "geometry='cartesian'")
        if geometry == "cartesian" and not hasattr(t, "value_cartesian"):
            raise InputError(f"{where}: the term has no Cartesian form; use geometry='axial'")
        dims = getattr(t, "dimensions", (2, 3))
        if dimension not in dims:
            raise InputError(f"{where}: the term is defined in {' or '.join(map(str, dims))}D; "
                             f"got dimension={dimension}")


def cartesian_value(well, coords: Sequence[np.ndarray]) -> np.ndarray:
    """Sum of the terms (spin–orbit excluded) at Cartesian points."""
    coords = [np.asarray(c, dtype=float) for c in coords]
    out = np.zeros(np.broadcast_shapes(*(c.shape for c in coords)))
    r = None
    for t in well.terms:
        if getattr(t, "spin_orbit", False):
            continue
        if hasattr(t, "value_cartesian"):
            out = out + t.value_cartesian(*coords)
        elif axis_of(t) is not None:
            out = out + t.value(coords[axis_of(t)])
        else:
            if r is None:
                r = np.sqrt(sum(c * c for c in coords))
            out = out + t.value(r)
    return out


def axial_value(well, rho: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Sum of the terms (spin–orbit excluded) at cylindrical points (symmetric about z)."""
    rho, z = np.asarray(rho, dtype=float), np.asarray(z, dtype=float)
    out = np.zeros(np.broadcast_shapes(rho.shape, z.shape))
    for t in well.terms:
        if getattr(t, "spin_orbit", False):
            continue
        if hasattr(t, "value_axial"):
            out = out + t.value_axial(rho, z)
        elif axis_of(t) is not None:
            out = out + t.value(z)
        else:
            out = out + t.value(np.sqrt(rho * rho + z * z))
    return out


def cartesian_polynomial(term, dimension: int) -> dict[tuple[int, ...], float] | None:
    """The term as Σ c x^p (absolute coordinates), or ``None`` if it is not a polynomial.

    Central polynomial terms with only even powers of r expand exactly:
    r^{2k} = (Σ x_i²)^k by the multinomial theorem.
    """
    f = getattr(term, "polynomial_cartesian", None)
    if f is not None:
        return f(dimension)
    axis = axis_of(term)
    if axis is not None:
        return _shifted(term, lambda p: tuple(p if a == axis else 0 for a in range(dimension)))
    if not is_central(term):
        return None
    poly = term.polynomial()
    if poly is None or any(p % 2 or p < 0 for p in poly):
        return None
    out: dict[tuple[int, ...], float] = {}
    for p, c in poly.items():
        k = p // 2
        for ks in product(range(k + 1), repeat=dimension):
            if sum(ks) != k:
                continue
            coef = math.factorial(k)
            for ki in ks:
                coef //= math.factorial(ki)
            key = tuple(2 * ki for ki in ks)
            out[key] = out.get(key, 0.0) + c * coef
    return out


def axial_polynomial(term) -> dict[tuple[int, int], float] | None:
    """The term as Σ c ρ^p_ρ z^p_z (p_ρ even), or ``None``; central r^{2k} = (ρ² + z²)^k."""
    f = getattr(term, "polynomial_axial", None)
    if f is not None:
        return f()
    if axis_of(term) is not None:
        return _shifted(term, lambda p: (0, p))
    if not is_central(term):
        return None
    poly = term.polynomial()
    if poly is None or any(p % 2 or p < 0 for p in poly):
        return None
    out: dict[tuple[int, int], float] = {}
    for p, c in poly.items():
        k = p // 2
        for j in range(k + 1):
            key = (2 * j, 2 * (k - j))
            out[key] = out.get(key, 0.0) + c * math.comb(k, j)
    return out


_SMOOTH_CENTRAL = ("gaussian", "poschl_teller")  # analytic in r², hence in x, y, z


def needs_panels(term) -> bool:
    """True if the term has a kink the Gauss–Hermite rules would converge on only slowly.

    A term off the line declares ``quadrature_geometry = "panels"`` for that (default
    ``"weight"``); a central term is smooth in x, y, z only when it is analytic in r²
    (declared ``quadrature_radial = "weight"``, or one of the smooth kinds).
    """
    if not is_central(term):
        return getattr(term, "quadrature_geometry", "weight") == "panels"
    declared = getattr(term, "quadrature_radial", None)
    if declared is not None:
        return declared != "weight"
    return term.kind not in _SMOOTH_CENTRAL


def _shifted(term, key):
    """A one-axis polynomial Σ c (x − x₀)^p expanded in powers of x, keyed by ``key(p)``."""
    poly = term.polynomial()
    if poly is None:
        return None
    x0 = getattr(term, "center", 0.0)
    out: dict = {}
    for p, c in poly.items():
        for k in range(p + 1):
            out[key(k)] = out.get(key(k), 0.0) + c * math.comb(p, k) * (-x0) ** (p - k)
    return out


def geometry_threshold(well, dimension: int = 3) -> float:
    """Continuum threshold: the sum of the terms' far limits (probed when that is ∞ − ∞)."""
    total = 0.0
    for t in well.terms:
        lo, hi = t.limits()
        total += min(lo, hi) if axis_of(t) is not None else hi
    if not math.isnan(total):
        return total
    dirs = np.array([d for d in product((-1.0, 0.0, 1.0), repeat=dimension) if any(d)])
    dirs /= np.linalg.norm(dirs, axis=1)[:, None]
    far = 1e3 * well.scale
    with np.errstate(all="ignore"):
        v1 = cartesian_value(well, list((far * dirs).T))
        v2 = cartesian_value(well, list((2.0 * far * dirs).T))
    grow = v2 > 2.0 * np.abs(v1)  # still growing: unbounded that way (common practice)
    fall = v2 < -2.0 * np.abs(v1)
    lim = np.where(grow, np.inf, np.where(fall, -np.inf, v2))
    return float(np.min(lim))


# ---------------------------------------------------------------------------------------
# The escape barrier of an open well: the lowest mountain pass out of the basin of the minimum

_GRID_POINTS = {2: 129, 3: 49}  # grid nodes per axis (Cartesian 2D, 3D); axial: 129 in z, 65 in ρ
# nodes at start + L sinh(α u)/sinh(α), u uniform in [−1, 1]: α ≥ 3 (~10× denser at the
# minimum than at the edge), more where that keeps the step at the minimum below a tenth of the
# smallest length scale of the terms (a narrow well on a broad one, a box grown ×4)
_STRETCH, _STRETCH_MAX, _CENTRAL_STEP = 3.0, 20.0, 0.1
_BOX_FIRST, _BOX_GROWTH, _BOX_LAST = 8.0, 4.0, 1e3  # box half-widths, in units of well.scale
_NEAR_NODE = 3.0  # the refined saddle lies within this many grid steps of the grid's pass node


@dataclass(frozen=True)
class EscapeSaddle:
    """The lowest pass out of the basin of a minimum of an open well (:func:`escape_saddle`).

    Attributes
    ----------
    energy : float
        V at the pass: the escape energy, below which levels are quasi-bound; NaN when no pass
        was found (``kind == "none"``).
    position : ndarray
        Where the pass is, in ``coordinates``; NaN when none was found.
    coordinates : str
        ``"cartesian"`` ((x, y[, z])) or ``"axial"`` ((ρ, z) of a well symmetric about z; a pass
        off the axis (ρ > 0) is a ring of passes in 3D).
    curvatures : ndarray
        Eigenvalues of the Hessian of V at the pass in those coordinates, ascending: exactly one
        negative at a first-order saddle. NaN when not refined.
    kind : str
        ``"saddle"``: the grid's pass refined to a first-order saddle (∇V = 0 to rounding, one
        negative curvature); ``"grid"``: the refinement failed (a flat or degenerate pass), the
        energy is the grid's minimax level, good to ``resolution``; ``"none"``: no pass inside the
        search box.
    grid_energy : float
        The minimax level of the grid (the highest V on the lowest path of grid nodes).
    resolution : float
        The largest change of V from the grid's pass node to a neighbour: two passes closer
        than this in energy may be taken one for the other.
    extent : float
        Half-width of the search box (about the minimum) that was searched last.
    message : str
        What was found, or why nothing was.
    """

    energy: float
    position: np.ndarray
    coordinates: str
    curvatures: np.ndarray
    kind: str
    grid_energy: float
    resolution: float
    extent: float
    message: str


def escape_barrier(well, dimension: int, start) -> float:
    """The escape energy of an open well (a tilt makes V → −∞ one way): the lowest pass.

    ``escape_saddle(well, dimension, start).energy``; where no pass was found inside the search
    box (or the pass could not be refined to a saddle) an :class:`~anharmony.errors.
    AnharmonyWarning` says so, and the value is NaN (or the grid's estimate, with its
    resolution in the warning). Levels below it are quasi-bound.
    """
    found = escape_saddle(well, dimension, start)
    if found.kind != "saddle":
        warnings.warn(f"escape barrier: {found.message}", AnharmonyWarning, stacklevel=2)
    return float(found.energy)


def escape_saddle(well, dimension: int, start) -> EscapeSaddle:
    """The lowest mountain pass out of the basin of the minimum at ``start``.

    Parameters
    ----------
    well
        The well (its terms follow the geometry protocol).
    dimension
        2 or 3.
    start
        The minimum (Cartesian coordinates), e.g. ``trap_frequencies_of(...).minimum``; a
        point a little off it is moved to the lowest grid node nearby.

    Returns
    -------
    EscapeSaddle
        The pass (``kind`` ``"saddle"``), the grid's estimate of a pass that is no
        first-order saddle (``"grid"``), or the statement that there is none in the box
        (``"none"``).

    Notes
    -----
    The pass is the minimax of V over paths from the minimum to anywhere below the minimum's
    value or off the search box: the basin is flooded in order of rising V until it joins such
    a point (on a grid, by bisection on the level with connected-component labels of the
    sublevel set {V ≤ E}, face-connected, so that a path never jumps a ridge diagonally). The
    grid covers a box of half-width 8 × ``well.scale`` about the minimum, grown ×4 up to 10³ ×
    ``well.scale`` while the basin first meets the box's edge; its nodes (129² in 2D, 49³ in
    3D, 65 × 129 in (ρ, z)) are sinh-stretched about the minimum, with a step there of at most
    a tenth of the smallest length scale of the terms. The
    grid's pass node is then refined to a critical point of V (``scipy.optimize.root`` of the
    central-difference gradient), which is accepted as the pass when its Hessian has exactly
    one negative eigenvalue, it lies within three grid steps of the node, and its energy is
    within the grid's resolution of the grid level. The saddle's energy is then exact to
    rounding (measured: to the last bit against closed forms and roots of the analytic
    gradient); the pass is the lowest one to within the grid's resolution (``resolution``),
    i.e. a lower pass whose grid level lies above the one found by less than that can be
    missed. Time: 1–3 ms in (ρ, z) and 2D, 20–45 ms in 3D (benchmarks/RESULTS_geometry.md).

    A well symmetric about z (every term axial, the minimum on the axis) is searched in the
    half-plane (ρ ≥ 0, z): a path in 3D projects onto it with the same values of V, and the
    axis ρ = 0 is no edge. Other wells are searched in their Cartesian coordinates.
    """
    start = np.asarray(start, dtype=float).reshape(dimension)
    scale = float(well.scale)
    finest = _CENTRAL_STEP * min((t.scale for t in well.terms if t.scale > 0), default=scale)
    axial = dimension == 3 and _all_axial(well) and \
        math.hypot(start[0], start[1]) <= 1e-6 * scale
    if axial:
        def vfun(*c):
            return axial_value(well, np.abs(c[0]), c[1])  # even in ρ about the axis
        origin = np.array([0.0, start[2]])
        coordinates = "axial"
    else:
        def vfun(*c):
            return cartesian_value(well, list(c))
        origin = start
        coordinates = "cartesian"
    half = _BOX_FIRST * scale
    while True:
        found = _pass_in_box(vfun, origin, half, axial, dimension, finest)
        if not isinstance(found, float) or half >= _BOX_LAST * scale:
            break
        half = min(half * _BOX_GROWTH, _BOX_LAST * scale)
    nan = np.full(len(origin), math.nan)
    if isinstance(found, float):
        where = np.round(start, 6).tolist()
        if math.isnan(found):
            why = f"the point {where} is no minimum of V on the search grid"
        else:
            why = (f"no pass out of the basin of the minimum at {where} inside the search box "
                   f"of half-width {half:.6g} about it: the basin reaches the box's edge at "
                   f"V = {found:.6g} first, so the pass (if any) is higher")
        return EscapeSaddle(math.nan, nan, coordinates, nan, "none", found, math.nan, half,
                            why + "; no escape barrier is reported")
    node, level, resolution, steps = found
    saddle = _refine_saddle(vfun, node, steps, axial)
    if saddle is not None:
        point, value, curv = saddle
        near = np.all(np.abs(point - node) <= _NEAR_NODE * steps)
        if near and abs(value - level) <= resolution:
            where = ("(rho, z) = " if axial else "") + str(np.round(point, 6).tolist())
            return EscapeSaddle(value, point, coordinates, curv, "saddle", level, resolution,
                                half, f"first-order saddle at {where}, V = {value:.10g}")
    return EscapeSaddle(level, node, coordinates, nan, "grid", level, resolution, half,
                        f"the lowest pass on the search grid, at {np.round(node, 6).tolist()}, "
                        f"could not be refined to a first-order saddle of V (a flat or "
                        f"degenerate pass); the grid level {level:.6g} is used, good to "
                        f"±{resolution:.2g}")


def _all_axial(well) -> bool:
    try:
        check_terms(well, 3, "axial")
    except InputError:
        return False
    return True


def _stretch(half: float, intervals: int, finest: float) -> float:
    """α of the sinh nodes: the central step L α / (sinh α · intervals) at most ``finest``."""
    from scipy.optimize import brentq

    def excess(a):
        return half * a / (math.sinh(a) * intervals) - finest

    if excess(_STRETCH) <= 0.0:
        return _STRETCH
    if excess(_STRETCH_MAX) > 0.0:
        return _STRETCH_MAX
    return float(brentq(excess, _STRETCH, _STRETCH_MAX, xtol=1e-3))


def _axis_nodes(center: float, half: float, n: int, one_sided: bool, finest: float
                ) -> np.ndarray:
    """Grid nodes about ``center``, denser there (sinh stretching); ``center`` is a node."""
    a = _stretch(half, n - 1 if one_sided else (n - 1) // 2, finest)
    u = np.linspace(0.0 if one_sided else -1.0, 1.0, n)
    return center + half * np.sinh(a * u) / math.sinh(a)


def _pass_in_box(vfun, origin, half, axial, dimension, finest):
    """The grid's lowest pass out of the basin of ``origin`` inside the box.

    Returns the pass node (coordinates), its level, the level's resolution and the local grid
    steps per axis there; or, as a float, the level at which the basin meets the box's edge
    before any pass (NaN when the grid minimum near ``origin`` lies on the edge).
    """
    from scipy import ndimage

    if axial:
        axes = [_axis_nodes(0.0, half, 65, True, finest),
                _axis_nodes(origin[1], half, 129, False, finest)]
    else:
        n = _GRID_POINTS[dimension]
        axes = [_axis_nodes(c, half, n, False, finest) for c in origin]
    mesh = np.meshgrid(*axes, indexing="ij")
    with np.errstate(all="ignore"):
        v = np.asarray(vfun(*mesh), dtype=float)
    v = np.where(np.isnan(v), np.inf, v)  # undefined points are walls: no path through them
    centre = tuple(int(np.argmin(np.abs(a - c))) for a, c in zip(axes, origin, strict=True))
    centre = _grid_descent(v, centre)  # a start a little off the minimum: its grid minimum
    v0 = v[centre]
    edge = np.zeros(v.shape, dtype=bool)
    for i in range(v.ndim):
        idx = [slice(None)] * v.ndim
        if not (axial and i == 0):  # the axis ρ = 0 is no edge
            idx[i] = 0
            edge[tuple(idx)] = True
        idx[i] = -1
        edge[tuple(idx)] = True
    sink = edge | (v < v0)
    flat = v.ravel()
    order = np.argsort(flat, kind="stable")
    levels = flat[order]

    def joined(k):
        lab, _ = ndimage.label(v <= levels[k])
        return bool(np.any(lab[sink] == lab[centre]))

    lo = int(np.searchsorted(levels, v0, side="right")) - 1
    if joined(lo):
        return math.nan  # the descent from origin ended on the box's edge
    hi = len(levels) - 1
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if joined(mid):
            hi = mid
        else:
            lo = mid
    node = np.unravel_index(int(order[hi]), v.shape)
    level = float(levels[hi])
    low_edge = [not (axial and a == 0) for a in range(v.ndim)]  # the axis ρ = 0 is no edge
    if any((i < 2 and low) or i > n - 3
           for i, n, low in zip(node, v.shape, low_edge, strict=True)):
        return level  # the basin reaches (or nearly reaches) the box's edge first: larger box
    around = [v[tuple(np.add(node, d))] for d in _face_steps(v.ndim)]
    finite = [abs(a - level) for a in around if np.isfinite(a)]
    resolution = max(finite, default=math.inf)
    point = np.array([a[i] for a, i in zip(axes, node, strict=True)])
    steps = np.array([0.5 * (a[i + 1] - a[i - 1]) if 0 < i < len(a) - 1 else a[1] - a[0]
                      for a, i in zip(axes, node, strict=True)])
    return point, level, resolution, steps


def _grid_descent(v, node):
    """Steepest descent over face neighbours to a node no neighbour of which is lower."""
    while True:
        best = node
        for d in _face_steps(v.ndim):
            nb = tuple(np.add(node, d))
            if all(0 <= i < n for i, n in zip(nb, v.shape, strict=True)) and v[nb] < v[best]:
                best = nb
        if best == node:
            return node
        node = best


def _face_steps(ndim):
    for i in range(ndim):
        for s in (-1, 1):
            d = [0] * ndim
            d[i] = s
            yield d


def _refine_saddle(vfun, node, steps, axial):
    """A critical point of V near ``node`` with exactly one negative curvature, or ``None``.

    Newton–Powell on the central-difference gradient (step 10⁻³ of the grid step), with the
    central-difference Hessian (step 10⁻² of it) as Jacobian.
    """
    from scipy.optimize import root

    d = len(node)
    hg, hh = 1e-3 * steps, 1e-2 * steps

    def values(points):
        with np.errstate(all="ignore"):
            return np.asarray(vfun(*points.T), dtype=float)

    def gradient(p):
        e = np.diag(hg)
        return (values(p + e) - values(p - e)) / (2.0 * hg)

    def hess(p):
        e = np.diag(hh)
        pts = [p]
        pts += [p + e[i] for i in range(d)] + [p - e[i] for i in range(d)]
        pairs = [(i, j) for i in range(d) for j in range(i)]
        for i, j in pairs:
            pts += [p + e[i] + e[j], p + e[i] - e[j], p - e[i] + e[j], p - e[i] - e[j]]
        f = values(np.array(pts))
        h = np.empty((d, d))
        for i in range(d):
            h[i, i] = (f[1 + i] - 2.0 * f[0] + f[1 + d + i]) / hh[i] ** 2
        for k, (i, j) in enumerate(pairs):
            a, b, c, e4 = f[1 + 2 * d + 4 * k: 5 + 2 * d + 4 * k]
            h[i, j] = h[j, i] = (a - b - c + e4) / (4.0 * hh[i] * hh[j])
        return h

    try:
        sol = root(gradient, node, jac=hess, method="hybr", options={"xtol": 1e-12})
    except (ValueError, np.linalg.LinAlgError):
        return None
    p = np.asarray(sol.x, dtype=float)
    if axial:
        p[0] = abs(p[0])
    if not np.all(np.isfinite(p)):
        return None
    g = gradient(p)
    curv = np.linalg.eigvalsh(hess(p))
    value = float(values(p[None, :])[0])
    top = float(np.max(np.abs(curv)))
    if not (np.all(np.isfinite(curv)) and np.isfinite(value)) or top == 0.0:
        return None
    # ∇V = 0 to well below what the grid could see (a change of V over one grid step)
    if np.any(np.abs(g) * steps > 1e-6 * top * steps**2):
        return None
    if np.sum(curv < -1e-8 * top) != 1 or np.any(np.abs(curv) <= 1e-8 * top):
        return None
    return p, value, curv


def reflection_symmetric(well, axis: int, centers: Sequence[float], extent: Sequence[float],
                         rtol: float = 1e-12) -> bool:
    """True if V is even under x_axis − c → −(x_axis − c), tested on fixed sample points."""
    rng = np.random.default_rng(12345)  # fixed points: the answer must be reproducible
    d = len(centers)
    pts = [c + e * rng.uniform(-3.0, 3.0, 400) for c, e in zip(centers, extent, strict=True)]
    flipped = list(pts)
    flipped[axis] = 2.0 * centers[axis] - pts[axis]
    with np.errstate(all="ignore"):
        a = cartesian_value(well, pts[:d])
        b = cartesian_value(well, flipped[:d])
    fin = np.isfinite(a) & np.isfinite(b)
    if not np.array_equal(np.isfinite(a), np.isfinite(b)):
        return False
    scale = float(np.max(np.abs(a[fin]), initial=0.0)) + 1e-300
    return bool(np.all(np.abs(a[fin] - b[fin]) <= rtol * scale))
