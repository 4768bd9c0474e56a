"""The blocks of a geometry: the Hamiltonian of each conserved-parity block (Cartesian parity
blocks, axial Λ^π or, with spin, Ω^π blocks) built in its basis, kinetic and polynomial terms
exact and the rest by verified quadrature."""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.linalg import eigh

from ..errors import InputError
from ..well import Well
from .axial import AxialBasis
from .blocks import axial_parity, axial_states, cartesian_states, parity_blocks
from .cartesian import CartesianBasis
from .potential import (
    axial_polynomial,
    axial_value,
    cartesian_polynomial,
    cartesian_value,
    needs_panels,
    reflection_symmetric,
)
from .spin import has_spin, so_diagonal, so_off_diagonal

_SYMMETRY_RTOL = 1e-12  # a reflection symmetry holds to rounding, or it is not used


def _diagonalise(h, levels):
    return eigh(h, subset_by_index=(0, min(levels, len(h)) - 1), driver="evr")


def _split(well, polynomial_of):
    """The polynomial terms summed (exact matrices), a well of the rest, and its rule kind."""
    exact, rest = {}, []
    for t in well.terms:
        if getattr(t, "spin_orbit", False):  # enters through geometry.spin, not V
            continue
        poly = polynomial_of(t)
        if poly is None:
            rest.append(t)
        else:
            for k, v in poly.items():
                exact[k] = exact.get(k, 0.0) + v
    rest_well = Well(terms=tuple(rest), units=well.units, mass=well.mass) if rest else None
    kind = "panels" if any(needs_panels(t) for t in rest) else "weight"
    return exact, rest_well, kind


def _cartesian(well, dimension, b, x0, shells, weights, parity, omega, c, levels):
    states = cartesian_states(shells, weights)
    basis = CartesianBasis(states, b, x0)
    extent = [max(v, 1e-3 * well.scale) for v in b]
    symmetric = [reflection_symmetric(well, i, x0, extent, _SYMMETRY_RTOL)
                 for i in range(dimension)]
    wanted = _cartesian_parity(parity, symmetric, dimension)
    exact, rest_well, kind = _split(well, lambda t: cartesian_polynomial(t, dimension))
    out = {}
    for key, idx in parity_blocks(states, symmetric).items():
        if not all(w is None or w == p for w, p in zip(wanted, key, strict=True)):
            continue
        h = basis.kinetic(idx, c) + basis.polynomial(exact, idx)
        if rest_well is not None:
            h = h + basis.quadrature(lambda *xs: cartesian_value(rest_well, xs), idx,
                                     kind=kind)
        e, v = _diagonalise(h, levels)
        out[key] = (e, v, states[idx], h)
    return out


def _cartesian_parity(parity, symmetric, dimension):
    if parity is None:
        return (None,) * dimension
    if isinstance(parity, (str, bytes)) or not hasattr(parity, "__len__") \
            or len(parity) != dimension:
        raise InputError(f"parity: expected {dimension} entries (+1, -1 or None per axis); "
                         f"got {parity!r}")
    out = []
    for axis, (p, s) in enumerate(zip(parity, symmetric, strict=True)):
        if p is None:
            out.append(None)
            continue
        if p not in (1, -1):
            raise InputError(f"parity[{axis}]: expected +1, -1 or None; got {p!r}")
        if not s:
            raise InputError(f"parity[{axis}]: the well is not even along axis {'xyz'[axis]} "
                             "about the basis centre, so this parity is not conserved")
        out.append(0 if p == 1 else 1)
    return tuple(out)


