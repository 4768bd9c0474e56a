"""Speed of the Cartesian and axial bases (anharmony.geometry); numbers go in RESULTS_geometry.md.

Run by hand:  PYTHONPATH=src python benchmarks/bench_geometry.py
BLAS runs on one thread (the development machine has 2 cores shared by several jobs, where
threaded eigh is slower by an order of magnitude).

1. One axial Ω^π block (Λ = 0, π = +) of a Woods–Saxon well with N_max = 12, warm (the
   quadrature rules cached by a first call). The deformed Woods–Saxon term is not written yet,
   so the well is the spherical A = 40 one; the block's matrix work is the same (panel rules
   in ρ and z, quadrature verified to 1e-9 of its largest element).
2. A 3D Cartesian focused-beam trap (U₀ = 100, w₀ = 1, z_R = 3 in oscillator units: ħω_⊥ = 20,
   ħω_z = 4.714), lowest 20 levels, parity blocks, sum-factorised quadrature: time per basis
   size and the change of the 20 levels against the previous size, in units of ħω_z.
"""

from __future__ import annotations

import sys
import time
import warnings
from datetime import date
from pathlib import Path

import numpy as np
from threadpoolctl import threadpool_limits

import anharmony as ah
from anharmony.geometry import solve_geometry

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _machine import describe


def _best(f, repeat=3):
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        res = f()
        dt = time.perf_counter() - t
        out = dt if out is None else min(out, dt)
    return out, res


def axial_woods_saxon():
    well = ah.Well.from_terms([{"woods_saxon": {"depth": 51.0, "r0": 1.27, "mass_number": 40,
                                                "diffuseness": 0.67}}], units="nuclear")

    def run():
        return solve_geometry(well, 3, geometry="axial", omega=0, parity=1, shells=12,
                              lengths=[2.0, 2.0], units="nuclear", levels=5,
                              error_estimate=False)

    run()  # warm: quadrature rules cached
    dt, spec = _best(run)
    print("| axial Λ = 0, π = +, spherical WS A = 40, N_max = 12 "
          f"({len(spec.states)} states) | {1e3 * dt:.0f} ms | E0 = {spec.energies[0]:.6f} MeV |")


def axial_deformed_spin():
    """One Ω^π block of a deformed Woods–Saxon well with its deformed spin–orbit term (spin ½:
    Λ = Ω − ½ up and Λ = Ω + ½ down), β₂ = 0.25, N_max = 12, warm; and the whole level scheme
    of the demo case (every block at N_max and N_max − 2) as `anharmony run` makes it."""
    d = {"r0": 1.27, "mass_number": 40, "diffuseness": 0.67, "beta2": 0.25}
    well = ah.Well.from_terms([{"deformed_woods_saxon": {"depth": 51.0, **d}},
                               {"deformed_spin_orbit": {"strength": 22.0, "length": 1.27,
                                                        **d}}], units="nuclear")

    def block():
        return solve_geometry(well, 3, geometry="axial", omega="1/2", parity=1, shells=12,
                              lengths=[2.0, 2.0], units="nuclear", levels=5,
                              error_estimate=False)

    block()
    dt, spec = _best(block)
    print("| axial Ω = 1/2, π = +, deformed WS + SO A = 40, β₂ = 0.25, N_max = 12 "
          f"({len(spec.states)} states) | {1e3 * dt:.0f} ms | E0 = {spec.energies[0]:.6f} MeV |")

    def block_with_errors():
        return solve_geometry(well, 3, geometry="axial", omega="1/2", parity=1, shells=12,
                              lengths=[2.0, 2.0], units="nuclear", levels=5)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        block_with_errors()
        dt, spec = _best(block_with_errors)
    print("| the same block with its error bars (error_estimate=True) | "
          f"{1e3 * dt:.0f} ms | δE0 = {spec.error_estimate[0]:.1e} MeV |")
    from anharmony.geometry.by_block import solve_blocks

    def scheme():
        return solve_blocks(well, 3, geometry="axial", shells=12, units="nuclear", levels=3)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        scheme()
        dt, res = _best(scheme, repeat=2)
    print(f"| every block ({len(res.keys)} Ω^π), N_max = 12 and 10, one β₂ point | "
          f"{dt:.2f} s | lowest {np.nanmin(res.energies):.6f} MeV |")


def cartesian_beam():
    well = ah.Well.from_terms([{"focused_beam": {"depth": 100.0, "waist": 1.0,
                                                 "rayleigh_length": 3.0}}])
    hw_z = np.sqrt(2 * 100.0 / 9.0)
    lengths = [1.1 / np.sqrt(20.0), 1.1 / np.sqrt(20.0), 1.0 / np.sqrt(hw_z)]
    prev = None
    print("| N_max (energy) | states | time (s) | max change of E0…E19 / ħω_z |")
    print("|---|---|---|---|")
    for shells in (20, 24, 28, 32):
        dt, spec = _best(lambda s=shells: solve_geometry(
            well, 3, shells=s, levels=20, truncation="energy", lengths=lengths,
            error_estimate=False), repeat=1)
        change = "" if prev is None else f"{np.max(np.abs(spec.energies - prev)) / hw_z:.1e}"
        print(f"| {shells} | {len(spec.states)} | {dt:.2f} | {change} |")
        prev = spec.energies


if __name__ == "__main__":
    print(f"{date.today()}: {describe()}\n")
    with threadpool_limits(limits=1, user_api="blas"):
        axial_woods_saxon()
        axial_deformed_spin()
        print()
        cartesian_beam()
