"""Electric multipole transitions between 3D channels: reduced matrix elements and B(Eλ).

Conventions (stated once, used everywhere here)
-----------------------------------------------
- Operator: Q_λμ = e_eff r^λ Y_λμ(r̂), the electric multipole operator of Bohr & Mottelson,
  *Nuclear Structure* vol. I (1969), Appendix 3C, with ``charge`` e_eff in units of e.
- Reduced matrix elements in the convention of A. R. Edmonds, *Angular Momentum in Quantum
  Mechanics* (Princeton 1957), Wigner–Eckart theorem eq. (5.4.1):
  ⟨j m|T_kq|j′ m′⟩ = (−1)^{j−m} (j k j′; −m q m′) ⟨j‖T_k‖j′⟩.
- Orbital states (channels without j): ⟨l‖Y_k‖l′⟩ = (−1)^l √((2l+1)(2k+1)(2l′+1)/4π)
  (l k l′; 0 0 0), Edmonds eq. (5.4.5).
- States (l ½) j (channels with j): the operator acts on the orbital part only, Edmonds
  eq. (7.1.7): ⟨(l ½) j‖Y_k‖(l′ ½) j′⟩ = (−1)^{l+½+j′+k} √((2j+1)(2j′+1)) {l j ½; j′ l′ k}
  ⟨l‖Y_k‖l′⟩.
- Strength: B(Eλ; i → f) = |⟨f‖Q_λ‖i⟩|² / (2j_i + 1) (2l_i + 1 for orbital states), in
  e² length^{2λ} of the unit system (e² fm^{2λ} in nuclear units).
- Radial wavefunctions in the phase convention of :mod:`anharmony.observables.levels`
  (positive near the origin); the radial integral ∫ R_f r^λ R_i r² dr is exact for the
  truncated expansions (generalised Gauss–Laguerre, :mod:`anharmony.observables.integrals`).

3j and 6j symbols come from :mod:`sympy.physics.wigner` (imported on first use).
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import lru_cache

from ..errors import InputError
from .integrals import radial_power_matrix
from .levels import _level, _warn_unbound, fix_phases

__all__ = ["coupled_reduced_y", "orbital_reduced_y", "reduced_multipole", "transition_strength"]


def _half(x: float):
    import sympy

    return sympy.Rational(Fraction(x).limit_denominator(2))


@lru_cache(maxsize=1024)
def orbital_reduced_y(l: int, k: int, lp: int) -> float:
    """⟨l‖Y_k‖l′⟩ in the convention of Edmonds eq. (5.4.5)."""
    from sympy.physics.wigner import wigner_3j

    three_j = float(wigner_3j(l, k, lp, 0, 0, 0))
    return (-1) ** l * math.sqrt((2 * l + 1) * (2 * k + 1) * (2 * lp + 1) / (4.0 * math.pi)) \
        * three_j


@lru_cache(maxsize=1024)
def coupled_reduced_y(l: int, j: float, k: int, lp: int, jp: float) -> float:
    """⟨(l ½) j‖Y_k‖(l′ ½) j′⟩ in the convention of Edmonds eq. (7.1.7)."""
    from sympy.physics.wigner import wigner_6j

    six_j = float(wigner_6j(l, _half(j), _half(0.5), _half(jp), lp, k))
    phase = (-1) ** round(l + 0.5 + jp + k)
    return phase * math.sqrt((2 * j + 1) * (2 * jp + 1)) * six_j * orbital_reduced_y(l, k, lp)


def _check_3d(spec, name: str) -> None:
    c = spec.channel
    if c.dimension != 3 or c.l is None:
        raise InputError(f"{name}: multipole transitions need a 3D central channel; got "
                         f"{c.label!r} in {c.dimension}D")


def reduced_multipole(final, initial, multipole: int = 2, final_level: int = 0,
                      initial_level: int = 0, charge: float = 1.0) -> float:
    """Reduced matrix element ⟨f‖Q_λ‖i⟩ of the electric multipole operator (module notes).

    Parameters
    ----------
    final, initial : Spectrum
        3D channels of one well (or of two wells solved in the same unit system); both with j
        (spin–orbit channels) or both without.
    multipole
        λ ≥ 0 (1 = E1, 2 = E2).
    final_level, initial_level
        Level indices in the two channels.
    charge
        Effective charge in units of e.

    Returns
    -------
    float
        In e · length^λ of the unit system; 0 where parity or the triangle rule forbids.
    """
    _check_3d(final, "final")
    _check_3d(initial, "initial")
    if isinstance(multipole, bool) or not isinstance(multipole, int) or multipole < 0:
        raise InputError(f"multipole: must be an integer >= 0; got {multipole!r}")
    if final.units != initial.units:
        raise InputError("initial: the two spectra are in different unit systems; solve both "
                         "in one")
    cf, ci = final.channel, initial.channel
    if (cf.j is None) != (ci.j is None):
        raise InputError(f"initial: both channels need j, or neither; got {cf.label!r} and "
                         f"{ci.label!r}")
    f_idx = _level(final, final_level, "final_level")
    i_idx = _level(initial, initial_level, "initial_level")
    if cf.j is None:
        angular = orbital_reduced_y(cf.l, multipole, ci.l)
    else:
        angular = coupled_reduced_y(cf.l, cf.j, multipole, ci.l, ci.j)
    if angular == 0.0:
        return 0.0
    a, b = fix_phases(final), fix_phases(initial)
    _warn_unbound(a, which=(f_idx,))
    _warn_unbound(b, which=(i_idx,))
    m = radial_power_matrix(a.basis, b.basis, multipole)
    radial = float(a.vectors[:, f_idx] @ m @ b.vectors[:, i_idx])
    return charge * radial * angular


def transition_strength(initial, final, multipole: int = 2, initial_level: int = 0,
                        final_level: int = 0, charge: float = 1.0) -> float:
    """B(Eλ; i → f) = |⟨f‖Q_λ‖i⟩|² / (2j_i + 1), in e² length^{2λ} (module notes)."""
    red = reduced_multipole(final, initial, multipole, final_level, initial_level, charge)
    ci = initial.channel
    mult = 2 * ci.j + 1 if ci.j is not None else 2 * ci.l + 1
    return red * red / mult
