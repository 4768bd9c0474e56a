"""Geometry solves refuse or warn instead of returning fewer or unconverged levels silently."""

from __future__ import annotations

import pytest

import anharmony as ah

# ½r² + 0.1 r⁴ (oscillator units): a spherical well, solved in the axial basis
WELL = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                           {"power": {"exponent": 4, "strength": 0.1}}])


def test_more_levels_than_the_blocks_hold_are_refused():
    # N_max = 2 holds 10 states in 3D ((N+1)(N+2)(N+3)/6, oscillator shell counting; common
    # practice, no source): asking for 500 used to return 10 without a word
    with pytest.raises(ah.InputError, match=r"levels: 500 levels .* hold 10 states"):
        ah.solve(WELL, 3, geometry="axial", shells=2, levels=500)


def test_unconverged_levels_are_named():
    # shells = 4 is far from converged for a quartic term of 0.1 ħω/b⁴ (the change to
    # shells = 2 is of order 1e-2 ħω, far above 1e-6 of the spacing)
    with pytest.warns(ah.ConvergenceWarning, match=r"not converged .*raise shells"):
        ah.solve(WELL, 3, geometry="axial", shells=4, levels=3)
