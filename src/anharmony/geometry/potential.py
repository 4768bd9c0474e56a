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
:mod:`.saddle` finds the escape barrier of an open well.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from itertools import product

import numpy as np

from ..errors import InputError

__all__ = [
    "axial_polynomial",
    "axial_value",
    "cartesian_polynomial",
    "cartesian_value",
    "check_terms",
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
