"""Benchmark of anharmony.convergence: error against N with the best b, and the cost of runs.

Run by hand:  python benchmarks/bench_convergence.py  (writes nothing; paste into
benchmarks/RESULTS_convergence.md). Single-threaded BLAS so that timings are comparable.

1. Woods–Saxon 2s1/2 of A = 40 (V0 = 51 MeV, r0 = 1.27 fm, a = 0.67 fm, neutron, no
   spin–orbit in an s1/2 channel): error of the Ritz value at the best b for each N.
2. The same well deepened to 57.7 MeV: the 3s level bound by 0.30 MeV (near threshold), raw
   error at the best b and the error of the extrapolated value.
3. Cost of tolerance-driven runs (converge with a tolerance) and of the cross-check.

References: the Lagrange–Laguerre cross-check at rtol 1e-13, and where tests/refsolvers.py can
be imported, its shooting solver.
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import math
import platform
import sys
import time
import warnings
from pathlib import Path

import numpy as np
from scipy.optimize import minimize_scalar

import anharmony as ah
from anharmony.convergence import converge, cross_check
from anharmony.hamiltonian import Channel, channel_hamiltonian
from anharmony.spectrum import diagonalize

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
try:
    from refsolvers import shooting_level
except ImportError:  # pragma: no cover - benchmarks run without the tests folder too
    shooting_level = None

SIZES = (10, 14, 20, 28, 40, 57, 80, 113, 160, 226, 320)


def ws(depth: float) -> ah.Well:
    return ah.Well.from_terms([{"woods_saxon": {"depth": depth, "r0": 1.27, "mass_number": 40,
                                                "diffuseness": 0.67}}], units="nuclear")


def best_b(well: ah.Well, n: int, level: int, guess: float) -> tuple[float, float]:
    ch = Channel(3, 0)

    def e(logb: float) -> float:
        m = channel_hamiltonian(well, ch, n, math.exp(logb))
        return float(diagonalize(m.total, level + 1, m.bandwidth)[0][level])

    grid = np.log(guess) + np.linspace(-0.8, 0.8, 9)
    vals = [e(g) for g in grid]
    i = int(np.argmin(vals))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    res = minimize_scalar(e, bounds=(lo, hi), method="bounded", options={"xatol": 1e-5})
    return math.exp(res.x), float(res.fun)


def reference(well: ah.Well, level: int, bracket: tuple[float, float]) -> tuple[float, str]:
    x = cross_check(well, 3, 0, levels=level + 1, units="nuclear", rtol=1e-13)
    text = f"Lagrange-Laguerre {x.energies[level]:.13f} (+- {x.uncertainty[level]:.1e})"
    if shooting_level is not None:
        c = well.units.hbar2_over_2m()
        s = shooting_level(well.value, 0, c, bracket, r_max=400.0)
        text += f", shooting {s:.13f}"
        return s, text
    return float(x.energies[level]), text


def table_best_b(well: ah.Well, level: int, ref: float, guess: float) -> None:
    print("| N | best b (fm) | E(N, b) − E_ref (MeV) | time (s) |")
    print("|---:|---:|---:|---:|")
    b = guess
    for n in SIZES:
        t = time.perf_counter()
        b, e = best_b(well, n, level, b)
        dt = time.perf_counter() - t
        print(f"| {n} | {b:.4f} | {e - ref:.2e} | {dt:.2f} |")


def table_extrapolated(well: ah.Well, level: int, ref: float) -> None:
    print("| sizes up to | Ritz error | error_estimate | E∞ − E_ref | uncertainty | method | "
          "time (s) |")
    print("|---:|---:|---:|---:|---:|---|---:|")
    for top in (28, 40, 57, 80, 113, 160):
        sizes = [s for s in SIZES if s <= top]
        t = time.perf_counter()
        r = converge(well, 3, 0, levels=level + 1, units="nuclear", sizes=sizes, warn=False)
        dt = time.perf_counter() - t
        print(f"| {top} | {r.energies[level] - ref:.2e} | {r.error_estimate[level]:.2e} | "
              f"{r.extrapolated[level] - ref:.2e} | {r.uncertainty[level]:.1e} | "
              f"{r.method[level]} | {dt:.2f} |")


def table_tolerance() -> None:
    print("| case | tolerance | stopped | final size | max error_estimate | time (s) |")
    print("|---|---:|---|---:|---:|---:|")
    quartic = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                  {"power": {"exponent": 4, "strength": 0.5}}])
    nuc = ah.Well.from_terms([
        {"woods_saxon": {"depth": 51.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}},
        {"spin_orbit": {"strength": 22.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}},
        {"coulomb": {"charge": 19, "r0": 1.27, "mass_number": 40}}], units="nuclear")
    runs = [
        ("quartic 1D, 3 levels", (quartic, 1, None, None), {"levels": 3}, "oscillator",
         (1e-8, 1e-12)),
        ("WS 2s1/2 (V0 51), 2 levels", (ws(51.0), 3, 0, None), {"levels": 2}, "nuclear",
         (1e-6, 1e-9)),
        ("WS 3s (V0 57.7), 3 levels", (ws(57.7), 3, 0, None), {"levels": 3}, "nuclear",
         (1e-6, 1e-8)),
        ("proton WS+SO+Coulomb p3/2, 1 level", (nuc, 3, 1, 1.5), {"levels": 1}, "nuclear",
         (1e-6, 1e-9)),
    ]
    for name, args, kw, units, tols in runs:
        for tol in tols:
            t = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                r = converge(*args, units=units, tolerance=tol, **kw, warn=False)
            dt = time.perf_counter() - t
            print(f"| {name} | {tol:g} | {r.stopped} | {r.size} | "
                  f"{np.max(r.error_estimate):.2e} | {dt:.2f} |")


def morse25() -> None:
    """25 Morse levels (λ = sqrt(2mD)/(αħ) = 25.3) to 1e-4 cm⁻¹, and a well without bound states.

    Exact levels: P. M. Morse, Phys. Rev. 34, 57 (1929), E_v = ħω(v+½) − [ħω(v+½)]²/(4D) with
    ħω = 2D/λ; bound for v < λ − ½, so v = 0 … 24. No bound state of −e^{−r²} (ħ = m = 1) in
    any channel: V. Bargmann, Proc. Natl. Acad. Sci. USA 38, 961 (1952).
    """
    units = ah.units.get_units("molecular")
    mu, depth, lam = 0.96, 38000.0, 25.3
    alpha = math.sqrt(depth / units.hbar2_over_2m(mu)) / lam
    well = ah.Well.from_terms([{"morse": {"depth": depth, "width": alpha}}], units="molecular",
                              mass=mu)
    hw = 2.0 * depth / lam
    v = np.arange(25)
    exact = hw * (v + 0.5) - (hw * (v + 0.5)) ** 2 / (4.0 * depth)
    t = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = converge(well, 1, None, levels=25, units="molecular", mass=mu, tolerance=1e-4)
    dt = time.perf_counter() - t
    err = r.energies - exact
    print(f"- Morse D = {depth} cm-1, alpha = {alpha:.6f} 1/A, mu = {mu} u: {dt:.1f} s, "
          f"{r.stopped}, sizes tried {[h[0] for h in r.history]}")
    print("\n| v | E − E_exact (cm⁻¹) | error_estimate | method | converged |")
    print("|---:|---:|---:|---|---|")
    for k in range(25):
        print(f"| {k} | {err[k]:.2e} | {r.error_estimate[k]:.2e} | {r.method[k]} | "
              f"{bool(r.converged[k])} |")
    shallow = ah.Well.from_terms([{"gaussian": {"depth": 1.0, "range": 1.0}}])
    t = time.perf_counter()
    tried = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for l in (0, 1, 2):
            rep = converge(shallow, 3, l, levels=3, tolerance=1e-7, max_size=60)
            tried.append([h[0] for h in rep.history])
    print(f"\n- 3D Gaussian V0 = 1, a = 1 (no bound state), l = 0, 1, 2, tolerance 1e-7, "
          f"max_size 60: {time.perf_counter() - t:.1f} s, sizes tried {tried}")


def _morse(lam: float, units: str = "oscillator", mass: float | None = None,
           depth: float | None = None, width: float = 1.0, center: float = 0.0
           ) -> tuple[ah.Well, np.ndarray]:
    """A Morse well with λ = sqrt(2mD)/(αħ) (or the given depth) and its exact levels
    (P. M. Morse, Phys. Rev. 34, 57 (1929)): E_v = ħω(v+½) − [ħω(v+½)]²/(4D), ħω = 2D/λ."""
    c = ah.units.get_units(units).hbar2_over_2m(mass)
    if depth is None:
        depth = (lam * width) ** 2 * c
    lam = math.sqrt(depth / c) / width
    well = ah.Well.from_terms([{"morse": {"depth": depth, "width": width, "center": center}}],
                              units=units, mass=mass)
    hw = 2.0 * depth / lam
    v = np.arange(math.floor(lam - 0.5) + 1)
    return well, hw * (v + 0.5) - (hw * (v + 0.5)) ** 2 / (4.0 * depth)


def _poschl_teller(s: float, center: float = 0.0) -> tuple[ah.Well, np.ndarray]:
    """−V₀/cosh²(x − x₀) with s(s+1) = V₀/c (ħ = m = 1: c = ½) and its exact levels
    E_n = −c (s − n)², n < s (G. Pöschl and E. Teller, Z. Phys. 83, 143 (1933))."""
    c = 0.5
    well = ah.Well.from_terms([{"poschl_teller": {"depth": c * s * (s + 1.0), "range": 1.0,
                                                  "center": center}}])
    n = np.arange(math.ceil(s))
    return well, -c * (s - n) ** 2


def _grid_reference(well: ah.Well, levels: int, lo: float, hi: float
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Finite differences on [lo, hi], Richardson-extrapolated (tests/refsolvers.py): the
    levels and their error estimates."""
    from refsolvers import line_richardson_levels

    c = well.units.hbar2_over_2m(well.mass)
    ref = line_richardson_levels(well.value, c, lo, hi, levels, grids=(2000, 4000, 8000))
    return ref.energies, ref.error


