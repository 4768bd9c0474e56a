"""Degenerate Rayleigh–Schrödinger perturbation theory in the Cartesian basis.

A deformation of a spherical oscillator, an anisotropic quartic or a coupling x·y splits the
degenerate shells of the reference oscillator, and non-degenerate perturbation theory is then
undefined (zero denominators). Here H(λ) = H₀ + λW with H₀ the harmonic reference along the
axes (Σ ħω_i (n_i + ½) + V_min) and W = V − V_ref; for a degenerate level E₀ of H₀ with space D:

- first order: the eigenvalues E₁ of W restricted to D, and the zeroth-order states they fix;
- second order: the effective operator M = P W Q (E₀ − H₀)⁻¹ Q W P (Q the complement of D),
  diagonalised within each set of sublevels that E₁ leaves degenerate — E₂ are its eigenvalues
  (standard degenerate perturbation theory; e.g. Sakurai, Modern Quantum Mechanics, §5.2).

For a polynomial W of degree p, the states W couples to D lie within p quanta of it, so a basis
of N_D + p shells makes E₁ and E₂ exact; they are then also computed as exact numbers with
sympy (oscillator units, :func:`degenerate_series` with ``exact=True``).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
from scipy.linalg import eigh

from ..errors import InputError
from ..units import UnitSystem
from .blocks import cartesian_states
from .cartesian import CartesianBasis
from .frequencies import trap_frequencies_of
from .potential import cartesian_polynomial, cartesian_value, check_terms

__all__ = ["DegenerateSeries", "degenerate_series"]

_GROUP_RTOL = 1e-9  # first-order values closer than this (relative to max |W_DD|) are one set
MAX_EXACT_STATES = 400  # the exact (sympy) path is for small bases: W's shells around D
MAX_QUANTA = 40  # highest reference level asked for, in quanta (beyond: a long state count)
MAX_SHELLS = 60  # largest basis, as the geometries' space.shells


@dataclass(frozen=True)
class DegenerateSeries:
    """The sublevels of one degenerate reference level, to second order in λ.

    Attributes
    ----------
    reference_energy : float
        E₀ of the degenerate level of H₀ (energy unit).
    states : ndarray
        Quanta (n_x, n_y[, n_z]) of the degenerate space D.
    coefficients : ndarray
        Shape (sublevels, 3): E₀, E₁, E₂ of each sublevel, ordered by (E₁, E₂).
    labels : list of str
        The dominant quanta of each sublevel's zeroth-order state, ``(n_x,n_y)``.
    exact : list of tuple or None
        (E₀, E₁, E₂) of each sublevel as sympy numbers (oscillator units, polynomial W), in
        the order of ``coefficients``; ``None`` when not computed.
    frequencies : tuple of float
        ħω_i of the reference along each axis.
    shells : int
        N_max of the basis the sums over states ran over.
    complete : bool
        True when W is a polynomial and the basis holds every state it couples to D (the
        second order is then exact; otherwise it is truncated at ``shells``).
    """

    reference_energy: float
    states: np.ndarray
    coefficients: np.ndarray
    labels: list[str]
    exact: list[tuple[Any, Any, Any]] | None
    frequencies: tuple[float, ...]
    shells: int
    complete: bool

    def partial_sums(self, lam: float = 1.0) -> np.ndarray:
        """E₀ + λE₁ and E₀ + λE₁ + λ²E₂ of each sublevel, shape (sublevels, 2)."""
        c = self.coefficients
        first = c[:, 0] + lam * c[:, 1]
        return np.column_stack([first, first + lam * lam * c[:, 2]])


def _reference(well, dimension, c, frequencies, centers):
    """ħω_i, lengths, centres and V_min of the reference: given, or the Hessian's diagonal."""
    if frequencies is None:
        tf = trap_frequencies_of(well, dimension, c)
        diag = np.diag(tf.hessian)
        if np.any(diag <= 0.0):
            raise InputError("reference: the well's curvature along an axis is not positive at "
                             "its minimum; give reference frequencies")
        hw = np.sqrt(2.0 * c * diag)
        x0 = np.asarray(tf.minimum, dtype=float) if centers is None else np.asarray(centers)
    else:
        hw = np.asarray(frequencies, dtype=float).reshape(-1)
        if hw.size == 1:
            hw = np.full(dimension, float(hw[0]))
        if hw.size != dimension or not np.all(np.isfinite(hw)) or np.any(hw <= 0.0):
            raise InputError(f"frequencies: expected 1 or {dimension} positive numbers; "
                             f"got {frequencies!r}")
        x0 = np.zeros(dimension) if centers is None else np.asarray(centers, dtype=float)
    if x0.shape != (dimension,) or not np.all(np.isfinite(x0)):
        raise InputError(f"centers: expected {dimension} finite numbers; got {centers!r}")
    v_min = float(cartesian_value(well, list(x0[:, None])).ravel()[0])
    return hw, np.sqrt(2.0 * c / hw), x0, v_min


