"""Degenerate perturbation theory in the Cartesian basis (anharmony.degenerate_series).

References: the exact RS coefficients of the central channels (anharmony.series with exact
rationals, itself checked against Bender & Wu 1969 and sympy sums over states) for wells that
are central but solved here in the Cartesian basis, where their shells are degenerate; the
closed form of an anisotropic oscillator, E = Σ √k_i (n_i + ½), expanded in k_i − 1 (common
practice, no source); finite differences in λ of the levels of H₀ + λW from the Cartesian
diagonaliser (anharmony.solve_geometry, scipy eigh).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy

import anharmony as ah
from anharmony.errors import InputError

G = 0.1
QUARTIC = [{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": G}}]


def _as_fraction(x) -> Fraction:
    r = sympy.nsimplify(x)
    assert r.is_Rational, x
    return Fraction(int(r.p), int(r.q))


@pytest.mark.parametrize("dimension,level,channels", [
    (2, 1, [(1, 0)] * 2),                       # shell N = 1: m = ±1
    (2, 2, [(0, 1)] + [(2, 0)] * 2),            # N = 2: m = 0 (n = 1) and m = ±2
    (3, 2, [(0, 1)] + [(2, 0)] * 5),            # N = 2: 2s and 1d (2l + 1 = 5)
])
def test_shells_of_a_central_quartic_split_as_its_central_channels(dimension, level, channels):
    well = ah.Well.from_terms(QUARTIC)
    ds = ah.degenerate_series(well, dimension, level=level, frequencies=[1.0] * dimension)
    assert ds.complete and len(ds.states) == len(channels)
    expected = []
    for l, n in channels:
        s = ah.series(well, dimension, l, level=n, orders=2, reference={"frequency": 1.0})
        expected.append(s.exact[:3])
    expected.sort(key=lambda e: (e[1], e[2]))
    got = [tuple(_as_fraction(v) for v in row) for row in ds.exact]
    assert got == [tuple(e) for e in expected]  # exact rationals
    np.testing.assert_allclose(ds.coefficients, np.array(expected, dtype=float),
                               rtol=1e-12, atol=1e-12)  # rounding of the numeric path


def test_anisotropic_oscillator_follows_its_closed_form():
    # ω_x = ω_y = √1.2, ω_z = √0.7 against the isotropic reference ħω = 1: W = ½ε_i x_i²,
    # E(n) = Σ √(1 + ε_i)(n_i + ½) → E₁ = Σ ε_i(n_i + ½)/2, E₂ = −Σ ε_i²(n_i + ½)/8
    k = np.array([1.2, 1.2, 0.7])
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": list(np.sqrt(k))}}])
    ds = ah.degenerate_series(well, 3, level=1, frequencies=[1.0, 1.0, 1.0])
    eps = k - 1.0
    rows = []
    for n in np.eye(3, dtype=int):  # shell N = 1: (1,0,0), (0,1,0), (0,0,1)
        rows.append((2.5, float(eps @ (n + 0.5)) / 2, -float(eps**2 @ (n + 0.5)) / 8))
    rows.sort(key=lambda r: (r[1], r[2]))
    np.testing.assert_allclose(ds.coefficients, rows, rtol=1e-12, atol=1e-12)
    assert ds.labels[0] == "(0,0,1)"  # the softer z axis lowest
    assert sorted(ds.labels[1:]) == ["(0,1,0)", "(1,0,0)"]


def test_non_polynomial_well_matches_finite_differences_of_the_diagonaliser():
    # V = ½r² − A e^{−r²/a²} in 2D with the reference ħω = 1 at 0: H(λ) = H₀ + λW is the well
    # with depth λA plus (λ − 1)A, so E(λ) comes from solve_geometry at the same shells
    depth, a, shells, h = 0.3, 1.5, 12, 1e-2
    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"gaussian": {"depth": depth, "range": a}}])
    ds = ah.degenerate_series(well, 2, level=2, frequencies=[1.0, 1.0], shells=shells)
    assert not ds.complete

    def levels(lam):
        terms = [{"harmonic": {"frequency": 1.0}}]
        if lam:  # a Gaussian term needs a positive depth: λ = 0 is the oscillator alone
            terms.append({"gaussian": {"depth": lam * depth, "range": a}})
        g = ah.solve_geometry(ah.Well.from_terms(terms), 2, geometry="cartesian",
                              shells=shells, lengths=[1.0, 1.0], levels=6,
                              error_estimate=False)
        return np.sort(g.energies[3:6]) + (lam - 1.0) * depth  # the N = 2 shell

    # E(λ) at λ = 0, h, …, 4h interpolated by a quartic: E₁, E₂ with an error of order h³ E₅
    lams = h * np.arange(5)
    values = np.array([levels(x) for x in lams])
    fit = np.polynomial.polynomial.polyfit(lams, values, 4)
    e1, e2 = fit[1], fit[2]
    order = np.lexsort((e2, e1))
    np.testing.assert_allclose(ds.coefficients[:, 0], values[0], atol=1e-9)
    np.testing.assert_allclose(ds.coefficients[:, 1], e1[order], atol=1e-9)
    np.testing.assert_allclose(ds.coefficients[:, 2], e2[order], atol=1e-7)
    assert ds.exact is None


def test_partial_sums_and_refusals():
    well = ah.Well.from_terms(QUARTIC)
    ds = ah.degenerate_series(well, 2, level=0, frequencies=1.0)
    first, second = ds.partial_sums(0.5)[0]
    c = ds.coefficients[0]
    assert first == c[0] + 0.5 * c[1] and second == first + 0.25 * c[2]
    with pytest.raises(InputError, match="level"):
        ah.degenerate_series(well, 2, level=-1)
    with pytest.raises(InputError, match="shells"):
        ah.degenerate_series(well, 2, level=2, shells=1, frequencies=1.0)
    with pytest.raises(InputError, match="shells"):
        ah.degenerate_series(well, 2, level=2, shells=1000, frequencies=1.0)
    with pytest.raises(InputError, match="beyond the levels"):  # no long count of states
        ah.degenerate_series(well, 2, level=3000, frequencies=1.0)
    with pytest.raises(InputError, match="exact"):  # sympy sums are for small bases
        ah.degenerate_series(well, 2, level=2, shells=30, frequencies=1.0, exact=True)
    gauss = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                                {"gaussian": {"depth": 0.3, "range": 1.5}}])
    with pytest.raises(InputError, match="polynomial"):
        ah.degenerate_series(gauss, 2, level=1, frequencies=1.0, shells=6, exact=True)