def centre_wells() -> list[tuple[str, ah.Well, tuple[np.ndarray, np.ndarray], dict, str]]:
    """(name, well, (reference levels, their errors), converge keywords, source of the
    levels) of the 1D study; exact levels carry error 0."""
    out = []

    def poly(coeffs: dict) -> ah.Well:
        return ah.Well.from_terms([{"polynomial": {"coefficients": coeffs}}])

    w = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                            {"power": {"exponent": 4, "strength": 0.1}}])
    out.append(("quartic ½x² + 0.1x⁴, 8 levels", w, _grid_reference(w, 8, -12, 12),
                {"levels": 8, "tolerance": 1e-8}, "finite differences"))
    w = poly({2: 0.5, 3: 0.3, 4: 0.1})
    out.append(("cubic+quartic ½x² + 0.3x³ + 0.1x⁴, 8 levels", w,
                _grid_reference(w, 8, -16, 12), {"levels": 8, "tolerance": 1e-8},
                "finite differences"))
    w = poly({1: 0.6, 2: -4.0, 4: 1.0})
    out.append(("tilted double well x⁴ − 4x² + 0.6x, 8 levels", w,
                _grid_reference(w, 8, -6, 6), {"levels": 8, "tolerance": 1e-8},
                "finite differences"))
    w = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "range": 1.0}}])
    out.append(("Gaussian −10 e^{−x²}, 5 levels", w, _grid_reference(w, 5, -40, 40),
                {"levels": 5, "tolerance": 1e-6}, "finite differences"))
    w = ah.Well.from_terms([{"gaussian": {"depth": 5.0, "range": 1.0, "center": -1.0}},
                            {"gaussian": {"depth": 3.0, "range": 0.7, "center": 1.5}}])
    out.append(("two Gaussians −5 e^{−(x+1)²} − 3 e^{−((x−1.5)/0.7)²}, 4 levels", w,
                _grid_reference(w, 4, -40, 40), {"levels": 4, "tolerance": 1e-6,
                                                 "max_size": 160}, "finite differences"))
    for s, x0 in ((5.5, 0.0), (5.5, 1.3)):
        w, e = _poschl_teller(s, x0)
        out.append((f"Pöschl–Teller s = {s}, x₀ = {x0}, {e.size} levels", w, (e, 0 * e),
                    {"levels": int(e.size), "tolerance": 1e-6}, "exact"))
    for lam, tol in ((8.3, 1e-8), (12.6, 1e-6)):
        w, e = _morse(lam)
        out.append((f"Morse λ = {lam}, all {e.size} levels", w, (e, 0 * e),
                    {"levels": int(e.size), "tolerance": tol}, "exact"))
    w, e = _morse(0.0, "molecular", 0.96, depth=38000.0, width=2.1, center=0.93)
    out.append(("demo diatomic-morse well, 8 levels, 1e-4 cm⁻¹", w, (e[:8], 0 * e[:8]),
                {"levels": 8, "tolerance": 1e-4, "units": "molecular", "mass": 0.96},
                "exact"))
    w = ah.Well.from_terms([{"gaussian": {"depth": 150.0, "waist": 0.85}}], units="trap",
                           mass=86.909180)
    out.append(("demo trap-fit well (Gaussian beam), 4 levels, 1e-6 h·kHz", w,
                _grid_reference(w, 4, -6, 6),
                {"levels": 4, "tolerance": 1e-6, "units": "trap", "mass": 86.909180},
                "finite differences"))
    return out


