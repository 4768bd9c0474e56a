"""The ``series`` front end (DESIGN §2 Perturbation, §8) and its :class:`Series` result.

H(λ) = H_ref + λ W, with H_ref the reference oscillator (plus v_min) and W = V − V_ref, λ = 1
the physical well. H_ref is diagonal in the reference oscillator's own basis (length b_ref,
centre x_min), which is the basis used here.

Terms may carry a perturbation order (the generic term key ``order``, see
:mod:`anharmony.terms.base`); then the perturbation is a polynomial in λ,

    H(λ) = H_ref + λ W₁ + Σ_{k≥2} λ^k W_k,   W₁ = T + V₁ − H_ref = V₁ − V_ref,  W_k = V_k,

where V_k is the sum of the terms at order k (spin–orbit ones with their ⟨l·s⟩). H_ref stays
the harmonic reference of the whole well at order 0 (chosen as without orders), and the part
of V_ref that cancels the harmonic term belongs to order 1, as it does without orders. This is
how spectroscopists count a diatomic's force constants: the cubic at first order and the
quartic at second, so that E_2 holds the anharmonicity constant ωexe. λ = 1 is still the
physical well, and with every term at order 1 (the default) nothing changes.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np

from anharmony.errors import ConvergenceWarning, InputError, NumericalError
from anharmony.hamiltonian import Channel, channel_hamiltonian, effective_lambda
from anharmony.reference import Reference, reference_oscillator
from anharmony.request import resolve_channel
from anharmony.units import UnitSystem
from anharmony.well import Well

from ._values import as_float_array, to_mpf
from .borel import BorelPade, borel_pade
from .growth import LargeOrder, large_order
from .resum import PadeApproximant, Resummed, pade_approximant, pade_sum
from .rs_exact import reach, rs_exact_1d, rs_exact_radial
from .rs_numeric import ScaledCoefficients, rs_numeric
from .truncation import OptimalTruncation, optimal_truncation, partial_sums

__all__ = ["Series", "series"]

EXACT_MAX_DENOMINATOR = 10**6  # a coefficient of W counts as rational p/q only with q <= this
RATIONAL_RTOL = 1e-14  # ... and only if p/q is this close (relative to the largest coefficient)
DENSE_RTOL = 1e-10  # non-polynomial W: grow N until no E_k moves by more than this (relative)
DENSE_START = 40  # first basis size tried for a non-polynomial W
DENSE_GROWTH = 1.5  # factor between successive sizes
DEFAULT_MAX_SIZE = 400  # largest basis for a non-polynomial W
_REFERENCE_LEVELS = 5  # levels the "auto" reference is fitted to (as solve's default)


@dataclass(frozen=True, eq=False)
class Series:
    """Rayleigh–Schrödinger series E(λ) = Σ_k E_k λ^k of one level of one channel.

    Attributes
    ----------
    coefficients : ndarray, shape (K+1,)
        E_0..E_K in the unit system's energy unit (E_0 = v_min + ħω·(oscillator level));
        ±inf where |E_k| exceeds the double range (use :attr:`precise` there).
    exact : list of Fraction or None
        When W is a polynomial with rational coefficients in oscillator units: the same series
        in units of the reference ħω with E_0 counted from v_min, i.e.
        ``coefficients[0] = v_min + ħω·exact[0]`` (the oscillator level, n + 1/2 or
        2n + l + d/2) and ``coefficients[k] = ħω·exact[k]`` for k ≥ 1. Otherwise None.
    precise : tuple
        E_0..E_K at full precision in the energy unit: Fractions (exact engine; ħω and v_min
        taken as the binary values of their floats) or :class:`mpmath.mpf` (numeric engine).
    reference : Reference
        The reference oscillator (ħω, b, centre, v_min, how and why it was chosen).
    channel : Channel
    level : int
        Level counted from the lowest of the channel (0-based radial index).
    method : str
        ``"exact"`` (rational engine), ``"banded"`` (numeric, polynomial W: exact in N) or
        ``"dense"`` (numeric, basis grown until the coefficients settle).
    basis_size : int
        N used (for ``"exact"``/``"banded"``: n + K·h + 1, h the half-bandwidth of W).
    precision : float
        ``"dense"``: the largest relative change of any E_k at the last growth of N
        (see :data:`DENSE_RTOL`); 0.0 for the other methods (exact in N).
    units : UnitSystem
    term_orders : tuple of int
        The perturbation order of each term of the well (:attr:`anharmony.Well.orders`): the
        power of λ at which it enters W (module docstring); all 1 by default.
    confining : bool
        The well rises without bound on every side. When it does not (a finite threshold, an
        open or periodic well), the coupled well (1 − λ) V_ref + λ V falls without bound for
        λ > 1: λ = 1 is a singular point of E(λ), and :meth:`pade` / :meth:`borel_pade` do
        not trust a value at λ ≥ 0.8 on the agreement of their approximants.
    """

    coefficients: np.ndarray
    exact: list[Fraction] | None
    precise: tuple
    reference: Reference
    channel: Channel
    level: int
    method: str
    basis_size: int
    precision: float
    units: UnitSystem
    term_orders: tuple[int, ...] = ()
    confining: bool = True

    @property
    def orders(self) -> int:
        """Highest order K."""
        return len(self.coefficients) - 1

    def analysis_values(self) -> list:
        """E_0..E_K at full precision (what the analysis methods work on)."""
        return list(self.precise)

    def partial_sums(self, lam: Any = 1.0) -> np.ndarray:
        """Σ_{i≤k} E_i λ^i for k = 0..K; shape (K+1,) + shape(lam)."""
        return partial_sums(self.precise, lam)

    def pade_approximant(self, L: int, M: int, *, method: str = "auto") -> PadeApproximant:
        """Padé [L/M] approximant in λ (numerator degree L, denominator M)."""
        return pade_approximant(self.precise, L, M, method=method)

    def pade(self, lam: Any = 1.0, L: int | None = None, M: int | None = None) -> Resummed:
        """Padé sum at λ with its uncertainty (:func:`anharmony.series.pade_sum`).

        ``L``, ``M`` choose the top approximant (default near-diagonal); the value of one
        single approximant is :meth:`pade_approximant` called at λ. With the default family,
        where the growth of the coefficients is not settled (:meth:`large_order` not
        ``supported``), the uncertainty of a trusted value is widened to hold the trusted
        Borel–Padé interval (and likewise in :meth:`borel_pade`); and on a well that is not
        :attr:`confining` no value at λ ≥ 0.8 is trusted.
        """
        res = pade_sum(self.precise, lam, L, M)
        if L is None and M is None and not self._settled():
            res = _cross_checked(res, lambda: borel_pade(self.precise, lam), "Borel–Padé",
                                 self.precise[0])
        return _threshold_checked(res, self.confining)

    def borel_pade(self, lam: Any = 1.0, L: int | None = None, M: int | None = None, *,
                   power: int | None = None) -> BorelPade:
        """Borel(–Leroy)–Padé sum at λ with its uncertainty
        (:func:`anharmony.series.borel_pade`)."""
        res = borel_pade(self.precise, lam, L, M, power=power)
        if L is None and M is None and not self._settled():
            res = _cross_checked(res, lambda: pade_sum(self.precise, lam), "Padé",
                                 self.precise[0])
        return _threshold_checked(res, self.confining)

    def _settled(self) -> bool:
        """The large-order analysis reaches its regime (:attr:`LargeOrder.supported`)."""
        try:
            return bool(large_order(self.precise).supported)
        except InputError:
            return False

    def optimal_truncation(self, lam: float = 1.0) -> OptimalTruncation:
        """Sum up to the smallest term at λ, with that term as the error estimate."""
        return optimal_truncation(self.precise, lam)

    def large_order(self, **options: Any) -> LargeOrder:
        """Ratio-test analysis of the growth of E_k (:func:`anharmony.series.large_order`)."""
        return large_order(self.precise, **options)


SINGULAR_COUPLING = 0.8  # |λ| at and beyond which λ = 1, singular for a finite well, spoils a value


def _threshold_checked(res: Resummed, confining: bool) -> Resummed:
    """Untrust the values at λ ≥ 0.8 of a well that is not confining (:attr:`Series.confining`)."""
    lam = np.asarray(res.lam, dtype=float).reshape(-1)
    hit = lam >= SINGULAR_COUPLING
    if confining or not hit.any():
        return res
    trusted = np.asarray(res.trusted, dtype=bool).reshape(-1).copy()
    reasons = list(res.reason)
    for i in np.flatnonzero(hit):
        trusted[i] = False
        reasons[i] = (f"{reasons[i]}; not trusted: the well is not confining, so for λ > 1 the "
                      "coupled well (1 − λ) V_ref + λ V falls without bound and λ = 1 is a "
                      f"singular point of E(λ); at λ = {lam[i]:.4g} agreement among "
                      "approximants bounds nothing")
    return dataclasses.replace(res, trusted=trusted.reshape(np.shape(res.trusted)),
                               reason=tuple(reasons))


def _cross_checked(res: Resummed, other_of: Any, name: str, c0: Any) -> Resummed:
    """Widen each trusted value's uncertainty to hold the other method's trusted interval.

    Called where the growth is not settled, so nothing else says which sum to believe.
    Padé and Borel–Padé sums are two estimates of one number: where both are trusted, the
    truth lies in both intervals only if each holds the other's, so each uncertainty becomes
    at least |v − v_other| + u_other; trust is then judged again (below half the correction).
    """
    from ._family import TRUST_FRACTION

    ok = np.asarray(res.trusted, dtype=bool).reshape(-1)
    if not ok.any():
        return res
    try:
        other = other_of()
    except NumericalError:
        return res
    value = np.asarray(res.value, dtype=float).reshape(-1)
    unc = np.asarray(res.uncertainty, dtype=float).reshape(-1).copy()
    trusted = ok.copy()
    o_val = np.asarray(other.value, dtype=float).reshape(-1)
    o_unc = np.asarray(other.uncertainty, dtype=float).reshape(-1)
    o_ok = np.asarray(other.trusted, dtype=bool).reshape(-1)
    c0 = float(to_mpf(c0))
    reasons = list(res.reason)
    for i in np.flatnonzero(ok & o_ok & np.isfinite(o_val) & np.isfinite(o_unc)):
        need = abs(value[i] - o_val[i]) + o_unc[i]
        if not need > unc[i]:
            continue
        unc[i] = need
        reasons[i] += (f"; widened to hold the {name} value {o_val[i]:.10g} ± {o_unc[i]:.2g}")
        correction = abs(value[i] - c0)
        if not unc[i] < TRUST_FRACTION * correction:
            trusted[i] = False
            reasons[i] += (f"; not trusted: {unc[i]:.2g} is not below half the resummed "
                           f"correction {correction:.2g}")
    shape = np.shape(res.value)
    return dataclasses.replace(res, uncertainty=unc.reshape(shape),
                               trusted=trusted.reshape(shape), reason=tuple(reasons))


def _rational(x: float, scale: float) -> Fraction | None:
    r = Fraction(x).limit_denominator(EXACT_MAX_DENOMINATOR)
    return r if abs(float(r) - x) <= RATIONAL_RTOL * scale else None


def _parts(well: Well, channel: Channel) -> dict[int, Well]:
    """The well split by the terms' orders, ``{k: V_k}``, each part solvable in the channel.

    Raises
    ------
    InputError
        For an inverse-square term absorbed into the basis (it belongs to H_ref, order 0)
        given another order than 1, and for parity channels whose split is not symmetric.
    """
    parts = well.by_order()
    if set(parts) == {1}:
        return {1: well}
    lam, _ = effective_lambda(well, channel)
    absorbed = tuple(t for t in well.central_terms if t.inverse_square is not None)
    if lam is not None:
        for i, t in enumerate(well.terms):
            if t.inverse_square is not None and t.order != 1:
                raise InputError(
                    f"well[{i}].{t.kind}.order: an inverse-square term is absorbed into the "
                    f"radial basis of this channel, i.e. into the reference H_ref, so it has "
                    f"no perturbation order; drop its order (got {t.order})")
    if channel.dimension == 1 and channel.l is not None:
        for k, part in parts.items():
            if not part.is_symmetric(0.0):
                raise InputError(
                    f"l: the terms at perturbation order {k} are not symmetric about x = 0, "
                    "so the parity channels do not decouple order by order; use l=None")
    out = {}
    for k, part in parts.items():
        if k != 1 and lam is not None:  # the same basis as order 1: carry the absorbed terms
            part = Well(terms=part.terms + absorbed,
                        specs=part.specs + tuple((t.kind, t) for t in absorbed),
                        units=well.units, mass=well.mass)
        out[k] = part
    return out


def _w_in_oscillator_units(
    parts: dict[int, Well], channel: Channel, ref: Reference, center: float
) -> tuple[dict[int, dict[int, float]] | None, str]:
    """W_k = V_k (W₁ = V₁ − V_ref) as Σ w_q ξ^q in units of ħω (ξ = (x − x₀)/b or r/b) per
    power k of λ, or why not."""
    hw, b = ref.frequency, ref.length
    out: dict[int, dict[int, float]] = {}
    for k, part in parts.items():
        if part.has_spin_orbit and channel.ls != 0.0:
            return None, "the spin-orbit term is not a polynomial"
        lam, _ = effective_lambda(part, channel)
        if lam is not None:
            return None, "an inverse-square term is absorbed into the basis"
        poly = part.polynomial(center=center)
        if poly is None:
            return None, "the well is not a polynomial"
        out[k] = {q: c * b**q / hw for q, c in poly.items()}
    w = out.setdefault(1, {})
    w[0] = w.get(0, 0.0) - ref.v_min / hw
    w[2] = w.get(2, 0.0) - 0.5
    return out, ""


def _exact_series(parts: dict[int, dict[int, float]], channel: Channel, level: int,
                  orders: int) -> tuple[list[Fraction] | None, int, str]:
    scale = max((abs(v) for w in parts.values() for v in w.values()), default=0.0) or 1.0
    rational: dict[int, dict[int, Fraction]] = {}
    for k, w in parts.items():
        rational[k] = {}
        for q, v in w.items():
            r = _rational(v, scale)
            if r is None:
                at = "" if set(parts) == {1} else f" (order {k})"
                return None, 0, (f"the coefficient of ξ^{q} in W{at} is {v!r} ħω, not a "
                                 f"rational with denominator <= {EXACT_MAX_DENOMINATOR}")
            if r:
                rational[k][q] = r
    w1 = rational.pop(1)
    higher = rational or None
    if channel.l is None:
        widths = {k: max(w, default=0) for k, w in ((1, w1), *rational.items())}
        size = level + reach(widths, orders) + 1
        return rs_exact_1d(w1, level, orders, higher=higher), size, ""
    odd = sorted({q for w in (w1, *rational.values()) for q in w if q % 2})
    if odd:
        return None, 0, f"W has odd powers {odd} of r, whose radial matrix elements are irrational"
    widths = {k: max(w, default=0) // 2 for k, w in ((1, w1), *rational.items())}
    size = level + reach(widths, orders) + 1
    return rs_exact_radial(w1, level, orders, l=channel.l, dimension=channel.dimension,
                           higher=higher), size, ""


def _numeric_at(parts: dict[int, Well], channel: Channel, ref: Reference, center: float,
                level: int, orders: int, size: int, bandwidth: int | None
                ) -> ScaledCoefficients:
    if set(parts) == {1}:  # every term at first order: W = H − H_ref
        mats = channel_hamiltonian(parts[1], channel, size, ref.length, center)
        h_ref = ref.v_min + ref.frequency * mats.basis.oscillator_levels()
        w = mats.total - np.diag(h_ref)
        return rs_numeric(h_ref, w, level, orders, bandwidth=bandwidth)
    mats = {k: channel_hamiltonian(part, channel, size, ref.length, center)
            for k, part in parts.items() if k <= orders or k == 1}
    any_mats = next(iter(mats.values()))
    h_ref = ref.v_min + ref.frequency * any_mats.basis.oscillator_levels()
    w1 = any_mats.kinetic - np.diag(h_ref)  # T − H_ref = −V_ref
    if 1 in mats:
        w1 = w1 + mats[1].potential + mats[1].spin_orbit
    higher = {k: m.potential + m.spin_orbit for k, m in mats.items() if k != 1}
    return rs_numeric(h_ref, w1, level, orders, bandwidth=bandwidth, higher=higher)


def _relative_change(old: list, new: list) -> float:
    """Largest |Δ E_k| / scale_k over k ≥ 1; scale_k = max(|E_k|, √|E_{k−1} E_{k+1}|)."""
    worst = 0.0
    mags = [abs(x) for x in new]
    for k in range(1, len(new)):
        neighbours = [mags[i] for i in (k - 1, k + 1) if 1 <= i < len(new) and mags[i] != 0]
        scale = max([mags[k], mpmath.sqrt(mpmath.fprod(neighbours))
                     if len(neighbours) == 2 else (neighbours[0] if neighbours else 0)])
        diff = abs(new[k] - old[k])
        if diff == 0:
            continue
        worst = max(worst, math.inf if scale == 0 else float(diff / scale))
    return worst


def _validate(well: Any, dimension: Any, l: Any, level: Any, orders: Any, exact: Any,
              max_size: Any, levels: Any) -> None:
    if not isinstance(well, Well):
        raise TypeError(f"well: expected an anharmony.Well; got {type(well).__name__}")
    if isinstance(dimension, bool) or dimension not in (1, 2, 3):
        raise InputError(f"dimension: must be 1, 2 or 3; got {dimension!r}")
    for name, v, low in (("level", level, 0), ("orders", orders, 1), ("max_size", max_size, 2),
                         ("levels", levels, 1)):
        if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < low:
            raise InputError(f"{name}: must be an integer >= {low}; got {v!r}")
    if exact not in ("auto", True, False):
        raise InputError(f"exact: must be 'auto', True or False; got {exact!r}")


def series(
    well: Well,
    dimension: int = 3,
    l: int | None = 0,
    j: Any = None,
    *,
    level: int = 0,
    orders: int = 20,
    exact: str | bool = "auto",
    units: str | UnitSystem = "oscillator",
    mass: float | None = None,
    levels: int = _REFERENCE_LEVELS,
    reference: str | Mapping[str, float] = "auto",
    max_size: int = DEFAULT_MAX_SIZE,
) -> Series:
    """Rayleigh–Schrödinger series of one level of one channel of a well.

    The signature follows :func:`anharmony.solve` (same names and defaults; everything after
    ``j`` by keyword). ``solve``'s ``size`` and ``length`` have no counterpart: the basis is
    the reference oscillator's own, and its size is chosen so the coefficients are exact
    (polynomial W) or settled (otherwise; see ``max_size``).

    Parameters
    ----------
    well : Well
        The well (:meth:`anharmony.Well.from_terms`).
    dimension : {1, 2, 3}, default 3
        Dimension of the space.
    l : int or None, default 0
        Angular quantum number; in 1D ``None`` is the basis without symmetry, 0/1 the even/odd
        parity of a symmetric well.
    j : float or str, optional
        Total angular momentum with spin–orbit terms (3D): 2.5 or ``"5/2"``.
    level : int, default 0
        Level counted from the lowest of the channel.
    orders : int, default 20
        Highest order K ≥ 1.
    exact : {"auto", True, False}, default "auto"
        ``"auto"``: rational coefficients when W is a polynomial with rational coefficients
        in oscillator units (any powers of ξ in 1D without symmetry, even powers in parity and
        radial channels); ``True``: require them (ValueError otherwise); ``False``: numeric
        engine only.
    units : str or UnitSystem, default "oscillator"
        Unit system of DESIGN §5.
    mass : float, optional
        Particle mass in the system's mass unit (default per system).
    levels : int, default 5
        Number of levels the ``"auto"`` reference is fitted to, as in :func:`anharmony.solve`
        (at least ``level + 1`` are used).
    reference : "auto" or mapping, default "auto"
        ``"auto"`` or a mapping with ``frequency`` or ``length`` (and ``center`` in 1D), as for
        :func:`anharmony.solve`.
    max_size : int, default 400
        Largest basis tried for a non-polynomial W.

    Returns
    -------
    Series

    Raises
    ------
    InputError
        For an argument out of range (the message names it).
    TypeError
        If ``well`` is not a :class:`~anharmony.Well`.

    Warns
    -----
    ConvergenceWarning
        When, for a non-polynomial W, the coefficients still change by more than 1e-10
        (relative) at ``max_size``; :attr:`Series.precision` says by how much.

    Notes
    -----
    The basis is the reference oscillator's own (length b_ref, centre x_min), where
    H_ref = v_min + ħω (oscillator levels) is diagonal; W = T + V + V_so − H_ref from the
    channel matrices. A polynomial W of half-bandwidth h gives exact coefficients to order K
    with N = n + K·h + 1 states, which is the size used; otherwise N grows from 40 by factors
    of 1.5 until no coefficient moves by more than 1e-10.

    Terms given an ``order`` (:mod:`anharmony.terms.base`) make W a polynomial in λ:
    W₁ = T + V₁ + V_so,₁ − H_ref and W_k = V_k + V_so,k, V_k the terms at order k; H_ref is the
    same reference of the whole well either way, and λ = 1 the physical well. The engines
    then run the recursion E_k = Σ_j ⟨n|W_j|ψ_{k−j}⟩ (:func:`anharmony.series.rs_numeric`).
    An inverse-square term absorbed into a radial basis belongs to H_ref and takes no order;
    in 1D parity channels the terms of each order must be symmetric about 0.
    """
    _validate(well, dimension, l, level, orders, exact, max_size, levels)
    well, channel = resolve_channel(well, dimension, l, j, units, mass)
    system = well.units
    confining = _confining(well, channel)
    ref = reference_oscillator(well, dimension, l, None, max(levels, level + 1),
                               reference, channel.j)
    center = ref.center if channel.l is None else 0.0
    hw = ref.frequency
    parts = _parts(well, channel)
    orders_of_terms = well.orders

    exact_values = None
    if exact is not False:
        w, why = _w_in_oscillator_units(parts, channel, ref, center)
        if w is not None:
            exact_values, size, why = _exact_series(w, channel, level, orders)
        if exact_values is None and exact is True:
            raise InputError(f"exact: no rational series for this well ({why}); "
                             "use exact='auto' or False")
    if exact_values is not None:
        scale, offset = Fraction(hw), Fraction(ref.v_min)
        precise = tuple([offset + scale * exact_values[0]]
                        + [scale * e for e in exact_values[1:]])
        return _make(precise, exact_values, ref, channel, level, "exact", size, 0.0, system,
                     orders_of_terms, confining)

    probe = channel_hamiltonian(well, channel, 4, ref.length, center)
    if probe.bandwidth is not None:
        h = probe.bandwidth
        size = level + orders * h + 1
        res = _numeric_at(parts, channel, ref, center, level, orders, size, h)
        return _make(tuple(res.mp()), None, ref, channel, level, "banded", size, 0.0, system,
                     orders_of_terms, confining)

    size = min(max_size, max(DENSE_START, 2 * (level + orders) + 10))
    if size == max_size:  # leave room for one comparison below the cap
        size = max(level + 2, int(max_size / DENSE_GROWTH))
    previous, change = None, math.inf
    while True:
        current = _numeric_at(parts, channel, ref, center, level, orders, size, None).mp()
        if previous is not None:
            change = _relative_change(previous, current)
            if change <= DENSE_RTOL:
                break
        if size >= max_size:
            warnings.warn(
                f"series: the coefficients of level {level} ({channel.label}) still change by "
                f"{change:.2g} (relative) at the largest basis, max_size={max_size}; raise "
                "max_size or use fewer orders",
                ConvergenceWarning, stacklevel=2,
            )
            break
        previous = current
        size = min(max_size, math.ceil(size * DENSE_GROWTH))
    return _make(tuple(current), None, ref, channel, level, "dense", size, change, system,
                 orders_of_terms, confining)


def _make(precise: tuple, exact_values: list[Fraction] | None, ref: Reference,
          channel: Channel, level: int, method: str, size: int, precision: float,
          system: UnitSystem, term_orders: tuple[int, ...], confining: bool = True) -> Series:
    coeffs = as_float_array(precise)
    return Series(
        coefficients=coeffs, exact=None if exact_values is None else list(exact_values),
        precise=precise, reference=ref, channel=channel, level=int(level), method=method,
        basis_size=int(size), precision=float(precision), units=system,
        term_orders=tuple(term_orders), confining=bool(confining),
    )


def _confining(well: Well, channel: Channel) -> bool:
    """Whether the well rises without bound on every side of the channel."""
    from anharmony.well import CONFINING

    symmetric = channel.dimension > 1 or channel.l is not None
    try:
        return well.classify(channel.dimension, symmetric).kind == CONFINING
    except InputError:  # pragma: no cover - resolve_channel refuses these channels first
        return False
