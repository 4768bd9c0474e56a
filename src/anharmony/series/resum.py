"""Analysis of a power series Σ_k c_k λ^k: partial sums, Padé, Borel–Padé, truncation, growth.

Every function takes the coefficients c_0..c_K as a sequence of floats, integers,
:class:`fractions.Fraction` or :class:`mpmath.mpf` (the last two keep their full precision,
which the ill-conditioned Padé systems of divergent series need) and never modifies them.

Conventions (PITFALLS §4): ``scipy.interpolate.pade(an, m, n)`` takes the *denominator* order
first and returns ``poly1d`` objects (highest power first); ``mpmath.pade(a, L, M)`` takes the
numerator order first and returns lists lowest power first. Here ``[L/M]`` always means
numerator degree L, denominator degree M, and coefficient arrays are lowest power first with
the denominator normalised to Q(0) = 1.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np

from anharmony.errors import NumericalError

__all__ = [
    "BorelPade",
    "LargeOrder",
    "OptimalTruncation",
    "PadeApproximant",
    "borel_pade",
    "large_order",
    "optimal_truncation",
    "pade",
    "pade_approximant",
    "partial_sums",
    "to_mpf",
]

PATH_RTOL = 1e-8  # a Borel-plane pole with |Im s| below this times |s| lies on the Laplace path
DOUBLET_RTOL = 1e-6  # a pole and a zero closer than this (relative) form a Froissart doublet
QUAD_EPSREL = 1e-12  # relative accuracy asked of scipy.integrate.quad for the Laplace integral
SCIPY_MAX_ORDER = 10  # method="auto" uses scipy's double-precision Padé up to L + M = 10


def to_mpf(value: Any) -> mpmath.mpf:
    """Convert a float, int, Fraction, gmpy2.mpq or mpf to :class:`mpmath.mpf`."""
    if isinstance(value, mpmath.mpf):
        return value
    if isinstance(value, (int, np.integer)):
        return mpmath.mpf(int(value))
    if isinstance(value, Fraction) or (
        hasattr(value, "numerator") and hasattr(value, "denominator")
        and not isinstance(value, (float, np.floating))
    ):
        return mpmath.mpf(int(value.numerator)) / int(value.denominator)
    return mpmath.mpf(float(value))


def _as_float_array(coefficients: Sequence[Any]) -> np.ndarray:
    out = np.empty(len(coefficients))
    for k, c in enumerate(coefficients):
        try:
            out[k] = float(c)
        except OverflowError:
            out[k] = math.copysign(math.inf, float(mpmath.sign(to_mpf(c))))
    return out


def _check_coefficients(coefficients: Sequence[Any]) -> None:
    if len(coefficients) == 0:
        raise ValueError("coefficients must hold at least c_0; got an empty sequence")


def partial_sums(coefficients: Sequence[Any], lam: Any) -> np.ndarray:
    """Partial sums S_k(λ) = Σ_{i≤k} c_i λ^i for k = 0..K.

    Parameters
    ----------
    coefficients
        c_0..c_K.
    lam
        Coupling λ, scalar or array.

    Returns
    -------
    ndarray, shape (K+1,) + shape(lam)
        Floats; ±inf where a sum leaves the double range.
    """
    _check_coefficients(coefficients)
    lam_arr = np.asarray(lam, dtype=float)
    c = _as_float_array(coefficients)
    if np.all(np.isfinite(c)):
        with np.errstate(over="ignore", invalid="ignore"):
            powers = lam_arr[None, ...] ** np.arange(len(c)).reshape((-1,) + (1,) * lam_arr.ndim)
            terms = c.reshape((-1,) + (1,) * lam_arr.ndim) * powers
            terms = np.where(c.reshape((-1,) + (1,) * lam_arr.ndim) == 0.0, 0.0, terms)
            return np.cumsum(terms, axis=0)
    mp_c = [to_mpf(x) for x in coefficients]
    flat = lam_arr.reshape(-1)
    out = np.empty((len(mp_c), flat.size))
    for j, x in enumerate(flat):
        total = mpmath.mpf(0)
        xm = mpmath.mpf(float(x))
        for k, ck in enumerate(mp_c):
            total += ck * xm**k
            out[k, j] = _mpf_to_float(total)
    return out.reshape((len(mp_c), *lam_arr.shape))


def _mpf_to_float(x: mpmath.mpf) -> float:
    try:
        return float(x)
    except OverflowError:  # pragma: no cover - mpmath returns inf itself in current versions
        return math.copysign(math.inf, float(mpmath.sign(x)))


def _growth_scale(coefficients: Sequence[mpmath.mpf]) -> mpmath.mpf:
    """g such that c_k g^k has no overall exponential trend (least-squares in log|c_k|)."""
    ks, logs = [], []
    for k, c in enumerate(coefficients):
        if c != 0:
            ks.append(k)
            logs.append(float(mpmath.log(abs(c))))
    if len(ks) < 2:
        return mpmath.mpf(1)
    slope = np.polyfit(np.array(ks, float), np.array(logs), 1)[0]
    return mpmath.exp(-slope)


@dataclass(frozen=True, eq=False)
class PadeApproximant:
    """Padé approximant [L/M](λ) = P(λ)/Q(λ) of a power series, Q(0) = 1.

    Attributes
    ----------
    L, M : int
        Numerator and denominator degrees.
    numerator, denominator : tuple of mpmath.mpf
        Coefficients of P and Q in the scaled variable μ = λ/scale, lowest power first.
    scale : mpmath.mpf
        λ = scale · μ (chosen so the scaled coefficients have no exponential trend).
    poles, zeros : ndarray of complex
        Roots of Q and P in λ.
    doublets : ndarray of complex
        Poles that sit on a zero (relative distance < 1e-6): Froissart doublets, a sign of
        noise in the coefficients or of too high an order.
    method : str
        ``"scipy"`` or ``"mpmath"``.
    """

    L: int
    M: int
    numerator: tuple
    denominator: tuple
    scale: mpmath.mpf
    poles: np.ndarray
    zeros: np.ndarray
    doublets: np.ndarray
    method: str

    def __call__(self, lam: Any) -> np.ndarray | float:
        """Value of P(λ)/Q(λ) (float or array; NaN at a pole)."""
        arr = np.asarray(lam, dtype=float)
        out = np.empty(arr.size)
        p_rev, q_rev = list(reversed(self.numerator)), list(reversed(self.denominator))
        for i, x in enumerate(arr.reshape(-1)):
            mu = mpmath.mpf(float(x)) / self.scale
            den = mpmath.polyval(q_rev, mu)
            out[i] = math.nan if den == 0 else _mpf_to_float(mpmath.polyval(p_rev, mu) / den)
        return float(out[0]) if arr.ndim == 0 else out.reshape(arr.shape)


def _roots(coeffs_low_first: Sequence[mpmath.mpf]) -> list:
    c = list(coeffs_low_first)
    while c and c[-1] == 0:
        c.pop()
    if len(c) <= 1:
        return []
    zeros_at_origin = 0
    while c[0] == 0:
        c.pop(0)
        zeros_at_origin += 1
    roots: list = [mpmath.mpc(0)] * zeros_at_origin
    if len(c) > 1:
        try:
            roots += list(mpmath.polyroots(list(reversed(c)), maxsteps=400,
                                           extraprec=4 * mpmath.mp.prec))
        except mpmath.libmp.NoConvergence:
            roots += [mpmath.mpc(z) for z in np.roots([float(x) for x in reversed(c)])]
    return roots


def pade_approximant(
    coefficients: Sequence[Any], L: int, M: int, *, method: str = "auto"
) -> PadeApproximant:
    """Padé approximant [L/M] from c_0..c_{L+M}.

    Parameters
    ----------
    coefficients
        c_0..c_K with K ≥ L + M (extra ones are ignored).
    L, M
        Numerator and denominator degrees.
    method
        ``"scipy"`` (``scipy.interpolate.pade``, double precision), ``"mpmath"``
        (``mpmath.pade`` with 40 + 3(L+M) digits) or ``"auto"`` (scipy up to L + M = 10,
        mpmath above, and always mpmath when a coefficient exceeds the double range).

    Raises
    ------
    ValueError
        If L, M are negative or L + M > K.
    NumericalError
        If the Padé system is singular (e.g. a series in λ² with odd M).

    Notes
    -----
    Baker & Graves-Morris, *Padé Approximants* (2nd ed., 1996), ch. 1. The series is first
    rescaled, λ = g μ, so the coefficients c_k g^k have no exponential trend (PITFALLS §4).
    """
    _check_coefficients(coefficients)
    for name, v in (("L", L), ("M", M)):
        if not isinstance(v, (int, np.integer)) or v < 0:
            raise ValueError(f"{name} must be an integer >= 0; got {v!r}")
    if len(coefficients) - 1 < L + M:
        raise ValueError(
            f"Padé [{L}/{M}] needs coefficients up to order L + M = {L + M}; "
            f"got orders 0..{len(coefficients) - 1}"
        )
    if method not in ("auto", "scipy", "mpmath"):
        raise ValueError(f"method must be 'auto', 'scipy' or 'mpmath'; got {method!r}")
    n = L + M + 1
    floats = _as_float_array(coefficients[:n])
    if method == "auto":
        method = "scipy" if (L + M <= SCIPY_MAX_ORDER and np.all(np.isfinite(floats))) else "mpmath"
    dps = 40 + 3 * (L + M)
    with mpmath.workdps(dps):
        c = [to_mpf(x) for x in coefficients[:n]]
        g = _growth_scale(c)
        scaled = [ck * g**k for k, ck in enumerate(c)]
        if method == "scipy":
            from scipy.interpolate import pade as scipy_pade

            an = np.array([float(x) for x in scaled])
            with warnings.catch_warnings():
                warnings.simplefilter("error")
                try:
                    p, q = scipy_pade(an, M, L)  # scipy: m = denominator order first
                except Exception as exc:  # LinAlgError, LinAlgWarning, ValueError
                    raise NumericalError(
                        f"Padé [{L}/{M}] with scipy failed ({exc}); use method='mpmath' or "
                        "other L, M"
                    ) from exc
            p_low = [mpmath.mpf(float(x)) for x in p.coeffs[::-1]]
            q_low = [mpmath.mpf(float(x)) for x in q.coeffs[::-1]]
            p_low += [mpmath.mpf(0)] * (L + 1 - len(p_low))
            q_low += [mpmath.mpf(0)] * (M + 1 - len(q_low))
            q0 = q_low[0]
            p_low = [x / q0 for x in p_low]
            q_low = [x / q0 for x in q_low]
        else:
            try:
                p_low, q_low = mpmath.pade(scaled, L, M)  # mpmath: numerator order first
            except ZeroDivisionError as exc:
                raise NumericalError(
                    f"Padé [{L}/{M}] system is singular for these coefficients ({exc}); for a "
                    "series in λ² (odd orders zero) use an even M, or try other L, M"
                ) from exc
            p_low = list(p_low) + [mpmath.mpf(0)] * (L + 1 - len(p_low))
            q_low = list(q_low) + [mpmath.mpf(0)] * (M + 1 - len(q_low))
        poles_mu = _roots(q_low)
        zeros_mu = _roots(p_low)
        poles = np.array([complex(z * g) for z in poles_mu], dtype=complex)
        zeros = np.array([complex(z * g) for z in zeros_mu], dtype=complex)
    doublets = np.array(
        [p for p in poles
         if zeros.size and np.min(np.abs(zeros - p)) < DOUBLET_RTOL * max(1.0, abs(p))],
        dtype=complex,
    )
    return PadeApproximant(
        L=int(L), M=int(M), numerator=tuple(p_low), denominator=tuple(q_low), scale=g,
        poles=poles, zeros=zeros, doublets=doublets, method=method,
    )


def _reducing_pade(coefficients: Sequence[Any], L: int, M: int) -> PadeApproximant:
    """[L/M], or the nearest lower [L−i/M−i] when the system is singular.

    A singular Padé system means the approximant sits in a block of the Padé table (the
    series is that of a rational function of lower degrees, or a square block of equal
    entries), whose top-left entry is the approximant wanted (Baker & Graves-Morris, ch. 2).
    """
    while True:
        try:
            return pade_approximant(coefficients, L, M, method="mpmath")
        except NumericalError:
            if M == 0:
                raise
            L, M = max(L - 1, 0), M - 1


def pade(
    coefficients: Sequence[Any], L: int, M: int, lam: Any, *, method: str = "auto"
) -> np.ndarray | float:
    """Value of the Padé approximant [L/M] at λ (see :func:`pade_approximant`)."""
    return pade_approximant(coefficients, L, M, method=method)(lam)


@dataclass(frozen=True, eq=False)
class BorelPade:
    """Borel–Padé sums of a series at one or more couplings.

    Attributes
    ----------
    lam, value, error : ndarray
        Couplings, Laplace-integral values (NaN where a pole lies on the path) and the
        quadrature's own error estimates.
    on_path : ndarray of bool
        True where a Borel-plane pole lies on the integration ray s = λt, t > 0.
    poles : ndarray of complex
        Poles of the Padé approximant of the Borel transform, in the Borel variable s.
    approximant : PadeApproximant
        The [L/M] approximant of B(s) = Σ c_k s^k / k!.
    """

    lam: np.ndarray
    value: np.ndarray
    error: np.ndarray
    on_path: np.ndarray
    poles: np.ndarray
    approximant: PadeApproximant

    @property
    def L(self) -> int:
        """Numerator degree of the Borel-plane approximant."""
        return self.approximant.L

    @property
    def M(self) -> int:
        """Denominator degree of the Borel-plane approximant."""
        return self.approximant.M


def _default_lm(order: int) -> tuple[int, int]:
    m = order // 2
    return order - m, m


def borel_pade(
    coefficients: Sequence[Any],
    lam: Any,
    L: int | None = None,
    M: int | None = None,
) -> BorelPade:
    """Borel–Padé sum: Padé of the Borel transform, then the Laplace integral.

    Parameters
    ----------
    coefficients
        c_0..c_K.
    lam
        Coupling(s) λ.
    L, M
        Degrees of the Padé approximant of the Borel transform; default the (near-)diagonal
        L = K − ⌊K/2⌋, M = ⌊K/2⌋. When that Padé system is singular the nearest lower
        [L−i/M−i] is used (``result.L``, ``result.M`` say which).

    Returns
    -------
    BorelPade

    Notes
    -----
    B(s) = Σ_k c_k s^k / k!,  E(λ) = ∫_0^∞ e^{−t} B_{[L/M]}(λt) dt (Borel 1899; e.g. Zinn-Justin,
    *Quantum Field Theory and Critical Phenomena*, ch. 41). The Padé approximant is computed in
    extended precision (``mpmath.pade``), its poles and zeros by ``mpmath.polyroots``, and the
    integrand in factored form, P/Q = (p_L/q_M) Π(s − z_i)/Π(s − p_i), which avoids the
    cancellation of a Horner sum on the integration path; the integral is
    ``scipy.integrate.quad`` on [0, ∞). A pole with Re(s/λ) > 0 and |Im s| < 1e-8 |s| sits on
    the path: the sum is then not defined (a non-Borel-summable direction) and the value is NaN.
    """
    from scipy.integrate import quad

    _check_coefficients(coefficients)
    order = len(coefficients) - 1
    if L is None and M is None:
        L, M = _default_lm(order)
    elif L is None or M is None:
        raise ValueError(f"give both L and M or neither; got L={L!r}, M={M!r}")
    with mpmath.workdps(40 + 3 * (L + M)):
        borel = [to_mpf(c) / mpmath.factorial(k) for k, c in enumerate(coefficients)]
        approx = _reducing_pade(borel, L, M)
        g = approx.scale
        p_low = list(approx.numerator)
        while len(p_low) > 1 and p_low[-1] == 0:
            p_low.pop()
        q_low = list(approx.denominator)
        while len(q_low) > 1 and q_low[-1] == 0:
            q_low.pop()
        lead = p_low[-1] / q_low[-1] * g ** (len(q_low) - len(p_low))  # in s, not μ
    zeros, poles = approx.zeros, approx.poles
    lead_c = complex(lead)
    deg_p, deg_q = len(zeros), len(poles)

    def b_of_s(s: float) -> float:
        val = lead_c
        for i in range(max(deg_p, deg_q)):
            num = (s - zeros[i]) if i < deg_p else 1.0
            den = (s - poles[i]) if i < deg_q else 1.0
            val *= num / den
        return val.real

    lam_arr = np.asarray(lam, dtype=float)
    values = np.empty(lam_arr.size)
    errors = np.empty(lam_arr.size)
    on_path = np.zeros(lam_arr.size, dtype=bool)
    c0 = float(to_mpf(coefficients[0]))
    for i, x in enumerate(lam_arr.reshape(-1)):
        if x == 0.0:
            values[i], errors[i] = c0, 0.0
            continue
        hit = [p for p in poles
               if (p.real * x > 0.0) and abs(p.imag) <= PATH_RTOL * abs(p)]
        if hit:
            on_path[i] = True
            values[i], errors[i] = math.nan, math.nan
            continue
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # IntegrationWarning: reported through `error`
            val, err = quad(lambda t, x=x: math.exp(-t) * b_of_s(x * t), 0.0, math.inf,
                            epsabs=0.0, epsrel=QUAD_EPSREL, limit=400)
        values[i], errors[i] = val, err
    shape = lam_arr.shape
    return BorelPade(
        lam=lam_arr.copy(), value=values.reshape(shape), error=errors.reshape(shape),
        on_path=on_path.reshape(shape), poles=poles, approximant=approx,
    )


@dataclass(frozen=True)
class OptimalTruncation:
    """Series summed up to (not including) its smallest term.

    Attributes
    ----------
    value : float
        Σ_{k < order} c_k λ^k.
    error : float
        |c_order λ^order|, the usual estimate of the error of ``value``.
    order : int
        Order of the smallest nonzero term (k ≥ 1).
    reached_end : bool
        The smallest term is the last one available: the terms were still decreasing, so
        more orders would do better (and the series may well converge there).
    """

    value: float
    error: float
    order: int
    reached_end: bool


def optimal_truncation(coefficients: Sequence[Any], lam: float) -> OptimalTruncation:
    """Optimal truncation at λ: stop before the smallest term; error ≈ that term.

    Zero terms (orders that vanish by symmetry) are skipped when looking for the smallest.
    The smallest term is the global minimum of |c_k λ^k| over the nonzero terms with k ≥ 1
    (for an asymptotic series it is the point where the terms turn round). Common practice,
    e.g. Bender & Orszag, *Advanced Mathematical Methods for Scientists and Engineers* (1978),
    §3.8.
    """
    _check_coefficients(coefficients)
    x = float(lam)
    if len(coefficients) < 2:
        raise ValueError("optimal truncation needs coefficients up to order >= 1")
    with mpmath.workdps(30):
        terms = [to_mpf(c) * mpmath.mpf(x) ** k for k, c in enumerate(coefficients)]
        nonzero = [k for k in range(1, len(terms)) if terms[k] != 0]
        if not nonzero:
            return OptimalTruncation(_mpf_to_float(terms[0]), 0.0, len(terms) - 1, True)
        k_star = min(nonzero, key=lambda k: abs(terms[k]))
        value = mpmath.fsum(terms[:k_star])
        return OptimalTruncation(
            value=_mpf_to_float(value), error=_mpf_to_float(abs(terms[k_star])),
            order=int(k_star), reached_end=k_star == nonzero[-1],
        )


@dataclass(frozen=True, eq=False)
class LargeOrder:
    """Large-order behaviour of c_k from the ratio test.

    The model is |c_k| ≈ C · a^k · Γ(p·k + b) for factorial growth (p ≥ 1), or
    |c_k| ≈ C · a^k · k^b (p = 0, geometric: radius of convergence 1/a). With ``step = 2`` (odd
    orders vanish) k counts the nonzero orders: c_{2k} is modelled and the series is one in λ².

    Attributes
    ----------
    kind : str
        ``"geometric"`` (convergent, radius ``radius``) or ``"factorial"`` (divergent).
    step : int
        1, or 2 when every odd coefficient vanishes.
    ratios : ndarray
        c_k / c_{k−step} for k = step..K (NaN where the previous coefficient is zero).
    power : int
        p (0 for geometric).
    rate : float
        a.
    shift : float
        b: the Γ-function shift (factorial) or the power of k (geometric).
    constant : float
        C, extrapolated in 1/k.
    radius : float
        Radius of convergence in λ (0 for factorial growth).
    sign : str
        ``"alternating"``, ``"fixed"`` or ``"mixed"`` over the last half of the orders.
    """

    kind: str
    step: int
    ratios: np.ndarray
    power: int
    rate: float
    shift: float
    constant: float
    radius: float
    sign: str


def large_order(
    coefficients: Sequence[Any], *, tail: float = 0.5, corrections: int = 2
) -> LargeOrder:
    """Ratio-test analysis of the growth of c_k.

    Parameters
    ----------
    coefficients
        c_0..c_K, K ≥ 6 recommended (at least 4 nonzero ratios in the tail).
    tail
        Fraction of the orders (the highest ones) used in the fits.
    corrections
        Number of inverse powers 1/k, 1/k², … allowed for in each fit (a Richardson-like
        extrapolation; more need more, and more accurate, coefficients).

    Notes
    -----
    r_k = c_k/c_{k−1}. The exponent p of |r_k| ~ k^p is fitted in log–log over the tail and
    rounded to an integer. p = 0: |r_k| = a + Σ_i γ_i/k^i fitted, radius 1/a, b = γ_1/a. p ≥ 1:
    |r_k|^{1/p} = αk + β + Σ_i γ_i/k^i fitted, which for c_k ~ a^k Γ(pk + b) (1 + O(1/k))
    gives a = (α/p)^p and b = β/a^{1/p} + (p+1)/2; C is |c_k|/(a^k Γ(pk+b)) extrapolated in
    1/k the same way (i = 1..``corrections``). (Ratio method: e.g. Guttmann, in *Phase
    Transitions and Critical Phenomena* 13 (1989); Bender & Wu, Phys. Rev. D 7, 1620 (1973)
    for the anharmonic oscillators.)
    """
    _check_coefficients(coefficients)
    with mpmath.workdps(30):
        c = [to_mpf(x) for x in coefficients]
        odd_zero = len(c) > 2 and all(c[k] == 0 for k in range(1, len(c), 2))
        step = 2 if odd_zero else 1
        seq = c[::step]
        n = len(seq) - 1
        if n < 4:
            raise ValueError(
                f"large-order analysis needs at least 4 ratios; got {n} nonzero-order "
                f"coefficients beyond c_0 (step {step})"
            )
        ratios = np.array(
            [float(seq[k] / seq[k - 1]) if seq[k - 1] != 0 else math.nan
             for k in range(1, n + 1)]
        )
        start = max(1, round(n * (1.0 - tail)))
        ks = np.arange(start, n + 1, dtype=float)
        r = np.abs(ratios[start - 1 :])
        good = np.isfinite(r) & (r > 0)
        ks, r = ks[good], r[good]
        if ks.size < 3:
            raise ValueError("large-order analysis: too few nonzero ratios in the tail")
        slope = np.polyfit(np.log(ks), np.log(r), 1)[0]
        p = max(0, round(slope))
        signs = [mpmath.sign(x) for x in seq[n // 2 :] if x != 0]
        prods = [signs[i] * signs[i + 1] for i in range(len(signs) - 1)]
        sign = ("alternating" if prods and all(s < 0 for s in prods)
                else "fixed" if prods and all(s > 0 for s in prods) else "mixed")
        inverse = [ks ** (-i) for i in range(1, corrections + 1)]
        if ks.size < corrections + 2:
            raise ValueError(
                f"large-order analysis: {ks.size} ratios in the tail cannot fit "
                f"{corrections} corrections; give more orders or fewer corrections"
            )

        def extrapolate(values: np.ndarray) -> float:
            design = np.vstack([np.ones_like(ks), *inverse]).T
            return float(np.linalg.lstsq(design, values, rcond=None)[0][0])

        if p == 0:
            design = np.vstack([np.ones_like(ks), *inverse]).T
            a, gamma1 = np.linalg.lstsq(design, r, rcond=None)[0][:2]
            a = float(a)
            b = float(gamma1 / a)  # r_k = a (1 + b/k + ...)  <=>  |c_k| ~ C a^k k^b
            radius = (1.0 / a) ** (1.0 / step) if a > 0 else math.inf
            consts = np.array([
                float(abs(seq[int(k)]) / (mpmath.mpf(a) ** int(k) * mpmath.mpf(k) ** b))
                for k in ks
            ])
            return LargeOrder("geometric", step, ratios, 0, a, b, extrapolate(consts),
                              radius, sign)
        y = r ** (1.0 / p)
        design = np.vstack([ks, np.ones_like(ks), *inverse]).T
        alpha, beta = np.linalg.lstsq(design, y, rcond=None)[0][:2]
        a = float((alpha / p) ** p)
        b = float(beta / a ** (1.0 / p) + (p + 1) / 2.0)
        consts = np.array([
            float(abs(seq[int(k)]) / (mpmath.mpf(a) ** int(k) * mpmath.gamma(p * k + b)))
            for k in ks
        ])
        const = extrapolate(consts)
        return LargeOrder("factorial", step, ratios, p, a, b, const, 0.0, sign)
