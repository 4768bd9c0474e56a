"""Exact Rayleigh–Schrödinger coefficients for polynomial perturbations.

The reference Hamiltonian is the oscillator in its own units (energy ħω, length b), so its
levels are rational. The perturbation W is a polynomial with rational coefficients in the
oscillator coordinate. Working in an *unnormalised* eigenbasis of the oscillator removes every
square root from the matrix elements:

- 1D without symmetry, ξ = (x − x₀)/b: |n} = H_n(ξ) e^{−ξ²/2} / (2^n ⌊n/2⌋!), from the
  Hermite recurrence x H_n = H_{n+1}/2 + n H_{n−1} (see :func:`hermite_bands`);
- radial channels (d = 1 parity, d = 2, 3), t = r²/b², α = l + d/2 − 1:
  |n) = t^{l/2} e^{−t/2} L_n^α(t), with
  t|n) = −(n+1)|n+1) + (2n+α+1)|n) − (n+α)|n−1) (the Laguerre three-term recurrence).

The matrix of W in such a basis is not symmetric, but it is similar to the symmetric one, and
the basis vectors are still eigenvectors of H_ref. Rayleigh–Schrödinger theory only needs
that: with intermediate normalisation the coefficient of |n) in ψ_k vanishes for k ≥ 1, and
projecting the order-k equation on the dual vector of |n) gives E_k = (W ψ_{k−1})_n.

Arithmetic is exact, in integers with one common denominator per vector (``gmpy2.mpz`` when
gmpy2 is importable — an optional dependency — and Python integers otherwise); results are
always returned as :class:`fractions.Fraction`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from fractions import Fraction
from numbers import Rational
from typing import Any

import numpy as np

from anharmony.errors import DegenerateLevelError

from ..errors import InputError

__all__ = [
    "exact_field",
    "hermite_bands",
    "radial_bands",
    "reach",
    "rs_exact_1d",
    "rs_exact_banded",
    "rs_exact_radial",
]

try:  # optional speed-up; everything works with fractions.Fraction alone
    import gmpy2 as _gmpy2
except ImportError:  # pragma: no cover - depends on the environment
    _gmpy2 = None


def exact_field(
    name: str = "auto",
) -> tuple[Callable[[int], Any], Callable[..., Any], Callable[[Any, Any], Any]]:
    """Integer type, its many-argument gcd and its lcm: ``"gmpy2"``, ``"fraction"``, ``"auto"``.

    ``"fraction"`` means Python's own integers (and :class:`fractions.Fraction` at the end);
    ``"gmpy2"`` uses ``gmpy2.mpz``; ``"auto"`` picks gmpy2 when it is importable.
    """
    if name == "auto":
        name = "fraction" if _gmpy2 is None else "gmpy2"
    if name == "fraction":
        return int, math.gcd, math.lcm
    if name == "gmpy2":
        if _gmpy2 is None:
            raise ImportError("field='gmpy2' needs the optional package gmpy2 (pip install gmpy2)")
        return _gmpy2.mpz, _gmpy2.gcd, _gmpy2.lcm
    raise InputError(f"field must be 'auto', 'gmpy2' or 'fraction'; got {name!r}")


def _as_rational(value: Any, name: str) -> Fraction:
    if isinstance(value, Rational):
        return Fraction(value.numerator, value.denominator)
    if hasattr(value, "numerator") and hasattr(value, "denominator"):  # gmpy2.mpq
        return Fraction(int(value.numerator), int(value.denominator))
    if isinstance(value, str):
        return Fraction(value)
    raise TypeError(
        f"{name} must be an exact rational (int, Fraction, or a string like '1/10'); "
        f"got {value!r} of type {type(value).__name__}"
    )


def _operator_bands(
    step: Callable[[int], list[tuple[int, Fraction]]],
    coefficients: Mapping[int, Fraction],
    size: int,
) -> dict[int, list[Fraction]]:
    """Bands of P(A) = Σ_q c_q A^q for a ladder operator A given column by column.

    ``step(j)`` lists (row, value) of A|j) in the infinite basis; P(A)|j) is built by Horner's
    rule in the infinite basis and only then truncated to rows < size, so the truncated matrix
    holds the exact elements (never a product of truncated matrices).
    Returns ``bands[d][i] = P(A)[i, i + d]``.
    """
    top = max(coefficients)
    out: dict[int, list[Fraction]] = {}
    for j in range(size):
        vec: dict[int, Fraction] = {j: coefficients.get(top, Fraction(0))}
        for q in range(top - 1, -1, -1):
            new: dict[int, Fraction] = {}
            for m, c in vec.items():
                if c:
                    for row, a in step(m):
                        new[row] = new.get(row, Fraction(0)) + a * c
            c_q = coefficients.get(q, Fraction(0))
            if c_q:
                new[j] = new.get(j, Fraction(0)) + c_q
            vec = new
        for i, c in vec.items():
            if i < size and c:
                out.setdefault(j - i, [Fraction(0)] * size)[i] = c
    return out


def hermite_bands(coefficients: Mapping[int, Any], size: int) -> dict[int, list[Fraction]]:
    """Exact bands of W = Σ_q w_q ξ^q in the scaled Hermite basis |n} = H_n(ξ)e^{−ξ²/2}/s_n.

    Parameters
    ----------
    coefficients
        ``{q: w_q}``, exact rationals, powers q ≥ 0 of ξ = (x − x₀)/b.
    size
        Number of basis states kept.

    Returns
    -------
    dict
        ``bands[d][i] = W[i, i + d]`` (Fractions), W acting on coefficient vectors.

    Notes
    -----
    From x H_n = H_{n+1}/2 + n H_{n−1} (Abramowitz & Stegun 22.7.13) with the scale
    s_n = 2^n ⌊n/2⌋!:  ξ|2m} = |2m+1} + |2m−1},  ξ|2m+1} = (m+1)|2m+2} + (m + ½)|2m}.
    The scale makes |n} ∝ L_m^{∓1/2}(ξ²) (A&S 22.5.40/41), whose norms stay O(n^{±1/2});
    with the plain H_n (norm 2^n n! √π) the numbers are longer (measured: 1.4× slower at
    order 200 for the quartic).
    """
    coeffs = {int(q): _as_rational(c, f"coefficients[{q}]") for q, c in coefficients.items()}
    one = Fraction(1)

    def step(n: int) -> list[tuple[int, Fraction]]:
        m, odd = divmod(n, 2)
        if odd:
            return [(n + 1, Fraction(m + 1)), (n - 1, Fraction(n, 2))]
        return [(n + 1, one)] + ([(n - 1, one)] if n > 0 else [])

    return _operator_bands(step, coeffs, size)


def radial_bands(
    coefficients: Mapping[int, Any], size: int, *, alpha: Fraction
) -> dict[int, list[Fraction]]:
    """Exact bands of W = Σ_p w_p t^p, t = r²/b², in the unnormalised Laguerre basis.

    Parameters
    ----------
    coefficients
        ``{p: w_p}``, exact rationals, powers p ≥ 0 of t (i.e. of r^{2p}).
    size
        Number of basis states kept.
    alpha
        Laguerre index α = l + d/2 − 1.

    Notes
    -----
    t L_n^α = −(n+1) L_{n+1}^α + (2n+α+1) L_n^α − (n+α) L_{n−1}^α
    (Abramowitz & Stegun 22.7.12).
    """
    coeffs = {int(p): _as_rational(c, f"coefficients[{p}]") for p, c in coefficients.items()}
    a = Fraction(alpha)

    def step(n: int) -> list[tuple[int, Fraction]]:
        out = [(n + 1, Fraction(-(n + 1))), (n, 2 * n + a + 1)]
        if n > 0:
            out.append((n - 1, -(n + a)))
        return out

    return _operator_bands(step, coeffs, size)


def _lcm_of_denominators(values: Sequence[Fraction]) -> int:
    out = 1
    for v in values:
        out = math.lcm(out, v.denominator)
    return out


def rs_exact_banded(
    diagonal: Sequence[Any],
    bands: Mapping[int, Sequence[Any]],
    level: int,
    order: int,
    *,
    field: str = "auto",
    higher: Mapping[int, Mapping[int, Sequence[Any]]] | None = None,
) -> list[Fraction]:
    """Exact RS energy coefficients E_0..E_order for H = diag(diagonal) + Σ_k λ^k W_k, banded.

    Parameters
    ----------
    diagonal
        Exact eigenvalues of H_ref, one per basis state (H_ref is diagonal in the basis).
    bands
        W₁ (the first-order part): ``bands[d][i] = W₁[i, i + d]``; need not be symmetric
        (unnormalised bases).
    level
        Index of the reference state |n).
    order
        Highest order K.
    field
        Integer type for the arithmetic (see :func:`exact_field`).
    higher
        ``{k: bands_k}`` for the powers k ≥ 2 of λ at which the perturbation has parts, each
        in the form of ``bands``; powers above K do not enter. None: W = λ W₁.

    Returns
    -------
    list of Fraction
        E_0..E_K.

    Raises
    ------
    DegenerateLevelError
        If another diagonal entry equals the level's.

    Notes
    -----
    Intermediate normalisation, reduced resolvent R = Q/(E_0 − H_ref), ψ_0 = |n):
    E_k = Σ_{j=1}^{k} (W_j ψ_{k−j})_n, ψ_k = R [Σ_{j=1}^{k} W_j ψ_{k−j}
    − Σ_{j=1}^{k−1} E_j ψ_{k−j}] (the recursion for a perturbation polynomial in λ, derived
    in :func:`anharmony.series.rs_numeric`; with W₁ alone the usual one of Rayleigh 1894,
    Schrödinger 1926, e.g. Sakurai, *Modern Quantum Mechanics*, §5.1). ψ_k vanishes outside
    n ± r_k, r_k = max_j (r_{k−j} + h_j) with h_j the half-bandwidth of W_j, so the basis must
    hold n + r_{K−1} + 1 states for E_K to be exact; callers use n + r_K + 1, which makes
    ψ_1..ψ_K exact as well (:func:`reach`).

    The arithmetic is in integers: the W_j are scaled to integer matrices W'_j = s^j W_j with
    one s (the series of λ/s, so E_k = E'_k / s^k), as are the level gaps, and each ψ_k is an
    integer vector over one common denominator, reduced by the gcd of the whole vector after
    every order. This avoids a gcd per component and operation, which is what makes rational
    arithmetic slow.
    """
    integer, gcd, lcm = exact_field(field)
    size = len(diagonal)
    d = [_as_rational(x, f"diagonal[{i}]") for i, x in enumerate(diagonal)]
    e0 = d[level]
    clash = tuple(i for i in range(size) if i != level and d[i] == e0)
    if clash:
        raise DegenerateLevelError(
            f"reference level {level} (E_0 = {e0}) is degenerate with basis state(s) "
            f"{list(clash)}; non-degenerate perturbation theory does not apply",
            levels=(level, *clash),
        )
    gaps = [e0 - x for x in d]
    c = _lcm_of_denominators(gaps)  # R_i = 1/gap_i = c / g_i with integer g_i
    g = [int(x * c) for x in gaps]
    parts = {1: bands}
    for k, bk in (higher or {}).items():
        if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or k < 2:
            raise InputError(f"higher: powers of λ must be integers >= 2 (W₁ is the bands "
                             f"argument); got {k!r}")
        if int(k) <= order:
            parts[int(k)] = bk
    entries = {}
    for k, bk in parts.items():
        ek = {int(off): [_as_rational(v, f"bands[{off}]") for v in vals]
              for off, vals in bk.items()}
        entries[k] = {off: vals for off, vals in ek.items() if any(vals)}
    s = _lcm_of_denominators([v for ek in entries.values() for vals in ek.values()
                              for v in vals])
    band_arrays: dict[int, dict[int, np.ndarray]] = {}
    for k, ek in entries.items():
        sk = s**k
        band_arrays[k] = {}
        for off, vals in ek.items():
            arr = np.empty(size, dtype=object)
            arr[:] = [integer(int(v * sk)) for v in vals]
            band_arrays[k][off] = arr
    h = max((abs(off) for bk in band_arrays.values() for off in bk), default=0)

    zero, one = integer(0), integer(1)
    vecs: list[np.ndarray] = []  # ψ_k = vecs[k] / dens[k]
    dens: list[Any] = []
    v0 = np.empty(size, dtype=object)
    v0.fill(zero)
    v0[level] = one
    vecs.append(v0)
    dens.append(one)
    e_num: list[Any] = [zero]  # E'_k = e_num[k] / e_den[k], reduced
    e_den: list[Any] = [one]
    mult = np.empty(size, dtype=object)  # c·G/g_i over the support, G = lcm of |g_i| there
    big_g = 1
    lo, hi = level, level + 1  # support of ψ_{k-1} (it contains that of every earlier ψ)
    for k in range(1, order + 1):
        r0, r1 = max(0, lo - h), min(size, hi + h)
        powers = [j for j in band_arrays if j <= k]
        big_d = dens[k - 1]  # Σ_j W'_j ψ_{k-j} over the common denominator D
        for j in powers:
            if j != 1:
                big_d = lcm(big_d, dens[k - j])
        u = np.empty(r1 - r0, dtype=object)
        u.fill(zero)
        for j in powers:
            prev = vecs[k - j]
            uj = np.empty(r1 - r0, dtype=object)
            uj.fill(zero)
            for off, b in band_arrays[j].items():  # rows i with lo <= i + off < hi
                a0, a1 = max(r0, lo - off), min(r1, hi - off)
                if a1 > a0:
                    uj[a0 - r0 : a1 - r0] += b[a0:a1] * prev[a0 + off : a1 + off]
            u += uj if big_d is dens[k - j] else uj * (big_d // dens[k - j])
        num, den = u[level - r0], big_d  # E'_k = Σ_j (W'_j ψ_{k-j})_n
        common = gcd(num, den)
        e_num.append(num // common)
        e_den.append(den // common)
        if k == order:
            break
        # Σ_j W'_j ψ_{k-j} − Σ_j E'_j ψ_{k-j} over the common denominator L
        big_l = big_d
        for j in range(1, k):
            if e_num[j]:
                big_l = lcm(big_l, e_den[j] * dens[k - j])
        acc = u * (big_l // big_d)
        for j in range(1, k):
            if e_num[j]:
                factor = e_num[j] * (big_l // (e_den[j] * dens[k - j]))
                acc -= factor * vecs[k - j][r0:r1]
        for i in range(r0, r1):  # the support only grows: extend G, then refresh mult
            if i != level:
                big_g = math.lcm(big_g, abs(g[i]))
        for i in range(r0, r1):
            mult[i] = zero if i == level else integer(c * (big_g // g[i]))
        out = np.empty(size, dtype=object)
        out.fill(zero)
        out[r0:r1] = acc * mult[r0:r1]
        den = big_l * integer(big_g)
        common = gcd(den, *out[r0:r1])
        if common != 1:
            out[r0:r1] = out[r0:r1] // common
            den = den // common
        vecs.append(out)
        dens.append(den)
        lo, hi = r0, r1
    scale = Fraction(1)
    result = [e0]
    for k in range(1, order + 1):
        scale /= s
        result.append(Fraction(int(e_num[k]), int(e_den[k])) * scale)
    return result


def reach(widths: Mapping[int, int], order: int) -> int:
    """r_K: how far ψ_K reaches from the reference state, for W_j of half-bandwidth h_j.

    ``widths`` is ``{j: h_j}`` over the powers j of λ present; r_0 = 0 and
    r_k = max_j (r_{k−j} + max(h_j, 1)) (a zero width counts as 1, so a constant W still
    leaves room for one neighbour, as the first-order sizes always did). With W₁ alone,
    r_K = K·max(h₁, 1).
    """
    r = [0] * (order + 1)
    for k in range(1, order + 1):
        r[k] = max((r[k - j] + max(h, 1) for j, h in widths.items() if j <= k), default=0)
    return r[order]


def _restrict_parity(
    diagonal: list[Fraction], bands: dict[int, list[Fraction]], parity: int
) -> tuple[list[Fraction], dict[int, list[Fraction]]]:
    """Sub-lattice n ≡ parity (mod 2) of an even operator (only even band offsets)."""
    idx = range(parity, len(diagonal), 2)
    sub_diag = [diagonal[i] for i in idx]
    sub_bands = {}
    for off, vals in bands.items():
        if off % 2:
            raise InputError("internal: odd band in a parity restriction")
        sub_bands[off // 2] = [vals[i] for i in idx]
    return sub_diag, sub_bands


def rs_exact_1d(
    coefficients: Mapping[int, Any], level: int, order: int, *, field: str = "auto",
    higher: Mapping[int, Mapping[int, Any]] | None = None,
) -> list[Fraction]:
    """Exact E_0..E_K of level n of H = H_osc + λ Σ_q w_q ξ^q + Σ_k λ^k W_k (1D, no symmetry).

    Parameters
    ----------
    coefficients
        ``{q: w_q}``: W₁ in units of ħω as a polynomial in ξ = (x − x₀)/b, exact rationals,
        any powers q ≥ 0 (odd ones included).
    level
        Oscillator quantum number n (E_0 = n + 1/2).
    order
        Highest order K.
    field
        Integer type for the arithmetic (see :func:`exact_field`).
    higher
        ``{k: {q: w_q}}``: the parts W_k at the powers k ≥ 2 of λ, in the form of
        ``coefficients`` (e.g. ``{2: {4: w}}`` puts a quartic at second order). None: W = λ W₁.

    Notes
    -----
    Basis size n + r_K + 1, r_K = K·q_max with W₁ alone (:func:`reach`; exact, see
    :func:`rs_exact_banded`). When every part is even the odd (or even) sub-lattice
    decouples and is dropped, which halves the work.
    """
    _check_level_order(level, order)
    parts = _clean_parts(coefficients, higher, order)
    size = level + reach({k: max(w, default=0) for k, w in parts.items()}, order) + 1
    bands = {k: hermite_bands(w or {0: Fraction(0)}, size) for k, w in parts.items()}
    diagonal = [Fraction(2 * i + 1, 2) for i in range(size)]
    if all(q % 2 == 0 for w in parts.values() for q in w):
        parity = level % 2
        restricted = {k: _restrict_parity(diagonal, bk, parity) for k, bk in bands.items()}
        diagonal = restricted[1][0]
        bands = {k: r[1] for k, r in restricted.items()}
        level = (level - parity) // 2
    return rs_exact_banded(diagonal, bands.pop(1), level, order, field=field,
                           higher=bands or None)


def rs_exact_radial(
    coefficients: Mapping[int, Any],
    level: int,
    order: int,
    *,
    l: int,
    dimension: int,
    field: str = "auto",
    higher: Mapping[int, Mapping[int, Any]] | None = None,
) -> list[Fraction]:
    """Exact E_0..E_K of radial level n of H = H_osc + λ Σ_q w_q (r/b)^q + Σ_k λ^k W_k in
    channel l.

    Parameters
    ----------
    coefficients
        ``{q: w_q}``: W in units of ħω as a polynomial in r/b; only even powers q (the odd
        ones have irrational matrix elements in this basis).
    level
        Radial quantum number n (E_0 = 2n + l + d/2).
    order
        Highest order K.
    l, dimension
        Channel: d = 1 (l = 0 even, l = 1 odd parity), d = 2 (l = |m|), d = 3.
    field
        Integer type for the arithmetic (see :func:`exact_field`).
    higher
        ``{k: {q: w_q}}``: the parts W_k at the powers k ≥ 2 of λ, in the form of
        ``coefficients`` (even powers of r only). None: W = λ W₁.
    """
    _check_level_order(level, order)
    if dimension not in (1, 2, 3):
        raise InputError(f"dimension must be 1, 2 or 3; got {dimension!r}")
    if not isinstance(l, int) or l < 0 or (dimension == 1 and l > 1):
        raise InputError(
            f"l must be an integer >= 0 (0 or 1 in dimension 1); got {l!r} in dimension "
            f"{dimension}"
        )
    parts = _clean_parts(coefficients, higher, order)
    for k, coeffs in parts.items():
        odd = sorted(q for q in coeffs if q % 2)
        if odd:
            where = "coefficients" if k == 1 else f"higher[{k}]"
            raise InputError(
                f"{where}: radial channels need even powers of r for exact matrix elements; "
                f"got odd power(s) {odd}"
            )
    t_parts = {k: {q // 2: c for q, c in coeffs.items()} for k, coeffs in parts.items()}
    size = level + reach({k: max(w, default=0) for k, w in t_parts.items()}, order) + 1
    alpha = Fraction(2 * l + dimension - 2, 2)
    bands = {k: radial_bands(w or {0: Fraction(0)}, size, alpha=alpha)
             for k, w in t_parts.items()}
    diagonal = [2 * i + l + Fraction(dimension, 2) for i in range(size)]
    return rs_exact_banded(diagonal, bands.pop(1), level, order, field=field,
                           higher=bands or None)


def _clean(coefficients: Mapping[int, Any]) -> dict[int, Fraction]:
    out = {}
    for q, c in coefficients.items():
        if not isinstance(q, (int, np.integer)) or q < 0:
            raise InputError(f"coefficients: powers must be integers >= 0; got {q!r}")
        value = _as_rational(c, f"coefficients[{q}]")
        if value:
            out[int(q)] = value
    return out


def _clean_parts(coefficients: Mapping[int, Any],
                 higher: Mapping[int, Mapping[int, Any]] | None,
                 order: int) -> dict[int, dict[int, Fraction]]:
    """``{1: W₁, k: W_k, …}`` as cleaned coefficient maps (powers of λ above K left out)."""
    parts = {1: _clean(coefficients)}
    for k, coeffs in (higher or {}).items():
        if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or k < 2:
            raise InputError(f"higher: powers of λ must be integers >= 2 (W₁ is the "
                             f"coefficients argument); got {k!r}")
        if not isinstance(coeffs, Mapping):
            raise InputError(f"higher[{k}]: expected a mapping {{power: coefficient}}; got "
                             f"{coeffs!r}")
        if int(k) <= order:
            parts[int(k)] = _clean(coeffs)
    return parts


def _check_level_order(level: int, order: int) -> None:
    if not isinstance(level, (int, np.integer)) or level < 0:
        raise InputError(f"level must be an integer >= 0; got {level!r}")
    if not isinstance(order, (int, np.integer)) or order < 0:
        raise InputError(f"order must be an integer >= 0; got {order!r}")
