"""Anharmonic shifts of a trap's modes and their cross terms (anharmony.mode_shifts).

Reference: first-order perturbation theory of an anisotropic oscillator with a quartic term
g r⁴ = g (x² + y² + z²)², from the Hermite moments ⟨x⁴⟩_n = 3 b⁴ (2n² + 2n + 1)/4 and
⟨x²⟩_n = b² (n + ½) (any quantum-mechanics textbook; e.g. Landau & Lifshitz §23, quoted from
memory): χ_ii = (3/2) g b_i⁴ and χ_ij = 2 g b_i² b_j², b_i² = 1/ħω_i (oscillator units).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError

W = np.array([1.0, 1.3, 1.7])


def _shifts(g):
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": list(W)}},
                               {"power": {"exponent": 4, "strength": g}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        spec = ah.solve_geometry(well, 3, geometry="cartesian", shells=10, levels=12,
                                 lengths=list(1 / np.sqrt(W)))
    return ah.mode_shifts(spec)


def test_mode_constants_follow_first_order_perturbation_theory():
    g = 1e-4
    one, two = _shifts(g), _shifts(2 * g)
    # χ(g)/g = A + B g: the linear extrapolation removes the second order, leaving O(g²)
    slope = 2 * one.chi / g - two.chi / (2 * g)
    b2 = 1 / W
    expected = 2 * np.outer(b2, b2)
    np.fill_diagonal(expected, 1.5 * b2**2)
    np.testing.assert_allclose(slope, expected, rtol=1e-4)  # the O(g²) the extrapolation leaves
    # fundamentals: ħω_i plus the first-order change of g⟨r⁴⟩ from n = 0 to 1_i,
    # 3 b_i⁴ + b_i² Σ_{j≠i} b_j²; extrapolated in g as above
    first = 3 * b2**2 + b2 * (b2.sum() - b2)
    slope_f = 2 * (one.fundamentals - W) / g - (two.fundamentals - W) / (2 * g)
    np.testing.assert_allclose(slope_f, first, rtol=1e-4)
    assert np.all(one.uncertainty_chi < 1e-8)  # error bars of converged levels (shells 10)


def test_mode_shifts_need_the_low_levels_of_a_cartesian_spectrum():
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": list(W)}}])
    spec = ah.solve_geometry(well, 3, geometry="cartesian", shells=4, levels=4)
    with pytest.raises(InputError, match="ask for more levels"):
        ah.mode_shifts(spec)
    beam = ah.Well.from_terms([{"focused_beam": {"depth": 100.0, "waist": 1.0,
                                                 "rayleigh_length": 3.0}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        axial = ah.solve_geometry(beam, 3, geometry="axial", shells=4, levels=3)
    with pytest.raises(InputError, match="Cartesian"):
        ah.mode_shifts(axial)