def _reference_polynomial(hw, b, x0, v_min, dimension):
    """V_ref = V_min + Σ ½ k_i (x_i − c_i)² as {powers: coefficient} (absolute coordinates)."""
    out: dict[tuple[int, ...], float] = {(0,) * dimension: v_min}
    for i in range(dimension):
        k = hw[i] / b[i] ** 2  # m ω² = ħω / b²
        e = [0] * dimension
        for p, coef in ((2, 0.5 * k), (1, -k * x0[i]), (0, 0.5 * k * x0[i] ** 2)):
            e[i] = p
            key = tuple(e)
            out[key] = out.get(key, 0.0) + coef
    return out


def degenerate_series(well, dimension: int = 2, *, level: int = 1, shells: int | None = None,
                      frequencies: Any = None, centers: Any = None,
                      units: str | UnitSystem = "oscillator", mass: float | None = None,
                      exact: bool | str = "auto") -> DegenerateSeries:
    """Degenerate RS perturbation theory, to second order, for one level of the reference.

    Parameters
    ----------
    well
        The well (terms as for ``geometry="cartesian"``).
    dimension
        2 or 3.
    level
        Which distinct level of H₀, counted from 0 (the ground level); level 1 of an isotropic
        2D reference is the shell N = 1 with states (1, 0) and (0, 1).
    shells
        N_max of the basis for the sums over states; default the level's quanta plus the
        degree of W when W is a polynomial (exact), else plus 12.
    frequencies
        ħω of the reference, one per axis or one for all; default the diagonal of the Hessian
        of V at its minimum (off-diagonal curvature, such as a coupling x·y, goes into W).
    centers
        Centre of the reference per axis (default the minimum, or 0 with given frequencies).
    units, mass
        As :func:`anharmony.solve`.
    exact
        ``True``: also the exact E₁, E₂ with sympy (oscillator units, polynomial W);
        ``"auto"``: when W is a polynomial in oscillator units and the basis is small.
    """
    from .solve import _check_dimension, _resolve

    well = _resolve(well, units, mass)
    dimension = _check_dimension(dimension)
    check_terms(well, dimension, "cartesian")
    if isinstance(level, bool) or not isinstance(level, (int, np.integer)) or level < 0:
        raise InputError(f"level: must be an integer >= 0; got {level!r}")
    c = well.units.hbar2_over_2m(well.mass)
    hw, b, x0, v_min = _reference(well, dimension, c, frequencies, centers)
    poly = _polynomial_well(well, dimension)
    degree = max((sum(k) for k in poly), default=0) if poly is not None else None
    # the distinct reference levels, from enough shells to reach `level`
    weights = hw / hw.min()
    top = 0
    while len(_distinct(_energies(cartesian_states(top, weights), hw))) <= level:
        top += 1
        if top > MAX_QUANTA:
            raise InputError(f"level: {level} is beyond the levels of the reference with up to "
                             f"{MAX_QUANTA} quanta; ask for a lower level")
    e_ref = _distinct(_energies(cartesian_states(top, weights), hw))[level]
    level_quanta = top
    if shells is None:
        shells = level_quanta + (degree if degree is not None else 12)
    if isinstance(shells, bool) or not isinstance(shells, (int, np.integer)) or \
            not level_quanta <= shells <= MAX_SHELLS:
        raise InputError(f"shells: must be an integer from {level_quanta} (the level's "
                         f"quanta) to {MAX_SHELLS}; got {shells!r}")
    states = cartesian_states(int(shells), weights)
    e0 = _energies(states, hw)
    in_d = np.isclose(e0, e_ref, rtol=1e-12, atol=1e-12 * float(hw.max()))
    basis = CartesianBasis(states, b, x0)
    idx = np.arange(len(states))
    w = _w_matrix(well, basis, idx, poly, _reference_polynomial(hw, b, x0, v_min, dimension),
                  dimension)
    d, q = np.flatnonzero(in_d), np.flatnonzero(~in_d)
    coeffs, zeroth = _second_order(w, e0, d, q)
    order = np.lexsort((coeffs[:, 1], coeffs[:, 0]))
    coeffs, zeroth = coeffs[order], zeroth[:, order]
    e_out = np.column_stack([np.full(len(d), e_ref + v_min), coeffs])
    labels = ["(" + ",".join(str(int(n)) for n in states[d][np.argmax(zeroth[:, k] ** 2)]) + ")"
              for k in range(len(d))]
    complete = degree is not None and shells >= level_quanta + degree
    want = exact is True or (exact == "auto" and complete and well.units.name == "oscillator"
                             and len(states) <= MAX_EXACT_STATES)
    if exact is True and not (poly is not None and well.units.name == "oscillator"):
        raise InputError("exact: the exact series needs a polynomial well in oscillator units")
    if exact is True and len(states) > MAX_EXACT_STATES:
        raise InputError(f"exact: the basis has {len(states)} states, more than the "
                         f"{MAX_EXACT_STATES} the exact (sympy) sums are made for; lower shells "
                         "or use exact='auto'")
    exact_values = _exact(poly, hw, x0, v_min, states, d, q, dimension, e_ref) if want else None
    if exact_values is not None:
        exact_values.sort(key=lambda t: (float(t[1]), float(t[2])))
    return DegenerateSeries(reference_energy=float(e_ref + v_min), states=states[d],
                            coefficients=e_out, labels=labels, exact=exact_values,
                            frequencies=tuple(float(v) for v in hw), shells=int(shells),
                            complete=bool(complete))


