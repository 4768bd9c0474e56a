"""Borel(–Leroy)–Padé sums of a divergent series, with an uncertainty from a family of them.

For coefficients growing like Γ(k n + b) the Borel–Leroy transform of order k,

    B(s) = Σ_n c_n s^n / Γ(k n + 1),

has a finite radius of convergence, and because Γ(k n + 1) = ∫_0^∞ e^{−u} u^{k n} du,

    Σ_n c_n λ^n = ∫_0^∞ e^{−u} B(λ u^k) du
                = (1/k) ∫_0^∞ e^{−t^{1/k}} t^{1/k − 1} B(λ t) dt      (t = u^k),

term by term; the integral, with B continued beyond its disc by a Padé approximant, is the
Borel–Leroy–Padé sum. k = 1 is Borel's own transform. (Hardy, *Divergent Series* (1949),
ch. VIII on Borel's integral method; for the order matched to the growth, Zinn-Justin,
*Quantum Field Theory and Critical Phenomena*, the chapter on the summation of divergent
series, and Kleinert & Schulte-Frohlinde, *Critical Properties of φ⁴ Theories* (2001),
ch. 16 — chapter numbers quoted from memory.) The x^{2M} oscillators have E_n ~ Γ((M − 1) n
+ ½) (Bender & Wu, Phys. Rev. Lett. 27, 461 (1971)): k = 1 for x⁴, k = 2 for x⁶; here k is
the factorial power that :func:`anharmony.series.large_order` measures on the coefficients.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np

from anharmony.errors import InputError, NumericalError

from ._family import combine, guard_path
from ._values import to_mpf
from .resum import (
    DOUBLET_RTOL,
    PATH_RTOL,
    PadeApproximant,
    Resummed,
    _polish,
    _prepared,
    _reducing_pade,
)

__all__ = ["BorelPade", "borel_pade", "leroy_order"]

U_MAX = 60.0  # the Laplace integral in u stops here: e^{−60} ≈ 1e-26 of the integrand's scale
NEAR_ANGLE = 0.1  # a pole within this angle (rad) of the path spoils the approximant
QUAD_EPSREL = 1e-12  # relative accuracy asked of scipy.integrate.quad
QUAD_LIMIT = 200  # subintervals allowed to quad
POLE_NEGLIGIBLE_RTOL = 1e-10  # a pole near the path may change the integral by this (relative)
SKIP_WINDOW = 0.05  # ... and then the principal value is taken over ±5 % of u around it
DOUBLET_CHANGE_FACTOR = 10.0  # ∫ e^{-u} |r|/|s − p| du ≲ 10 |r|/|p| (a log for p on the path)
_TINY = 1e-300
_PROBE = np.polynomial.laguerre.laggauss(32)[0]  # u where the rounding of P/Q is estimated
_EPS = np.finfo(float).eps


@dataclass(frozen=True, eq=False)
class BorelPade(Resummed):
    """Borel(–Leroy)–Padé sums with uncertainties (see :class:`~.resum.Resummed`).

    Attributes
    ----------
    quadrature_error : ndarray
        The largest quadrature-plus-rounding error of the kept approximants' integrals (part
        of ``uncertainty``; before uncertainties were measured this alone was ``error``).
    on_path : ndarray of bool
        True where the top approximant (the one a single Borel–Padé sum would use) has a pole
        on the integration path itself: there the Borel sum of that approximant does not
        exist (a direction that is not Borel summable, or too few orders).
    power : int
        k of the Borel–Leroy transform (1: Borel).
    poles : ndarray of complex
        Poles of :attr:`approximant`, in the Borel variable s (of λ, or of λ² for ``step`` 2).
    doublets : ndarray of complex
        Its Froissart pole–zero pairs (closer than 1e-6, relative), cancelled before the
        integral.
    """

    quadrature_error: np.ndarray = None  # type: ignore[assignment]
    on_path: np.ndarray = None  # type: ignore[assignment]
    power: int = 1
    poles: np.ndarray = None  # type: ignore[assignment]
    doublets: np.ndarray = None  # type: ignore[assignment]


def leroy_order(coefficients: Sequence[Any]) -> int:
    """k for the Borel–Leroy transform: the factorial power of the growth, else 1.

    ``large_order(...).power`` when the coefficients grow factorially (p ≥ 1); 1 (plain Borel)
    for geometric growth or too few orders to tell.
    """
    from .growth import large_order

    try:
        lo = large_order(coefficients)
    except (ValueError, ArithmeticError):
        return 1
    return int(lo.power) if lo.kind == "factorial" and lo.power >= 1 else 1


class _Integrand:
    """B_[L/M](s) of one approximant, in floats, its Froissart doublets cancelled.

    ``poles``/``residues`` are the poles left (in s) and their residues; ``doublets`` the
    pole–zero pairs by the path (within 0.1 rad of the ray in ``direction``) that were
    cancelled, and ``doublet_change`` for each |r|/|p| — residue over distance from the
    origin, the size of the term r/(s − p) that cancelling removed from B near s = 0.
    """

    def __init__(self, approx: PadeApproximant, direction: float = 1.0) -> None:
        self.approx = approx
        g = approx.scale
        self.g = float(g)
        p = list(approx.numerator)
        q = list(approx.denominator)
        zeros = [complex(z) / self.g for z in approx.zeros]  # in μ = s/g
        poles = [complex(z) / self.g for z in approx.poles]
        pairs = []
        free = list(zeros)
        for i, pole in enumerate(poles):
            if not free:
                break
            d = np.abs(np.array(free) - pole)
            j = int(np.argmin(d))
            tol = DOUBLET_RTOL * max(1.0, abs(pole))
            w = pole * direction
            toward = w.real > 0 and abs(math.atan2(w.imag, w.real)) <= NEAR_ANGLE
            # only pairs by the path need cancelling; elsewhere P/Q is evaluated as it is
            if d[j] < tol and pole.imag > -tol and toward:  # real, or the upper of two
                pairs.append((i, zeros.index(free[j])))
                free[j] = complex(math.inf)  # each zero cancels one pole
        cancelled, cancelled_res, gone = [], [], []
        with mpmath.workdps(40 + 3 * (approx.L + approx.M)):
            q_high = list(reversed(q))
            for i, j in pairs:
                zp = _polish(q_high, poles[i])
                zz = _polish(list(reversed(p)), zeros[j])
                # what removing the pair changes in B, relative to 1/|s|: |r|/|p|
                res = abs(complex(_residue(p, q, zp))) / max(abs(complex(zp)), 1e-300)
                real = abs(poles[i].imag) <= DOUBLET_RTOL * max(1.0, abs(poles[i]))
                roots_p = [mpmath.re(zp)] if real else [zp, mpmath.conj(zp)]
                roots_z = [mpmath.re(zz)] if real else [zz, mpmath.conj(zz)]
                q = _deflate(q, roots_p)
                p = _deflate(p, roots_z)
                for r in roots_p:
                    cancelled.append(complex(r) * self.g)
                    cancelled_res.append(res)
                gone += [i] if real else [i, _conjugate_index(poles, i)]
        self.doublets = np.array(cancelled, dtype=complex)
        self.doublet_change = np.array(cancelled_res, dtype=float)
        self.p = np.array([float(x) for x in p])
        self.q = np.array([float(x) for x in q])
        left = [z for i, z in enumerate(poles) if i not in gone]
        self.poles = np.array(left, dtype=complex) * self.g  # in s
        dq = np.polyder(self.q[::-1])
        with np.errstate(all="ignore"):
            self.residues = np.array(
                [abs(np.polyval(self.p[::-1], z) / np.polyval(dq, z)) * self.g for z in left],
                dtype=float)
        self.finite = bool(np.all(np.isfinite(self.p)) and np.all(np.isfinite(self.q)))
        self._p_high, self._q_high = self.p[::-1].tolist(), self.q[::-1].tolist()
        self._p_low, self._q_low = self.p.tolist(), self.q.tolist()
        self._shift = len(self.p) - len(self.q)

    def scalar(self, mu: float) -> float:
        """P/Q at one real μ (pure-Python Horner: quad calls this a few thousand times)."""
        if abs(mu) <= 1.0:
            pv = qv = 0.0
            for c in self._p_high:
                pv = pv * mu + c
            for c in self._q_high:
                qv = qv * mu + c
            return pv / qv
        inv = 1.0 / mu
        pv = qv = 0.0
        for c in self._p_low:
            pv = pv * inv + c
        for c in self._q_low:
            qv = qv * inv + c
        return pv / qv * mu**self._shift

    def __call__(self, mu: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """P/Q at μ = s/g and the relative rounding bound of that evaluation."""
        mu = np.asarray(mu, dtype=float)
        small = np.abs(mu) <= 1.0
        inv = np.where(small, 0.0, 1.0 / np.where(small, 1.0, mu))
        # Horner in μ inside the unit disc, in 1/μ outside (no overflow for large s)
        pv = np.where(small, np.polyval(self.p[::-1], mu), np.polyval(self.p, inv))
        qv = np.where(small, np.polyval(self.q[::-1], mu), np.polyval(self.q, inv))
        pa = np.where(small, np.polyval(np.abs(self.p[::-1]), np.abs(mu)),
                      np.polyval(np.abs(self.p), np.abs(inv)))
        qa = np.where(small, np.polyval(np.abs(self.q[::-1]), np.abs(mu)),
                      np.polyval(np.abs(self.q), np.abs(inv)))
        shift = len(self.p) - len(self.q)
        with np.errstate(all="ignore"):
            ratio = pv / qv
            ratio = np.where(small, ratio, ratio * np.where(small, 1.0, mu) ** shift)
            cond = pa / np.abs(pv) + qa / np.abs(qv)
        return ratio, cond * len(self.p) * _EPS


def _residue(p_low: list, q_low: list, root: mpmath.mpc) -> mpmath.mpc:
    """Residue of P/Q at a simple root of Q (in μ)."""
    q_high = list(reversed(q_low))
    dq = [c * (len(q_high) - 1 - i) for i, c in enumerate(q_high[:-1])]
    return mpmath.polyval(list(reversed(p_low)), root) / mpmath.polyval(dq, root)


def _conjugate_index(points: list, i: int) -> int:
    d = [abs(z - points[i].conjugate()) if k != i else math.inf for k, z in enumerate(points)]
    return int(np.argmin(d))


def _influence(poles: np.ndarray, residues: np.ndarray, z: float, k: int
               ) -> tuple[float, float]:
    """(largest effect, smallest u) of poles near the path s = z u^k on the integral.

    A simple pole at s_p = z u_p^k with residue r changes ∫ e^{−u} B du by about
    π e^{−u_p} |r| / (|z| k u_p^{k−1}) (half the residue term of the integrand in u):
    the ambiguity of passing it on either side.
    """
    near = _on_path(poles, z, k, NEAR_ANGLE)
    if not np.any(near):
        return 0.0, math.inf
    u = np.abs(poles[near] / z) ** (1.0 / k)
    effect = math.pi * np.exp(-u) * residues[near] / (abs(z) * k * u ** (k - 1))
    return float(np.max(np.where(np.isfinite(effect), effect, math.inf))), float(np.min(u))


def _deflate(c_low: list, roots: list) -> list:
    """Σ c_i μ^i divided by Π (μ − r) (synthetic division; the remainder is dropped)."""
    c = list(c_low)
    for r in roots:
        high = list(reversed(c))
        out = [high[0]]
        for a in high[1:-1]:
            out.append(a + r * out[-1])
        c = list(reversed(out))
    return [mpmath.re(x) for x in c]


def _on_path(poles: np.ndarray, z: float, k: int, angle: float) -> np.ndarray:
    """Poles within ``angle`` of the ray s = z u^k, u ∈ (0, U_MAX]."""
    if poles.size == 0:
        return np.zeros(0, dtype=bool)
    w = poles / z  # the path is w = u^k > 0
    reach = U_MAX**k * (1.0 + angle)
    with np.errstate(all="ignore"):
        ang = np.abs(np.angle(w))
    return (w.real > 0) & (ang <= angle) & (np.abs(w) <= reach)


def _laplace(f: _Integrand, z: float, k: int, skip: float = math.inf
             ) -> tuple[float, float]:
    """∫_0^U_MAX e^{−u} B(z u^k) du by scipy quad, and its error bound.

    ``skip``: u of a pole on the path (whose effect is negligible): across ±5 % around it the
    principal value is taken (quad's Cauchy weight). The bound adds quad's own estimates, the
    rounding of P/Q (from its condition number) and the tail beyond U_MAX.
    """
    from scipy.integrate import quad

    g = f.g

    def integrand(u: float) -> float:
        try:
            return math.exp(-u) * f.scalar(z * u**k / g)
        except ZeroDivisionError:
            return math.inf

    breaks = []
    u_star = (g / abs(z)) ** (1.0 / k)  # where |s| reaches the scale of the Borel plane
    if 0.0 < u_star < U_MAX:
        breaks.append(u_star)
    for p in f.poles:  # poles close to (not on) the path: split where they project
        w = p / z
        if w.real > 0 and abs(np.angle(w)) < 4 * NEAR_ANGLE:
            u_p = abs(w) ** (1.0 / k)
            if 0.0 < u_p < U_MAX:
                breaks.append(u_p)
    pieces = [(0.0, U_MAX)]
    val = err = 0.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # IntegrationWarning: its error bound says enough
        if skip < U_MAX:
            lo, hi = skip * (1 - SKIP_WINDOW), min(U_MAX, skip * (1 + SKIP_WINDOW))
            pieces = [(0.0, lo), (hi, U_MAX)]
            # principal value across the pole: ∫ h(u)/(u − u_p) du with h smooth
            v, e = quad(lambda u: integrand(u) * (u - skip), lo, hi, weight="cauchy",
                        wvar=skip, epsabs=0.0, epsrel=QUAD_EPSREL, limit=QUAD_LIMIT)
            val, err = v, e
        for a, b in pieces:
            if b <= a:
                continue
            pts = sorted({x for x in breaks if a < x < b}) or None
            v, e = quad(integrand, a, b, points=pts, epsabs=0.0, epsrel=QUAD_EPSREL,
                        limit=QUAD_LIMIT)
            val += v
            err += e
    _, rel = f(z * _PROBE**k / g)
    rel = rel[np.isfinite(rel)] if skip < U_MAX else rel
    rounding = float(np.max(rel)) * abs(val) if rel.size and np.all(np.isfinite(rel)) \
        else math.inf
    tail = math.exp(-U_MAX) * abs(float(f(np.array([z * U_MAX**k / g]))[0][0]))
    return val, err + rounding + tail


def borel_pade(
    coefficients: Sequence[Any],
    lam: Any = 1.0,
    L: int | None = None,
    M: int | None = None,
    *,
    power: int | None = None,
) -> BorelPade:
    """Borel(–Leroy)–Padé sum at λ, with an uncertainty from a family of approximants.

    Parameters
    ----------
    coefficients, lam, L, M
        The series c_0..c_K, the coupling(s) and the top [L/M] of the transform's family, as
        for :func:`~.resum.pade_sum`.
    power
        k of the Borel–Leroy transform; default :func:`leroy_order` of the coefficients
        (the measured factorial power of their growth).

    Returns
    -------
    BorelPade

    Notes
    -----
    B(s) = Σ c_n s^n / Γ(kn + 1) is rescaled, s = g μ, so its coefficients have no
    exponential trend; each Padé approximant is solved in mpmath (``mpmath.pade``, 40 + 3(L+M)
    digits — the systems are ill-conditioned), its poles and zeros found by numpy and, where
    it matters, polished by Newton steps in mpmath. Froissart pole–zero pairs closer than
    1e-6 (relative) cancel by deflation (Baker & Graves-Morris, *Padé Approximants*, §2.2;
    Froissart 1969). The integral E = ∫_0^60 e^{−u} B(λ u^k) du of the float rational
    (Horner in μ or 1/μ) is ``scipy.integrate.quad``, with the rounding of the rational
    bounded from its condition number. The family (top [L/M], neighbours [L±1/M∓1], one and
    two orders fewer) is reduced as in :func:`~.resum.pade_sum`; an approximant with a pole
    within 0.1 rad of the path s = λu^k (u ≤ 60) is left out, and where every one has a pole
    on the path the value is NaN (not Borel summable in that direction, or too few orders).
    """
    centre, red, step = _prepared(coefficients, L, M)
    order = len(red) - 1
    if power is None:
        k = leroy_order(coefficients)
    elif isinstance(power, bool) or not isinstance(power, (int, np.integer)) or power < 1:
        raise InputError(f"power must be an integer >= 1; got {power!r}")
    else:
        k = int(power)
    with mpmath.workdps(40 + 3 * order):
        borel = [to_mpf(c) / mpmath.gamma(k * n + 1) for n, c in enumerate(red)]
    cache: dict[tuple, _Integrand | str] = {}

    approximants: dict[tuple[int, int], PadeApproximant | str] = {}

    def integrand_of(lm: tuple[int, int], direction: float = 1.0) -> _Integrand | str:
        key = (lm, direction)
        if key not in cache:
            if lm not in approximants:
                try:
                    approximants[lm] = _reducing_pade(borel, lm[0], lm[1])
                except (NumericalError, ZeroDivisionError) as exc:
                    approximants[lm] = f"[{lm[0]}/{lm[1]}] singular ({exc})"
            a = approximants[lm]
            if isinstance(a, str):
                cache[key] = a
            else:
                f = _Integrand(a, direction)
                cache[key] = f if f.finite else f"[{lm[0]}/{lm[1]}] outside the double range"
        return cache[key]

    lam_arr = np.asarray(lam, dtype=float)
    flat = lam_arr.reshape(-1)
    c0 = float(to_mpf(coefficients[0]))
    top = centre or (order - order // 2, order // 2)
    out: dict[str, list] = {key: [] for key in
                            ("value", "unc", "quad", "trusted", "reason", "members", "rejected",
                             "path")}
    first: _Integrand | None = None
    for x in flat:
        z = float(x) ** step
        if z == 0.0 or order == 0 or all(to_mpf(c) == 0 for c in red[1:]):
            for key, v in (("value", c0), ("unc", 0.0), ("quad", 0.0), ("trusted", True),
                           ("reason", "λ = 0" if z == 0.0 else "no corrections"),
                           ("members", ()), ("rejected", ()), ("path", False)):
                out[key].append(v)
            continue
        errs: list[float] = []

        def evaluate(lm: tuple[int, int], z: float = z, errs: list = errs
                     ) -> tuple[float, float] | str:
            f = integrand_of(lm, math.copysign(1.0, z))
            if isinstance(f, str):
                return f
            allowed = POLE_NEGLIGIBLE_RTOL * max(abs(c0), _TINY)
            effect, u_pole = _influence(f.poles, f.residues, z, k)
            if effect > allowed:
                return f"[{lm[0]}/{lm[1]}] has a pole on or near the integration path"
            pair = float(np.max(f.doublet_change, initial=0.0)) * DOUBLET_CHANGE_FACTOR
            if pair > allowed:
                return (f"[{lm[0]}/{lm[1]}] has a pole–zero pair near the integration path "
                        "that matters to the integral")
            v, e = _laplace(f, z, k, u_pole)
            e += effect + pair
            errs.append(e)
            return v, e

        fam = combine(order, evaluate, c0=c0, centre=centre, what="Borel–Padé approximant")
        top_f = integrand_of(top, math.copysign(1.0, z)) if top[1] >= 1 else None
        blocked = isinstance(top_f, _Integrand) and bool(
            np.any(_on_path(top_f.poles, z, k, PATH_RTOL)))
        out["value"].append(fam.value)
        out["unc"].append(fam.uncertainty)
        out["quad"].append(max(errs) if errs else math.nan)
        out["trusted"].append(fam.trusted)
        out["reason"].append(fam.reason + ("" if k == 1 else f"; Borel–Leroy order k = {k}"))
        out["members"].append(fam.members)
        out["rejected"].append(fam.rejected)
        out["path"].append(blocked)
        if first is None:
            pick = integrand_of(fam.members[0], math.copysign(1.0, z)) if fam.members else top_f
            first = pick if isinstance(pick, _Integrand) else None
    guard_path(coefficients, flat, out["unc"], out["trusted"], out["reason"])
    shape = lam_arr.shape
    if first is None and top[1] >= 1 and order >= 1:
        got = integrand_of(top)
        first = got if isinstance(got, _Integrand) else None
    approx = first.approx if first is not None else None
    poles = approx.poles if approx is not None else np.zeros(0, dtype=complex)
    return BorelPade(
        method="borel_pade", lam=lam_arr.copy(),
        value=np.array(out["value"], dtype=float).reshape(shape),
        uncertainty=np.array(out["unc"], dtype=float).reshape(shape),
        trusted=np.array(out["trusted"], dtype=bool).reshape(shape),
        reason=tuple(out["reason"]), orders=len(coefficients) - 1,
        members=tuple(out["members"]), rejected=tuple(out["rejected"]), step=step,
        approximant=approx,
        quadrature_error=np.array(out["quad"], dtype=float).reshape(shape),
        on_path=np.array(out["path"], dtype=bool).reshape(shape), power=k, poles=poles,
        doublets=first.doublets if first is not None else np.zeros(0, dtype=complex),
    )
