"""Straightforward baseline for the exact-series benchmark (not used by the package).

Rayleigh–Schrödinger recursion with intermediate normalisation for H = H_osc + λ W, W a
polynomial in ξ, in the unnormalised Hermite basis |n) = H_n(ξ) e^{−ξ²/2}
(ξ|n) = ½|n+1) + n|n−1), from x H_n = H_{n+1}/2 + n H_{n−1}). States are dicts
{n: Fraction}; W is applied to a state by Horner's rule with the ladder step; every number is
a :class:`fractions.Fraction`. This is the textbook way to write the recursion, kept as the
reference point that ``anharmony.series.rs_exact`` is timed against.
"""

from __future__ import annotations

from fractions import Fraction

__all__ = ["baseline_coefficients"]


def _apply_xi(state: dict[int, Fraction]) -> dict[int, Fraction]:
    out: dict[int, Fraction] = {}
    for n, c in state.items():
        out[n + 1] = out.get(n + 1, Fraction(0)) + c / 2
        if n > 0:
            out[n - 1] = out.get(n - 1, Fraction(0)) + n * c
    return out


def _apply_w(coefficients: dict[int, Fraction], state: dict[int, Fraction]) -> dict[int, Fraction]:
    top = max(coefficients)
    out = {n: coefficients[top] * c for n, c in state.items()}
    for q in range(top - 1, -1, -1):
        out = _apply_xi(out)
        c_q = coefficients.get(q, Fraction(0))
        if c_q:
            for n, c in state.items():
                out[n] = out.get(n, Fraction(0)) + c_q * c
    return out


def baseline_coefficients(coefficients: dict[int, int | Fraction], level: int, order: int) -> list:
    """E_0..E_order of oscillator level ``level`` with W = Σ w_q ξ^q (units ħω)."""
    w = {q: Fraction(c) for q, c in coefficients.items()}
    e = [Fraction(2 * level + 1, 2)]
    psi = [{level: Fraction(1)}]
    for k in range(1, order + 1):
        w_psi = _apply_w(w, psi[k - 1])
        e.append(w_psi.get(level, Fraction(0)))
        if k == order:
            break
        rhs = dict(w_psi)
        for j in range(1, k):
            for n, c in psi[k - j].items():
                rhs[n] = rhs.get(n, Fraction(0)) - e[j] * c
        new = {}
        for n, c in rhs.items():
            if n != level and c:
                new[n] = c / (level - n)  # R = Q / (E_0 - H_0), level spacing 1
        psi.append(new)
    return e


if __name__ == "__main__":  # pragma: no cover
    import sys
    import time

    order = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    t0 = time.perf_counter()
    result = baseline_coefficients({4: 1}, 0, order)
    print(f"order {order}: {time.perf_counter() - t0:.2f} s; E_1..E_4 = {result[1:5]}")