def _energies(states, hw):
    return (states + 0.5) @ hw


def _distinct(values):
    out: list[float] = []
    for v in np.sort(values):
        if not out or v - out[-1] > 1e-12 * max(1.0, abs(v)):
            out.append(float(v))
    return out


def _polynomial_well(well, dimension):
    """The whole well as Σ c x^p (absolute coordinates), or ``None``."""
    total: dict[tuple[int, ...], float] = {}
    for t in well.terms:
        p = cartesian_polynomial(t, dimension)
        if p is None:
            return None
        for k, v in p.items():
            total[k] = total.get(k, 0.0) + v
    return total


def _w_matrix(well, basis, idx, poly, ref_poly, dimension):
    """W = V − V_ref on the basis: exact for polynomial wells, quadrature otherwise."""
    neg = {k: -v for k, v in ref_poly.items()}
    if poly is not None:
        merged = dict(poly)
        for k, v in neg.items():
            merged[k] = merged.get(k, 0.0) + v
        return basis.polynomial(merged, idx)
    return basis.polynomial(neg, idx) + basis.quadrature(
        lambda *xs: cartesian_value(well, xs), idx, kind="weight")


def _groups(values, scale):
    """Index sets of ``values`` (sorted) that agree to _GROUP_RTOL · scale."""
    out: list[list[int]] = []
    for i, v in enumerate(values):
        if out and abs(v - values[out[-1][-1]]) <= _GROUP_RTOL * scale:
            out[-1].append(i)
        else:
            out.append([i])
    return out


def _second_order(w, e0, d, q):
    """(E₁, E₂) of each sublevel and its zeroth-order state in D (columns)."""
    w_dd = w[np.ix_(d, d)]
    e1, u = eigh(w_dd)
    e_ref = e0[d[0]]
    coupling = w[np.ix_(d, q)]
    m = coupling @ (coupling.T / (e_ref - e0[q])[:, None])
    e2 = np.empty(len(d))
    vectors = np.empty_like(u)
    scale = max(float(np.max(np.abs(w_dd))), 1e-300)
    for g in _groups(e1, scale):
        ug = u[:, g]
        vals, rot = eigh(ug.T @ m @ ug)
        e2[g] = vals
        vectors[:, g] = ug @ rot
    return np.column_stack([e1, e2]), vectors


