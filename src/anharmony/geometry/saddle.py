"""The escape barrier of an open well: :func:`escape_saddle` finds the lowest mountain pass out
of the basin of the minimum (a grid flooded in order of rising V, the pass refined to a
first-order saddle), :func:`escape_barrier` its energy."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from ..errors import AnharmonyWarning, InputError
from .potential import axial_value, cartesian_value, check_terms

__all__ = ["EscapeSaddle", "escape_barrier", "escape_saddle"]



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
