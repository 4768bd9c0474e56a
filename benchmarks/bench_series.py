"""Benchmarks of the perturbation-series engines (run by hand; writes RESULTS_series.md).

    python benchmarks/bench_series.py            # all, about a minute
    python benchmarks/bench_series.py --quick    # skip the order-300 exact reference

Targets (issue 3): exact 1D quartic ground state to order 100 at least 5x faster than the
straightforward Fraction/dict baseline (``fraction_baseline.py``) timed in the same run;
order 200 in under a minute; numeric to order 300 without overflow, with its agreement with
the exact coefficients stated.
"""

from __future__ import annotations

import argparse
import datetime
import platform
import subprocess
import sys
import time
from pathlib import Path

import mpmath
import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from fraction_baseline import baseline_coefficients  # noqa: E402

import anharmony as ah  # noqa: E402
from anharmony.series import series  # noqa: E402
from anharmony.series.rs_exact import rs_exact_1d, rs_exact_radial  # noqa: E402
from anharmony.series.rs_numeric import rs_numeric  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _machine import cpu_model  # noqa: E402


def best_of(fn, repeat: int) -> tuple[float, object]:
    """Best CPU time (``time.process_time``) of ``repeat`` runs, and the last result.

    CPU time rather than wall time: the benchmark machine is shared, and wall times of the
    same call were seen to vary by 2x between runs.
    """
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.process_time()
        out = fn()
        best = min(best, time.process_time() - t0)
    return best, out


def machine() -> list[str]:
    cpu = cpu_model()
    uname = subprocess.run(["uname", "-a"], capture_output=True, text=True).stdout.strip()
    nproc = subprocess.run(["nproc"], capture_output=True, text=True).stdout.strip()
    try:
        import gmpy2

        gmp = gmpy2.version()
    except ImportError:
        gmp = "not installed"
    return [
        f"- date: {datetime.datetime.now().astimezone().isoformat(timespec='minutes')}",
        f"- machine: `{uname}`",
        f"- nproc: {nproc}; CPU: {cpu}",
        f"- Python {platform.python_version()}, numpy {np.__version__}, mpmath "
        f"{mpmath.__version__}, gmpy2 {gmp}",
    ]


def quartic_matrix(size: int) -> np.ndarray:
    off = np.sqrt(np.arange(1, size + 4) / 2.0)
    x = np.diag(off, 1) + np.diag(off, -1)
    return np.linalg.matrix_power(x, 4)[:size, :size]


def max_rel(numeric: list, exact: list) -> float:
    worst = 0.0
    for a, e in zip(numeric, exact, strict=True):
        if e:
            worst = max(worst, float(abs(a / (mpmath.mpf(e.numerator) / e.denominator) - 1)))
    return worst


RESUM_ORDERS = 80
# (label, W = Σ c_q x^q beside x²/2, diagonaliser size); H = p²/2 + x²/2 + W
RESUM_CASES = [
    ("x⁴", {4: 0.05}, 200), ("x⁴", {4: 0.5}, 200), ("x⁴", {4: 5.0}, 200),
    ("x⁴", {4: 50.0}, 200), ("x⁴", {4: 100.0}, 200),
    ("x⁶", {6: 0.05}, 100), ("x⁶", {6: 0.5}, 100), ("x⁶", {6: 5.0}, 100),
    ("x³+x⁴", {3: 0.05, 4: 0.01}, 200), ("x³+x⁴", {3: 0.5, 4: 1.0}, 200),
    ("x³+x⁴", {3: 5.0, 4: 100.0}, 200),
]


def _diagonaliser(w: dict, size: int) -> float:
    import warnings

    top = max(w)
    b = (1 + 4 * w[top]) ** (-1 / (top + 2))
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"polynomial": {"coefficients": dict(w)}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        spec = ah.solve(well, dimension=1, l=None, size=size, length=b, levels=1,
                        reference={"frequency": 1.0})
    return float(spec.energies[0])


def resummation_section() -> list[str]:
    from anharmony.series import borel_pade, pade_sum

    lines = [f"## Resummation from {RESUM_ORDERS} exact orders: speed and honest uncertainty",
             "",
             "H = p²/2 + x²/2 + W. Diagonaliser: `solve` (1D, N = 100–200, b tuned; the quartic "
             "agrees with Hioe & Montroll 1975 to < 1e-15, all with finite differences, see "
             "tests/test_series_uncertainty.py). U = the claimed uncertainty, err = |value − "
             "diagonaliser|; the ratio U/err is shown where err is above 1e3 ulp.",
             "",
             "| W | method | value | U | err | U/err | trusted | CPU |",
             "|---|---|---|---|---|---|---|---|"]
    for _label, w, size in RESUM_CASES:
        exact = _diagonaliser(w, size)
        if len(w) == 1:
            (p, g), = w.items()
            coeffs, lam = rs_exact_1d({p: 1}, 0, RESUM_ORDERS), g
        else:
            from fractions import Fraction

            coeffs = rs_exact_1d({q: Fraction(c).limit_denominator(1000) for q, c in w.items()},
                                 0, RESUM_ORDERS)
            lam = 1.0
        name = " + ".join(f"{c:g}x^{q}" for q, c in w.items())
        for method, fn in (("Borel–Padé", borel_pade), ("Padé", pade_sum)):
            t, res = best_of(lambda fn=fn, coeffs=coeffs, lam=lam: fn(coeffs, lam), 1)
            v, u = float(res.value), float(res.uncertainty)
            err = abs(v - exact)
            ratio = f"{u / err:.3g}" if err > 1e3 * np.spacing(exact) else "(rounding)"
            kk = f", k = {res.power}" if getattr(res, "power", 1) != 1 else ""
            lines.append(f"| {name} | {method}{kk} | {v:.12g} | {u:.2g} | {err:.2g} | {ratio} "
                         f"| {'yes' if bool(res.trusted) else 'no'} | {t:.2f} s |")
    lines += ["",
              "Before (commit 31faef9) the Borel–Padé of the x⁴ series at g = 100 from 80 orders "
              f"took {OLD_BOREL_SECONDS} and reported only the quadrature error (1.8e-12) while "
              "being 2e-2 away from the diagonaliser.", ""]
    return lines


