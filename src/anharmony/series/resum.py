"""Resummation of a power series Σ_k c_k λ^k: Padé and Borel–Padé approximants.

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
from typing import Any

import mpmath
import numpy as np

from anharmony.errors import NumericalError

from ._values import as_float_array, check_coefficients, even_series, mpf_to_float, to_mpf

__all__ = ["BorelPade", "PadeApproximant", "borel_pade", "pade", "pade_approximant"]

PATH_RTOL = 1e-8  # a Borel-plane pole with |Im s| below this times |s| lies on the Laplace path
DOUBLET_RTOL = 1e-6  # a pole and a zero closer than this (relative) form a Froissart doublet
QUAD_EPSREL = 1e-12  # relative accuracy asked of scipy.integrate.quad for the Laplace integral
SCIPY_MAX_ORDER = 10  # method="auto" uses scipy's double-precision Padé up to L + M = 10


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
            out[i] = math.nan if den == 0 else mpf_to_float(mpmath.polyval(p_rev, mu) / den)
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
    check_coefficients(coefficients)
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
    floats = as_float_array(coefficients[:n])
    if method == "auto":
        method = "scipy" if (L + M <= SCIPY_MAX_ORDER and np.all(np.isfinite(floats))) else "mpmath"
    dps = 40 + 3 * (L + M)
    with mpmath.workdps(dps):
        even = even_series(coefficients[:n])  # rounding noise in vanishing orders -> 0
        c = [to_mpf(x) for x in (coefficients[:n] if even is None else even)]
        g = _growth_scale(c)
        scaled = [ck * g**k for k, ck in enumerate(c)]
        if M == 0:  # [L/0] is the partial sum; neither library handles it reliably
            p_low = list(scaled[: L + 1]) + [mpmath.mpf(0)] * (L + 1 - len(scaled[: L + 1]))
            q_low = [mpmath.mpf(1)]
        elif method == "scipy":
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
    """Value of the Padé approximant [L/M] at λ (see :func:`pade_approximant`).

    A singular [L/M] system (the series is that of a lower-degree rational function — e.g.
    all corrections zero) falls back to the nearest lower [L−i/M−i], which is then exact.
    """
    try:
        return pade_approximant(coefficients, L, M, method=method)(lam)
    except NumericalError:
        return _reducing_pade(coefficients, L, M)(lam)


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
    doublets : ndarray of complex
        Poles that sit on a zero (Froissart doublets) and were cancelled against it before
        the integral; a doublet on the path therefore does not make the value NaN.
    approximant : PadeApproximant
        The [L/M] approximant of B(s) = Σ c_k s^k / k!.
    """

    lam: np.ndarray
    value: np.ndarray
    error: np.ndarray
    on_path: np.ndarray
    poles: np.ndarray
    doublets: np.ndarray
    approximant: PadeApproximant

    @property
    def L(self) -> int:
        """Numerator degree of the Borel-plane approximant."""
        return self.approximant.L

    @property
    def M(self) -> int:
        """Denominator degree of the Borel-plane approximant."""
        return self.approximant.M


def _cancel_doublets(zeros: np.ndarray, poles: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Remove pole–zero pairs closer than DOUBLET_RTOL (relative): (zeros, poles, doublets)."""
    zeros = list(zeros)
    kept, doublets = [], []
    for p in poles:
        if zeros:
            dist = np.abs(np.array(zeros) - p)
            i = int(np.argmin(dist))
            if dist[i] < DOUBLET_RTOL * max(1.0, abs(p)):
                zeros.pop(i)
                doublets.append(p)
                continue
        kept.append(p)
    return (np.array(zeros, dtype=complex), np.array(kept, dtype=complex),
            np.array(doublets, dtype=complex))


def _default_lm(order: int) -> tuple[int, int]:
    m = order // 2
    return order - m, m


def _candidates(order: int) -> list[tuple[int, int]]:
    """Near-diagonal [L/M] tried in turn when the default has a pole on the path."""
    l0, m0 = _default_lm(order)
    out = []
    for dl, dm in ((0, 0), (1, -1), (-1, 0), (0, -1), (-1, -1), (2, -2), (-2, 0), (-1, 1)):
        l, m = l0 + dl, m0 + dm
        if l >= 0 and m >= 1 and l + m <= order and (l, m) not in out:
            out.append((l, m))
    return out


def borel_pade(
    coefficients: Sequence[Any],
    lam: Any,
    L: int | None = None,
    M: int | None = None,
) -> BorelPade:
    """Borel–Padé sum: Padé of the Borel transform, then the Laplace integral.

    With L and M left out, the near-diagonal approximant is used; if it has a real pole on the
    integration path for some λ (often a Froissart doublet that is not quite exact), the
    neighbouring approximants [L+1/M−1], [L−1/M], [L/M−1], … are tried in turn and the first
    without a pole on the path is returned (``result.approximant`` says which was used). If
    all of them have one, the first result (with NaN where the path is blocked) is returned.

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
    ``scipy.integrate.quad`` on [0, ∞). Pole–zero pairs closer than 1e-6 (relative) are
    Froissart doublets, artefacts of the approximant, and cancel before the integral
    (Baker & Graves-Morris, §2.2; Froissart 1969). A remaining pole with Re(s/λ) > 0 and
    |Im s| < 1e-8 |s| sits on the path: the sum is then not defined (a non-Borel-summable
    direction, or too few orders) and the value is NaN.
    """
    check_coefficients(coefficients)
    order = len(coefficients) - 1
    if L is None and M is None:
        first = None
        for i, (l_try, m_try) in enumerate(_candidates(order) or [_default_lm(order)]):
            try:
                result = _borel_pade(coefficients, lam, l_try, m_try, order)
            except (ValueError, TypeError, ZeroDivisionError):
                if i == 0:
                    raise
                continue  # a singular neighbour: try the next one
            if not np.any(result.on_path):
                return result
            first = result if first is None else first
        return first
    if L is None or M is None:
        raise ValueError(f"give both L and M or neither; got L={L!r}, M={M!r}")
    return _borel_pade(coefficients, lam, L, M, order)


def _borel_pade(coefficients: Sequence[Any], lam: Any, L: int, M: int, order: int
                ) -> BorelPade:
    from scipy.integrate import quad
    with mpmath.workdps(40 + 3 * (L + M)):
        even = even_series(coefficients)
        used = coefficients if even is None else even
        borel = [to_mpf(c) / mpmath.factorial(k) for k, c in enumerate(used)]
        approx = _reducing_pade(borel, L, M)
        g = approx.scale
        p_low = list(approx.numerator)
        while len(p_low) > 1 and p_low[-1] == 0:
            p_low.pop()
        q_low = list(approx.denominator)
        while len(q_low) > 1 and q_low[-1] == 0:
            q_low.pop()
        lead = p_low[-1] / q_low[-1] * g ** (len(q_low) - len(p_low))  # in s, not μ
    zeros, poles, doublets = _cancel_doublets(approx.zeros, approx.poles)
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
        on_path=on_path.reshape(shape), poles=approx.poles, doublets=doublets,
        approximant=approx,
    )