def centre_study(modes: tuple[str, ...] = ("minimum", "rule")) -> None:
    """Convergence studies of 1D wells without symmetry (l = None), one row per well and mode.

    Modes: ``rule`` (this code), ``minimum`` (this code with the basis centred at the
    reference centre, the minimum: the centre rule bypassed, nothing else changed) and
    ``plain`` (whatever ``anharmony`` is imported, e.g. an older checkout on PYTHONPATH).
    """
    import anharmony.convergence.driver as drv

    rule = getattr(drv, "with_covering_centre", None)
    print("(err/est: max over bound levels of |E − E_ref| / (error_estimate + the reference's "
          "error + 1e-14 |E|); ≤ 1 means every estimate holds)\n")
    print("| well | code | centre | time (s) | final size | converged | max err/est | "
          "max err |")
    print("|---|---|---:|---:|---:|---:|---:|---:|")
    for name, well, (exact, ref_err), kw, _src in centre_wells():
        for mode in modes:
            if rule is not None:
                drv.with_covering_centre = (lambda p, *_: p) if mode == "minimum" else rule
            kw2 = dict(kw)
            units = kw2.pop("units", "oscillator")
            mass = kw2.pop("mass", None)
            t = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                r = converge(well, 1, None, units=units, mass=mass, **kw2)
            dt = time.perf_counter() - t
            n = exact.size
            bound = r.bound[:n]
            err = np.abs(r.energies[:n] - exact)[bound]
            # the true error within the level's estimate plus the reference's own error
            ratio = np.max(err / (r.error_estimate[:n][bound] + ref_err[bound]
                                  + 1e-14 * np.abs(exact[bound])))
            centre = getattr(r, "center", r.scan.center)
            print(f"| {name} | {mode} | {centre:.4g} | {dt:.2f} | {r.size} | "
                  f"{int(np.sum(r.converged))}/{r.levels} | {ratio:.2g} | {np.max(err):.1e} |")
        if rule is not None:
            drv.with_covering_centre = rule


