"""Large-order behaviour of a power series from the ratio test."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np

from ..errors import InputError
from ._values import check_coefficients, even_series, to_mpf

__all__ = ["LargeOrder", "PathSingularity", "large_order", "path_singularities"]

MIN_SPARE = 3  # tail ratios beyond the number of fitted parameters
SETTLED_FRACTION = 0.5  # 1/k corrections above this fraction of the leading term: not settled
SCATTER_RTOL = 0.05  # ratios scattering more than 5 % (rms) about the fit: not settled


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
    orders : int
        K, the highest order the analysis rests on.
    supported : bool
        The orders reach the large-order regime: the fit is overdetermined (at least three
        more ratios in the tail than fitted parameters, after dropping 1/k corrections if
        needed), the ratios scatter by less than 5 % (rms) about it, and its 1/k corrections at
        the first fitted order are below half the leading term. When False, ``radius`` is NaN:
        nothing is claimed.
    note : str
        What the result rests on, and why it is not supported where it is not.
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
    orders: int = 0
    supported: bool = True
    note: str = ""


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
    check_coefficients(coefficients)
    with mpmath.workdps(30):
        even = even_series(coefficients)
        c = [to_mpf(x) for x in (coefficients if even is None else even)]
        step = 1 if even is None else 2
        seq = c[::step]
        n = len(seq) - 1
        if n < 4:
            raise InputError(
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
            raise InputError("large-order analysis: too few nonzero ratios in the tail")
        slope = np.polyfit(np.log(ks), np.log(r), 1)[0]
        p = max(0, round(slope))
        signs = [mpmath.sign(x) for x in seq[n // 2 :] if x != 0]
        prods = [signs[i] * signs[i + 1] for i in range(len(signs) - 1)]
        sign = ("alternating" if prods and all(s < 0 for s in prods)
                else "fixed" if prods and all(s > 0 for s in prods) else "mixed")
        if ks.size < corrections + 2:
            raise InputError(
                f"large-order analysis: {ks.size} ratios in the tail cannot fit "
                f"{corrections} corrections; give more orders or fewer corrections"
            )
        # an interpolating fit says nothing: keep MIN_SPARE more points than parameters
        used = max(0, min(corrections, ks.size - 2 - MIN_SPARE))
        inverse = [ks ** (-i) for i in range(1, used + 1)]
        big_k = len(c) - 1
        rests = f"from orders 0…{big_k} ({ks.size} ratios fitted"
        rests += f", {used} of {corrections} 1/k corrections)" if used < corrections else ")"
        enough = ks.size >= used + 2 + MIN_SPARE

        def extrapolate(values: np.ndarray) -> float:
            design = np.vstack([np.ones_like(ks), *inverse]).T
            return float(np.linalg.lstsq(design, values, rcond=None)[0][0])

        if p == 0:
            design = np.vstack([np.ones_like(ks), *inverse]).T
            sol = np.linalg.lstsq(design, r, rcond=None)[0]
            a = float(sol[0])
            gamma = sol[1:]
            b = float(gamma[0] / a) if gamma.size and a != 0 else 0.0  # r_k = a (1 + b/k + …)
            k0 = float(ks[0])
            corr = abs(sum(gi / k0 ** (i + 1) for i, gi in enumerate(gamma)))
            scatter = float(np.sqrt(np.mean((design @ sol - r) ** 2)) / np.mean(r))
            why = ("" if not enough else
                   "the ratios do not settle on a positive limit" if a <= 0 else
                   f"the ratios scatter by {scatter:.0%} about the fit"
                   if scatter > SCATTER_RTOL else
                   f"the 1/k corrections are {corr / a:.2g} of the limit at k = {int(k0)}"
                   if corr > SETTLED_FRACTION * a else "")
            if not enough:
                why = f"too few ratios in the tail ({ks.size})"
            ok = not why
            radius = ((1.0 / a) ** (1.0 / step) if a > 0 else math.inf) if ok else math.nan
            consts = np.array([
                float(abs(seq[int(k)]) / (mpmath.mpf(a) ** int(k) * mpmath.mpf(k) ** b))
                for k in ks
            ]) if a > 0 else np.full(ks.size, math.nan)
            note = rests + ("" if ok else f"; not in the large-order regime: {why}; "
                            "no radius claimed")
            return LargeOrder("geometric", step, ratios, 0, a, b, extrapolate(consts),
                              radius, sign, big_k, ok, note)
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
        k0 = float(ks[0])
        sol = np.linalg.lstsq(design, y, rcond=None)[0]
        corr = abs(sol[1] + sum(gi / k0 ** (i + 1) for i, gi in enumerate(sol[2:])))
        scatter = float(np.sqrt(np.mean((design @ sol - y) ** 2)) / np.mean(y))
        why = (f"too few ratios in the tail ({ks.size})" if not enough else
               f"the ratios scatter by {scatter:.0%} about the fit"
               if scatter > SCATTER_RTOL else
               f"the corrections are {corr / (alpha * k0):.2g} of the leading term at "
               f"k = {int(k0)}" if corr > SETTLED_FRACTION * abs(alpha) * k0 else "")
        ok = not why
        note = rests + ("" if ok else f"; not in the large-order regime: {why}")
        return LargeOrder("factorial", step, ratios, p, a, b, const, 0.0 if ok else math.nan,
                          sign, big_k, ok, note)


NEAR_RADIUS = 0.8  # |λ|/R at and beyond which a singularity on the path spoils agreement


@dataclass(frozen=True)
class PathSingularity:
    """A singularity of the sum on the path (0, λ], seen from the measured growth.

    ``reason`` says where (R, λ, |λ|/R); ``tail`` is the geometric tail estimate
    |c_N λ^N|·ρ/(1 − ρ) of the terms beyond the last (ρ = (|λ|/R)^step; inf for ρ ≥ 1).
    """

    reason: str
    tail: float


def path_singularities(coefficients: Sequence[Any], lam: Any) -> list[PathSingularity | None]:
    """Per coupling (flattened): the singularity the growth puts on the path, or None.

    Only a settled geometric growth (:attr:`LargeOrder.supported`) says where the nearest
    singularity is: at λ = +R for terms of one sign, at −R for alternating ones (in λ², at
    λ = ±R, on the real axis, or ±iR). Where it lies on the segment (0, λ] side and
    |λ|/R ≥ :data:`NEAR_RADIUS`, the approximants are evaluated at or beyond a singularity
    they resolve only slowly: their agreement is no error bound there (a Padé sequence at a
    branch point converges slowly and all its members err the same way; common practice,
    e.g. Baker & Graves-Morris, *Padé Approximants*, 2nd ed. 1996, ch. 1 and §5.6).
    """
    flat = [float(x) for x in np.asarray(lam, dtype=float).reshape(-1)]
    try:
        lo = large_order(coefficients)
    except InputError:
        return [None] * len(flat)
    radius = lo.radius
    if not (lo.supported and lo.kind == "geometric" and math.isfinite(radius) and radius > 0):
        return [None] * len(flat)
    with mpmath.workdps(30):
        even = even_series(coefficients)
        c = [to_mpf(x) for x in (coefficients if even is None else even)]
        last = max((k for k in range(1, len(c)) if c[k] != 0), default=0)
        out: list[PathSingularity | None] = []
        for x in flat:
            r = abs(x) / radius
            if lo.step == 2:
                on_path, where = lo.sign == "fixed", f"λ = ±{radius:.3g}"
            elif lo.sign == "fixed":
                on_path, where = x > 0, f"λ = {radius:.3g}"
            else:
                on_path, where = lo.sign == "alternating" and x < 0, f"λ = −{radius:.3g}"
            if x == 0 or not on_path or r < NEAR_RADIUS:
                out.append(None)
                continue
            rho = r**lo.step
            term = float(abs(c[last] * mpmath.mpf(x) ** last)) if last else 0.0
            tail = term * rho / (1.0 - rho) if rho < 1.0 else math.inf
            out.append(PathSingularity(
                f"the coefficients grow geometrically with {lo.sign} signs (radius of "
                f"convergence R = {radius:.4g}: a singularity at {where}, on the path); at "
                f"λ = {x:.4g}, |λ|/R = {r:.3g} ≥ {NEAR_RADIUS}, so agreement among "
                f"approximants bounds nothing; geometric tail |c_N λ^N|·ρ/(1 − ρ) = {tail:.2g}",
                tail))
        return out
