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

from anharmony.errors import InputError, NumericalError

from ._values import as_float_array, check_coefficients, even_series, mpf_to_float, to_mpf

__all__ = ["PadeApproximant", "Resummed", "pade", "pade_approximant", "pade_sum", "reduced_series"]

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


POLISH_MAX_DEGREE = 12  # roots of polynomials up to this degree are polished in mpmath


def _polish(c_high_first: list, z: complex, steps: int = 3) -> mpmath.mpc:
    """A few Newton steps on a root, at the working precision."""
    x = mpmath.mpc(z)
    deriv = [c * (len(c_high_first) - 1 - i) for i, c in enumerate(c_high_first[:-1])]
    for _ in range(steps):
        d = mpmath.polyval(deriv, x)
        if d == 0:
            break
        x -= mpmath.polyval(c_high_first, x) / d
    return x


def _roots(coeffs_low_first: Sequence[mpmath.mpf]) -> list:
    """Roots of Σ c_i μ^i: numpy's companion eigenvalues, polished in mpmath for low degree.

    (``mpmath.polyroots`` at the Padé working precision took a minute at degree 40.)
    """
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
        high = list(reversed(c))
        top = max(abs(x) for x in high)
        approx = np.roots([float(x / top) for x in high])
        if len(c) - 1 <= POLISH_MAX_DEGREE:
            roots += [_polish(high, z) for z in approx]
        else:
            roots += [mpmath.mpc(complex(z)) for z in approx]
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
            raise InputError(f"{name} must be an integer >= 0; got {v!r}")
    if len(coefficients) - 1 < L + M:
        raise InputError(
            f"Padé [{L}/{M}] needs coefficients up to order L + M = {L + M}; "
            f"got orders 0..{len(coefficients) - 1}"
        )
    if method not in ("auto", "scipy", "mpmath"):
        raise InputError(f"method must be 'auto', 'scipy' or 'mpmath'; got {method!r}")
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
                p_low, q_low = _fixed_point_pade(scaled, L, M)
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


