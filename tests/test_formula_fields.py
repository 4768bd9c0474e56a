"""Formulas in x, y[, z] or rho, z: the `expression` term in the Cartesian and axial bases.

References: the exact levels of the anisotropic oscillator, E = Σ ħω_i (n_i + ½), and of the
axially symmetric one, E = ħω_⊥ (2n_ρ + |Λ| + 1) + ħω_z (n_z + ½) (common practice, no
source); the refusals follow the contract of DESIGN §4 (the field named, what to do).
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError, TermError
from anharmony.geometry import solve_geometry

W = (1.0, 1.3, 1.7)
EXACT = 1e-10  # polynomial formulas: the Gauss–Hermite rule is exact (rounding only)


def test_a_cartesian_formula_gives_the_anisotropic_oscillator():
    well = ah.Well.from_terms([{"expression": {"formula": "0.5*(x**2 + a*y**2 + b*z**2)",
                                               "parameters": {"a": W[1] ** 2,
                                                              "b": W[2] ** 2}}}])
    spec = solve_geometry(well, 3, geometry="cartesian", shells=6, levels=12,
                          lengths=[1 / np.sqrt(w) for w in W])
    exact = sorted(float(np.dot(W, np.add(n, 0.5)))
                   for n in itertools.product(range(7), repeat=3) if sum(n) <= 6)[:12]
    np.testing.assert_allclose(spec.energies, exact, rtol=EXACT)
    assert np.isinf(spec.threshold)  # V grows in every direction: probed far out


def test_an_axial_formula_gives_the_axial_oscillator():
    well = ah.Well.from_terms([{"expression": {"formula": "0.5*(rho**2 + 4*z**2)"}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        spec = solve_geometry(well, 3, geometry="axial", shells=6, levels=8,
                              lengths=[1.0, 0.5**0.5])
    exact = sorted((2 * nr + abs(lam) + 1) + 2.0 * (nz + 0.5)
                   for nr in range(4) for lam in range(-6, 7) for nz in range(7)
                   if 2 * nr + abs(lam) + nz <= 6)[:8]
    np.testing.assert_allclose(spec.energies, exact, rtol=EXACT)


def test_field_formulas_are_refused_where_they_do_not_belong():
    cartesian = ah.Well.from_terms([{"expression": {"formula": "x**2 + y**2 + x*y"}}])
    with pytest.raises(InputError, match="not symmetric about the z axis"):
        solve_geometry(cartesian, 3, geometry="axial", shells=4)
    with pytest.raises(TermError, match=r"off the line; solve it with space: \{geometry: "):
        ah.solve(cartesian, 2, 0)
    with pytest.raises(TermError, match="no real value"):
        ah.Well.from_terms([{"expression": {"formula": "sqrt(x)*y"}}])
    with pytest.raises(TermError, match="center"):
        ah.Well.from_terms([{"expression": {"formula": "x*y", "center": 1.0}}])


def test_a_case_file_runs_a_cartesian_formula(tmp_path):
    path = tmp_path / "dot.yaml"
    path.write_text("schema: 1\nspace: {dimension: 2, geometry: cartesian, shells: 6}\n"
                    "well:\n  - expression: {formula: '0.5*(x**2 + 2.25*y**2)'}\n"
                    "levels: {count: 2}\noutput: dot.nc\n")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        ds = ah.run_case(path)
    lowest = float(np.nanmin(ds.energy.values))
    # the default lengths come from the Hessian at the minimum: the oscillator's own, so exact
    assert lowest == pytest.approx(0.5 * (1.0 + 1.5), rel=1e-8)  # Hessian by differences
    np.testing.assert_allclose(ds.trap_frequency.values[0], [1.0, 1.5], rtol=1e-6)