# ------------------------------------------------------------------------------ exact path
def _rational(x: float):
    import sympy

    return sympy.Rational(str(Fraction(x).limit_denominator(10**12))) \
        if not float(x).is_integer() else sympy.Integer(int(x))


def _exact(poly, hw, x0, v_min, states, d, q, dimension, e_ref):
    """E₁, E₂ as sympy numbers (oscillator units: ħ = m = 1, b_i² = 1/ħω_i)."""
    import sympy

    top = states.max(axis=0)
    degree = max(sum(k) for k in poly)
    omegas = [_rational(v) for v in hw]
    centers = [_rational(v) for v in x0]
    xi = []  # ξ = (a + a†)/√2 per axis, exact, with room for the powers
    for axis in range(dimension):
        n = int(top[axis]) + degree + 1
        a = sympy.zeros(n, n)
        for k in range(1, n):
            a[k - 1, k] = sympy.sqrt(k)
        xi.append((a + a.T) / sympy.sqrt(2))
    powers: dict[tuple[int, int], Any] = {}

    def x_power(axis, p):  # (x − 0)^p = (b ξ + 0)^p: absolute coordinate x = b ξ + c
        if (axis, p) not in powers:
            b = 1 / sympy.sqrt(omegas[axis])
            x = b * xi[axis] + centers[axis] * sympy.eye(xi[axis].shape[0])
            powers[(axis, p)] = x**p
        return powers[(axis, p)]

    ref = {(0,) * dimension: _rational(v_min)}
    for i in range(dimension):
        k = omegas[i] ** 2  # m ω² with m = ħ = 1
        e = [0] * dimension
        for p, coef in ((2, k / 2), (1, -k * centers[i]), (0, k * centers[i] ** 2 / 2)):
            e[i] = p
            ref[tuple(e)] = ref.get(tuple(e), 0) + coef
    merged: dict[tuple[int, ...], Any] = {k: _rational(v) for k, v in poly.items()}
    for k, v in ref.items():
        merged[k] = merged.get(k, 0) - v
    rows = [int(s) for s in d] + [int(s) for s in q]

    def element(s, t):
        total = 0
        for key, coef in merged.items():
            if coef == 0:
                continue
            term = coef
            for axis, p in enumerate(key):
                na, nb = int(states[s][axis]), int(states[t][axis])
                if p == 0:
                    if na != nb:
                        term = 0
                        break
                    continue
                term *= x_power(axis, p)[na, nb]
            total += term
        return sympy.nsimplify(sympy.expand(total))

    nd = len(d)
    w_dd = sympy.Matrix(nd, nd, lambda i, j: element(rows[i], rows[j]))
    w_dq = sympy.Matrix(nd, len(q), lambda i, j: element(rows[i], int(q[j])))
    e0 = [sum((int(n) + sympy.Rational(1, 2)) * om for n, om in zip(states[k], omegas,
                                                                       strict=True))
          for k in range(len(states))]
    eref = e0[int(d[0])]
    inv = sympy.diag(*[1 / (eref - e0[int(k)]) for k in q]) if len(q) else sympy.zeros(0, 0)
    m = w_dq * inv * w_dq.T if len(q) else sympy.zeros(nd, nd)
    out = []
    for e1, mult, vecs in w_dd.eigenvects():
        basis = sympy.GramSchmidt(vecs, orthonormal=True)
        v = sympy.Matrix.hstack(*basis)
        block = sympy.simplify(v.T * m * v)
        for e2, k2 in block.eigenvals().items():
            out += [(sympy.nsimplify(eref + _rational(v_min)), sympy.simplify(e1),
                     sympy.simplify(e2))] * k2
        if sum(block.eigenvals().values()) != mult:  # pragma: no cover - sympy gave up
            return None
    return out if len(out) == nd else None