OLD_BOREL_SECONDS = ("40 s CPU in this session (112 s reported earlier; mpmath.polyroots at 280 "
                     "digits was 99 % of it)")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()
    lines = ["# Perturbation-series benchmarks (`benchmarks/bench_series.py`)", ""]
    lines += [*machine(), ""]
    lines += ["Times are CPU times (`time.process_time`, best of several runs): the machine is "
              "shared and wall times of the same call varied by up to 2×.", ""]

    # 1. exact, order 100: engine vs baseline, same run
    t_base, base = best_of(lambda: baseline_coefficients({4: 1}, 0, 100), 3)
    t_gmp, ours = best_of(lambda: rs_exact_1d({4: 1}, 0, 100), 5)
    t_frac, ours_f = best_of(lambda: rs_exact_1d({4: 1}, 0, 100, field="fraction"), 5)
    t_rad, ours_r = best_of(lambda: rs_exact_radial({4: 1}, 0, 100, l=0, dimension=1), 5)
    assert ours == base == ours_f == ours_r, "engines disagree"
    lines += [
        "## Exact 1D quartic ground state (H = p²/2 + x²/2 + λx⁴), order 100",
        "",
        "| implementation | CPU time (best of 3–5) | speed-up vs baseline |",
        "|---|---|---|",
        f"| baseline: Fraction, dict states, plain H_n basis (`fraction_baseline.py`) "
        f"| {t_base:.3f} s | 1.0× |",
        f"| `rs_exact_1d`, gmpy2.mpz integers (default) | {t_gmp:.3f} s "
        f"| {t_base / t_gmp:.1f}× |",
        f"| `rs_exact_1d`, field='fraction' (Python integers, no gmpy2) | {t_frac:.3f} s "
        f"| {t_base / t_frac:.1f}× |",
        f"| `rs_exact_radial` (d = 1, l = 0), gmpy2 | {t_rad:.3f} s | {t_base / t_rad:.1f}× |",
        "",
        "All four give identical rationals. The speed-up comes mainly from integer arithmetic "
        "with one common denominator per vector (reduced by one gcd per order) instead of a "
        "gcd per rational operation; also from the scaled Hermite basis |n} = H_n/(2^n "
        "⌊n/2⌋!) (shorter numbers), dropping the decoupled parity, and numpy object-array "
        "products instead of dict loops.",
        "",
    ]

    # 2. exact, order 200 (and 300)
    t200, e200 = best_of(lambda: rs_exact_1d({4: 1}, 0, 200), 1)
    lines += ["## Exact, higher orders", "", "| order | CPU time |", "|---|---|",
              f"| 200 | {t200:.2f} s |"]
    e300 = None
    if not args.quick:
        t300, e300 = best_of(lambda: rs_exact_1d({4: 1}, 0, 300), 1)
        lines.append(f"| 300 | {t300:.2f} s |")
    digits = len(str(abs(e200[200].numerator)))
    lines += ["", f"E_200 has a {digits}-digit numerator.", ""]

    # 3. numeric, order 300
    order = 300
    size = 4 * order + 1
    w = quartic_matrix(size)
    d = np.arange(size) + 0.5
    t_num, res = best_of(lambda: rs_numeric(d, w, 0, order, bandwidth=4), 3)
    num_mp = res.mp()
    finite = bool(np.all(np.isfinite(res.mantissas)))
    log10_top = float(res.log2_abs()[-1] * np.log10(2.0))
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 1.0}}])
    t_front, ser = best_of(lambda: series(well, dimension=1, l=None, orders=order, exact=False,
                                          reference={"frequency": 1.0}), 1)
    lines += [
        "## Numeric engine, order 300 (quartic, N = 4·300 + 1 = 1201, banded)",
        "",
        f"- `rs_numeric` kernel: {t_num * 1e3:.0f} ms (CPU, best of 3); all mantissas finite: "
        f"{finite}; |E_300| ≈ 10^{log10_top:.1f} (beyond double range, carried as "
        "mantissa · 2^exponent)",
        f"- `series(..., orders=300, exact=False)` front end incl. channel matrices: "
        f"{t_front:.2f} s (CPU)",
        f"- agreement with the exact rationals, max relative deviation over E_1..E_200: "
        f"{max_rel(num_mp[:201], e200):.2e}",
    ]
    if e300 is not None:
        lines.append(f"- … over E_1..E_300: {max_rel(num_mp, e300):.2e}")
    front_dev = max_rel(list(ser.precise[:201]), e200)
    lines += [f"- front end (core's matrices) vs exact over E_1..E_200: {front_dev:.2e}", ""]

    # 4. resummation: speed, and the uncertainty against the diagonaliser (issue: honest
    # uncertainties; target: Borel–Padé from 80 orders under 2 s)
    lines += resummation_section()
    out = HERE / "RESULTS_series.md"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
