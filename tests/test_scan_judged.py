"""Every point of a scan carries ``converged`` beside its error bar, judged as solve() judges a
level, and one ConvergenceWarning names what is not; open lines are judged below their
escape barrier."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

import anharmony as ah

W = ah.Well.from_terms
OPEN = [{"gaussian": {"depth": 5.0, "range": 1.0}}, {"tilt": {"force": 0.3}}]


def test_scan_points_are_judged_as_solve_judges_them():
    # The harmonic strength scanned: V = ½ k r², E = (2n + l + 3/2) √k (textbook oscillator,
    # ħ = m = 1); every point's levels are within their error bars of the closed form, each
    # point's converged/tolerance equal those of a solve of the same well and basis.
    well = W([{"harmonic": {"stiffness": 1.0}}, {"power": {"exponent": 4, "strength": 0.0}}])
    ks = [0.5, 1.0, 2.0]
    with warnings.catch_warnings():
        warnings.simplefilter("error", ah.ConvergenceWarning)
        res = ah.scan(well, 3, 1, parameter="well[0].stiffness", values=ks, size=30, levels=3)
    exact = (2 * np.arange(3) + 2.5)[None, :] * np.sqrt(ks)[:, None]
    assert np.all(np.abs(res.energies - exact) <= res.error_estimate)
    assert res.converged.shape == res.energies.shape and res.converged.all()
    quartic = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.3}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        res = ah.scan(quartic, 3, 0, parameter="well[1].strength", values=[0.3, 3.0],
                      size=14, levels=4)
        for k, g in enumerate([0.3, 3.0]):
            w = W([{"harmonic": {"frequency": 1.0}},
                   {"power": {"exponent": 4, "strength": g}}])
            s = ah.solve(w, 3, 0, size=14, levels=4, length=float(res.length[k]))
            np.testing.assert_array_equal(res.converged[k], s.converged)
            assert res.tolerance[k] == pytest.approx(s.tolerance, rel=1e-12)  # same formula
            np.testing.assert_array_equal(res.spectra[k].converged, s.converged)


def test_a_scan_names_its_unconverged_levels_in_one_warning():
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 1.0}}])
    with pytest.warns(ah.ConvergenceWarning, match=r"scan of well\[1\]\.strength: level\(s\) "
                      r".*\(2 of 2 values\)"):
        res = ah.scan(well, 1, None, parameter="well[1].strength", values=[1.0, 2.0], size=8,
                      levels=4)
    assert not res.converged.all()
    with warnings.catch_warnings():
        warnings.simplefilter("error", ah.ConvergenceWarning)  # warn=False: silent by request
        ah.scan(well, 1, None, parameter="well[1].strength", values=[1.0, 2.0], size=8,
                levels=4, warn=False)


def test_an_open_line_is_judged_below_its_escape_barrier():
    # V = −5 e^{−x²} + 0.3 x falls to −∞ as x → −∞; its escape barrier is the local maximum
    # left of the well, found here from V′ = 0 with scipy's brentq (independent of anharmony).
    def dv(x):
        return 10.0 * x * math.exp(-x * x) + 0.3

    x_max = brentq(dv, -3.0, -0.8)
    barrier = -5.0 * math.exp(-x_max**2) + 0.3 * x_max
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        res = ah.scan(W(OPEN), 1, None, parameter="well[1].force", values=[0.3], size=30,
                      levels=4)
    assert res.barrier[0] == pytest.approx(barrier, rel=1e-9)  # bounded minimise to 1e-12
    np.testing.assert_array_equal(res.quasi_bound[0], res.energies[0] < barrier)
    assert res.quasi_bound[0].any() and not res.bound.any()
    spec = res.spectra[0]
    assert spec.quasi_bound.any() and spec.barrier == res.barrier[0]


def test_states_of_the_open_side_are_not_quasi_bound():
    # ½x² + 0.05x³ falls without bound as x → −∞ (barrier 200/27 at x = −20/3). Its resonances
    # near the well follow second-order perturbation theory, E_v ≈ v + ½ − g²(30v² + 30v + 11)/8
    # (Landau & Lifshitz, Quantum Mechanics, §38 problem 3); the basis also holds a state that
    # lives beyond the barrier (at 0.865 for the default size), which must not be flagged
    # quasi-bound, in solve and in scan alike.
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.05}}])
    g = 0.05
    pt = np.array([v + 0.5 - g * g * (30 * v * v + 30 * v + 11) / 8 for v in range(4)])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        spec = ah.solve(well, 1, None, levels=4)
        res = ah.scan(well, 1, None, parameter="well[1].strength", values=[g], levels=4)
    assert spec.barrier == pytest.approx(200 / 27, rel=1e-9)
    near = np.array([np.min(np.abs(pt - e)) < 0.03 for e in spec.energies])  # PT error ~ g⁴
    assert near.sum() >= 2 and not near.all()  # at least one state of the open side is there
    np.testing.assert_array_equal(spec.quasi_bound, near)
    np.testing.assert_array_equal(res.quasi_bound[0], near)