def _axial(well, dimension, b, x0, shells, weights, parity, omega, c, levels):
    cz = x0[0]
    rng = np.random.default_rng(2024)  # fixed sample points: reproducible symmetry test
    rho = b[0] * rng.uniform(0.0, 3.0, 300)
    t = b[1] * rng.uniform(0.0, 3.0, 300)
    with np.errstate(all="ignore"):
        up, down = axial_value(well, rho, cz + t), axial_value(well, rho, cz - t)
    even = bool(np.all(np.abs(up - down) <= _SYMMETRY_RTOL * (np.max(np.abs(up)) + 1e-300)))
    if parity is not None:
        if parity not in (1, -1):
            raise InputError(f"parity: expected +1, -1 or None; got {parity!r}")
        if not even:
            raise InputError(f"parity: the well is not even in z about z = {cz}, so parity is "
                             "not conserved; use parity=None")
    spin = has_spin(well)
    omega = _check_omega(omega, spin)
    exact, rest_well, kind = _split(well, axial_polynomial)
    top = int(shells // weights[0])
    if spin:
        return _omega_blocks(well, b, cz, shells, weights, parity, omega, c, levels, even,
                             exact, rest_well, kind, top)
    lams = [int(omega)] if omega is not None else list(range(top + 1))
    out = {}
    for lam in lams:
        st = axial_states(shells, lam, weights)
        if len(st) == 0:
            continue
        basis = AxialBasis(st, lam, b, cz)
        pis = axial_parity(lam, st[:, 1])
        groups = ({p: np.flatnonzero(pis == p) for p in (1, -1)} if even
                  else {None: np.arange(len(st))})
        for pi, idx in groups.items():
            if len(idx) == 0 or (parity is not None and pi != parity):
                continue
            h = basis.kinetic(idx, c) + basis.polynomial(exact, idx)
            if rest_well is not None:
                h = h + basis.quadrature(lambda r, z: axial_value(rest_well, r, z), idx,
                                         kind=kind)
            e, v = _diagonalise(h, levels)
            full = np.column_stack([st[idx, 0], np.full(len(idx), lam), st[idx, 1]])
            signs = [lam] if lam == 0 or omega is not None else [lam, -lam]
            for s in signs:
                f = full.copy()
                f[:, 1] = s
                out[(s, pi)] = (e, v, f, h)
    return out


def _check_omega(omega, spin):
    """Ω as given: an integer Λ without spin terms, a half-integer (0.5 or "1/2") with them."""
    if omega is None:
        return None
    if not spin:
        if isinstance(omega, bool) or not isinstance(omega, (int, np.integer)):
            raise InputError(f"omega: without spin terms Ω = Λ, an integer; got {omega!r}")
        return int(omega)
    from ..hamiltonian import parse_j

    negative = (isinstance(omega, str) and omega.strip().startswith("-")) or (
        isinstance(omega, (int, float, np.integer, np.floating)) and omega < 0)
    try:
        text = omega.strip().lstrip("-") if isinstance(omega, str) else abs(omega)
        value = parse_j(text)
    except (InputError, ValueError, TypeError):
        value = None
    if value is None or (2.0 * value) % 2.0 != 1.0:
        raise InputError(f"omega: with spin-orbit terms Ω = Λ + Σ is a half-integer (0.5, "
                         f"'3/2', …); got {omega!r}")
    return -value if negative else value


def _block_matrix(well, basis, idx, c, exact, rest_well, kind):
    """Kinetic energy and potential of one Λ on the states ``idx`` (no spin–orbit)."""
    h = basis.kinetic(idx, c) + basis.polynomial(exact, idx)
    if rest_well is not None:
        h = h + basis.quadrature(lambda r, z: axial_value(rest_well, r, z), idx, kind=kind)
    return h


def _omega_blocks(well, b, cz, shells, weights, parity, omega, c, levels, even, exact,
                  rest_well, kind, top):
    """The Ω^π blocks of a well with spin–orbit terms (:mod:`anharmony.geometry.spin`).

    Block Ω > 0 joins |Λ = Ω − ½, ↑⟩ (part A) and |Λ = Ω + ½, ↓⟩ (part B); its levels are also
    listed for −Ω (Kramers). States are (n_ρ, Λ, n_z, 2Σ). The matrices of one (Λ, π) serve
    two blocks (as part A of Ω = Λ + ½ and part B of Ω = Λ − ½), so they are built once.
    """
    omegas = [abs(omega)] if omega is not None else [k + 0.5 for k in range(top + 1)]
    parities = (1, -1) if even else (None,)
    bases: dict[int, tuple[AxialBasis, np.ndarray]] = {}
    parts: dict[tuple[int, Any], tuple[np.ndarray, np.ndarray, np.ndarray]] = {}

    def basis_of(lam):
        if lam not in bases:
            st = axial_states(shells, lam, weights)
            bases[lam] = (AxialBasis(st, lam, b, cz), axial_parity(lam, st[:, 1]))
        return bases[lam]

    def part(lam, pi):
        """States of (Λ, π), their H without spin–orbit, and Λ⟨C f_ρ/ρ⟩ (times Σ later)."""
        if (lam, pi) not in parts:
            basis, pis = basis_of(lam)
            idx = np.flatnonzero(pis == pi) if pi is not None else np.arange(basis.size)
            h = _block_matrix(well, basis, idx, c, exact, rest_well, kind) if len(idx) else \
                np.zeros((0, 0))
            d = so_diagonal(well, basis, idx, 1.0) if len(idx) else np.zeros((0, 0))
            parts[(lam, pi)] = (idx, h, d)
        return parts[(lam, pi)]

    out = {}
    for om in omegas:
        lam_a = int(om - 0.5)
        for pi in parities:
            if parity is not None and pi != parity:
                continue
            ia, h_a, d_a = part(lam_a, pi)
            ib, h_b, d_b = part(lam_a + 1, pi)
            if len(ia) + len(ib) == 0:
                continue
            v = so_off_diagonal(well, basis_of(lam_a)[0], basis_of(lam_a + 1)[0], ia, ib)
            h = np.block([[h_a + 0.5 * d_a, v], [v.T, h_b - 0.5 * d_b]])
            e, vec = _diagonalise(h, levels)
            st_a, st_b = basis_of(lam_a)[0].states, basis_of(lam_a + 1)[0].states
            full = np.vstack([
                np.column_stack([st_a[ia, 0], np.full(len(ia), lam_a), st_a[ia, 1],
                                 np.full(len(ia), 1)]).reshape(-1, 4),
                np.column_stack([st_b[ib, 0], np.full(len(ib), lam_a + 1), st_b[ib, 1],
                                 np.full(len(ib), -1)]).reshape(-1, 4)])
            for sign in (1, -1):
                if omega is not None and np.sign(omega) != sign:  # only the Ω asked for
                    continue
                f = full.copy()
                f[:, 1] *= sign
                f[:, 3] *= sign
                out[(sign * om, pi)] = (e, vec, f, h)
    return out