def main() -> None:
    if "morse25" in sys.argv[1:]:
        morse25()
        return
    if "centre" in sys.argv[1:]:
        modes = tuple(m for m in ("plain", "minimum", "rule") if m in sys.argv[1:])
        centre_study(modes or ("minimum", "rule"))
        return
    print(f"machine: {platform.processor() or platform.machine()}, "
          f"{os.cpu_count()} cores, Python {platform.python_version()}, numpy {np.__version__}")
    print(f"date: {time.strftime('%Y-%m-%d')}")
    w = ws(51.0)
    ref, text = reference(w, 1, (-16.0, -15.0))
    print(f"\n## WS 2s1/2, A = 40, V0 = 51 MeV: reference {text}\n")
    table_best_b(w, 1, ref, 1.7)
    w = ws(57.7)
    ref, text = reference(w, 2, (-0.4, -0.2))
    print(f"\n## WS 3s, V0 = 57.7 MeV (near threshold): reference {text}\n")
    table_best_b(w, 2, ref, 3.5)
    print()
    table_extrapolated(w, 2, ref)
    print("\n## Tolerance-driven runs\n")
    table_tolerance()
    print("\n## 25 Morse levels; a channel without bound states\n")
    morse25()
    print("\n## Cross-check cost\n")
    for depth, lev in ((51.0, 2), (57.7, 3)):
        t = time.perf_counter()
        x = cross_check(ws(depth), 3, 0, levels=lev, units="nuclear")
        print(f"- WS V0 = {depth}: {lev} levels, {x.points} points, "
              f"{time.perf_counter() - t:.2f} s, uncertainty max {np.max(x.uncertainty):.1e}")


if __name__ == "__main__":
    main()