def _fixed_point_pade(c: Sequence[mpmath.mpf], L: int, M: int) -> tuple[list, list]:
    """[L/M] of Σ c_i μ^i (c of order one) by Gaussian elimination in binary fixed point.

    The same linear system as ``mpmath.pade`` (Σ_j c_{L+i−j} q_j = −c_{L+i}, i = 1..M, then
    p_i = Σ_j c_{i−j} q_j), with partial pivoting, on Python integers scaled by 2^bits
    (bits = the working precision): an order of magnitude faster than mpmath's matrices,
    which dominated the Borel–Padé time. Raises ZeroDivisionError on a singular system (a
    pivot below 2^(−3·bits/4) of the matrix scale).
    """
    bits = mpmath.mp.prec + 16
    one = 1 << bits
    ci = [int(mpmath.nint(x * one)) for x in c]

    def at(i: int) -> int:
        return ci[i] if i >= 0 else 0

    a = [[at(L + i - j) for j in range(1, M + 1)] + [-at(L + i)] for i in range(1, M + 1)]
    scale = max((abs(x) for row in a for x in row[:M]), default=0)
    tiny = scale >> (3 * bits // 4)
    for col in range(M):
        piv = max(range(col, M), key=lambda r: abs(a[r][col]))
        if abs(a[piv][col]) <= tiny:
            raise ZeroDivisionError("matrix is numerically singular")
        a[col], a[piv] = a[piv], a[col]
        prow = a[col]
        pv = prow[col]
        for r in range(col + 1, M):
            row = a[r]
            if row[col]:
                f = (row[col] << bits) // pv
                for j in range(col, M + 1):
                    row[j] -= (f * prow[j]) >> bits
    q = [0] * M
    for r in range(M - 1, -1, -1):
        acc = a[r][M] - sum((a[r][j] * q[j]) >> bits for j in range(r + 1, M))
        q[r] = (acc << bits) // a[r][r]
    q = [one, *q]
    p = [sum(at(i - j) * q[j] for j in range(min(i, M) + 1)) >> bits for i in range(L + 1)]
    den = mpmath.mpf(one)
    return [mpmath.mpf(x) / den for x in p], [mpmath.mpf(x) / den for x in q]


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




NEAR_RTOL = 0.1  # a pole within 0.1·|λ| of λ, or within 0.1 rad of (0, λ], spoils a value


@dataclass(frozen=True, eq=False)
class Resummed:
    """Resummed values of a series at one or more couplings, with honest uncertainties.

    Attributes
    ----------
    method : str
        ``"pade"`` or ``"borel_pade"``.
    lam : ndarray
        Couplings λ.
    value : ndarray
        Value of the best kept approximant (highest order, most diagonal); NaN where none.
    uncertainty : ndarray
        Largest distance of the other kept approximants (near-diagonal neighbours, one and
        two orders fewer) from ``value``, plus their own numerical error (quadrature,
        rounding); inf where fewer than three approximants survive.
    trusted : ndarray of bool
        Enough approximants survive, ``uncertainty`` is below half the resummed correction
        |value − E_0|, and the measured growth puts no singularity on the path within
        |λ|/R < 0.8 (:func:`~.growth.path_singularities`: there agreement among approximants
        bounds nothing; the uncertainty is then at least the geometric tail).
        :class:`~.front.Series` adds two checks (:meth:`~.front.Series.pade`).
    reason : tuple of str
        Per coupling: how many approximants from which orders the value rests on and, where
        not trusted, why.
    orders : int
        Highest order K of the series used.
    members : tuple of tuple
        Per coupling, the kept [L/M] (best first); the degrees are in λ, or in λ² for a series
        whose odd orders vanish (``step`` 2).
    rejected : tuple of tuple
        Per coupling, the [L/M] left out (a pole or pole–zero pair where it spoils the value,
        a singular system).
    step : int
        1, or 2 when the odd orders vanish and the approximants are built in z = λ².
    approximant : PadeApproximant
        The best kept approximant at the first coupling (or the first tried, if none).
    """

    method: str
    lam: np.ndarray
    value: np.ndarray
    uncertainty: np.ndarray
    trusted: np.ndarray
    reason: tuple
    orders: int
    members: tuple
    rejected: tuple
    step: int
    approximant: PadeApproximant | None

    @property
    def error(self) -> np.ndarray:
        """Same as :attr:`uncertainty` (the name used before uncertainties were measured)."""
        return self.uncertainty

    @property
    def L(self) -> int:
        """Numerator degree of :attr:`approximant`."""
        return self.approximant.L if self.approximant is not None else 0

    @property
    def M(self) -> int:
        """Denominator degree of :attr:`approximant`."""
        return self.approximant.M if self.approximant is not None else 0

    def __float__(self) -> float:
        return float(np.asarray(self.value, dtype=float))

    def __array__(self, dtype: Any = None, copy: Any = None) -> np.ndarray:
        return np.asarray(self.value, dtype=dtype)


def reduced_series(coefficients: Sequence[Any]) -> tuple[list, int]:
    """(c in the variable the approximants use, step): z = λ² when the odd orders vanish."""
    even = even_series(coefficients)
    if even is None or len(coefficients) < 5:
        return list(coefficients), 1
    return list(even[::2]), 2


def _lm_checked(L: Any, M: Any) -> tuple[int, int] | None:
    if L is None and M is None:
        return None
    if L is None or M is None:
        raise InputError(f"give both L and M or neither; got L={L!r}, M={M!r}")
    for name, v in (("L", L), ("M", M)):
        if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < 0:
            raise InputError(f"{name} must be an integer >= 0; got {v!r}")
    return int(L), int(M)


def _prepared(coefficients: Sequence[Any], L: Any, M: Any
              ) -> tuple[tuple[int, int] | None, list, int]:
    """(top [L/M] or None, the coefficients the family uses, step) after the checks."""
    check_coefficients(coefficients)
    centre = _lm_checked(L, M)
    red, step = (list(coefficients), 1) if centre is not None else reduced_series(coefficients)
    if centre is not None and sum(centre) > len(red) - 1:
        raise InputError(f"Padé [{centre[0]}/{centre[1]}] needs coefficients up to order "
                         f"L + M = {sum(centre)}; got orders 0..{len(red) - 1}")
    return centre, red, step


def pade_sum(
    coefficients: Sequence[Any], lam: Any = 1.0, L: int | None = None, M: int | None = None
) -> Resummed:
    """Padé value of a series at λ with an uncertainty from a family of approximants.

    Parameters
    ----------
    coefficients
        c_0..c_K.
    lam
        Coupling(s) λ.
    L, M
        The top approximant; default the near-diagonal L = K − ⌊K/2⌋, M = ⌊K/2⌋ (in λ², and
        for K/2 orders, when the odd orders vanish). Degrees must satisfy L + M ≤ K.

    Returns
    -------
    Resummed

    Notes
    -----
    The family is the top [L/M], its neighbours [L+1/M−1] and [L−1/M+1], and the same from
    one and two orders fewer (more if too few survive). An approximant with a pole within
    0.1·|λ| of λ or within 0.1 rad of the segment (0, λ] — a singularity it cannot resolve
    there, or a
    Froissart pole–zero pair (Baker & Graves-Morris, *Padé Approximants*, 2nd ed. 1996,
    §2.2) — is left out rather than allowed to widen the spread. The value is the top kept
    approximant and the uncertainty the largest distance of the others from it (common
    practice, e.g. Baker & Graves-Morris ch. 1 on convergence along Padé sequences).
    """
    from ._family import combine, near_point

    centre, red, step = _prepared(coefficients, L, M)
    order = len(red) - 1
    lam_arr = np.asarray(lam, dtype=float)
    cache: dict[tuple[int, int], PadeApproximant | str] = {}

    def approx_of(lm: tuple[int, int]) -> PadeApproximant | str:
        if lm not in cache:
            try:
                cache[lm] = _reducing_pade(red, lm[0], lm[1])
            except (NumericalError, ZeroDivisionError) as exc:
                cache[lm] = f"[{lm[0]}/{lm[1]}] singular ({exc})"
        return cache[lm]

    c0 = float(to_mpf(coefficients[0]))
    flat = lam_arr.reshape(-1)
    values, uncs, trusted, reasons, members, rejected = [], [], [], [], [], []
    first = None
    for x in flat:
        z = float(x) ** step
        if z == 0.0 or order == 0:
            values.append(c0)
            uncs.append(0.0)
            trusted.append(True)
            reasons.append("λ = 0: the first term" if z == 0.0 else "a single term")
            members.append(())
            rejected.append(())
            continue

        def evaluate(lm: tuple[int, int], z: float = z) -> tuple[float, float] | str:
            a = approx_of(lm)
            if isinstance(a, str):
                return a
            if np.any(near_point(a.poles, z, NEAR_RTOL)):
                return f"[{lm[0]}/{lm[1]}] has a pole between 0 and λ or near λ"
            return float(a(z)), 0.0

        fam = combine(order, evaluate, c0=c0, centre=centre, min_m=0)
        values.append(fam.value)
        uncs.append(fam.uncertainty)
        trusted.append(fam.trusted)
        reasons.append(fam.reason)
        members.append(fam.members)
        rejected.append(fam.rejected)
        if first is None and fam.members:
            first = approx_of(fam.members[0])
    from ._family import guard_path

    guard_path(coefficients, flat, uncs, trusted, reasons)
    if first is None:
        top = centre or (order - order // 2, order // 2)
        got = approx_of(top) if order >= 1 and top[1] >= 0 else None
        first = got if isinstance(got, PadeApproximant) else None
    shape = lam_arr.shape
    return Resummed(
        method="pade", lam=lam_arr.copy(), value=np.array(values).reshape(shape),
        uncertainty=np.array(uncs).reshape(shape), trusted=np.array(trusted).reshape(shape),
        reason=tuple(reasons), orders=len(coefficients) - 1, members=tuple(members),
        rejected=tuple(rejected), step=step, approximant=first,
    )

