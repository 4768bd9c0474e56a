"""Fit benchmark: a trap calibration, 3 parameters from 10 measured spacings (3D channels).

Run by hand: ``python benchmarks/bench_fit.py``; figures go to benchmarks/RESULTS.md.
Scenario of our own: an atom of mass 87 u in a 3D Gaussian trap (trap units: h·kHz, µm, u)
with a weak quartic correction; synthetic spacings from known parameters, fit from a start
20 % off. Target (issue): under 5 s.
"""

from __future__ import annotations

import time

import anharmony as ah

from _machine import describe

TRUE = [{"gaussian": {"depth": 300.0, "waist": 1.1}}, {"power": {"exponent": 4,
                                                                  "strength": 2.0}}]
START = [{"gaussian": {"depth": 240.0, "waist": 1.3}}, {"power": {"exponent": 4,
                                                                   "strength": 1.0}}]
PATHS = ["well[0].depth", "well[0].waist", "well[1].strength"]
MASS = 86.909


def main() -> None:
    well = ah.Well.from_terms(TRUE, "trap", MASS)
    ground = ah.solve(well, 3, 0, size=40, units="trap", mass=MASS, levels=5).energies
    data = [{"quantity": "spacing", "levels": [0, k], "l": 0, "value": float(ground[k] - ground[0]),
             "uncertainty": 0.01} for k in range(1, 5)]  # 4 excitations in l = 0
    for l in (1, 2):  # 3 levels each in l = 1, 2 (absolute: the trap bottom is known)
        e = ah.solve(well, 3, l, size=40, units="trap", mass=MASS, levels=3).energies
        data += [{"level": k, "l": l, "value": float(e[k]), "uncertainty": 0.01}
                 for k in range(3)]
    t0 = time.perf_counter()
    res = ah.fit(START, 3, 0, parameters=PATHS, data=data, units="trap", mass=MASS)  # defaults
    dt = time.perf_counter() - t0
    print(describe())
    print(f"trap calibration: {len(PATHS)} parameters, {len(data)} data, 3D channels l = 0, 1, 2:"
          f" {dt:.2f} s, {res.evaluations} model evaluations, chi2 = {res.chi2:.2e}")
    for p in PATHS:
        print(f"  {p} = {res.values[p]:.8g} ± {res.uncertainties[p]:.2g}")


if __name__ == "__main__":
    main()
