"""Invariants of the basis, matrices and spectra (common practice, no source unless named)."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.basis import HermiteBasis, RadialBasis
from anharmony.hamiltonian import Channel, channel_hamiltonian
from tolerances import ATOL_ORTHO

# sums of ~1e4 products of order-one values, each rounded: a few hundred ulp (common practice)
ATOL_ORTHO_INDEPENDENT = 1e-12
# the same √w φ_n(x) from two evaluations (the rule's and functions()), on unit-norm columns
# of U: recurrences of ~300 steps each lose up to ~n·ε of the largest value (common practice)
ATOL_RECURRENCE = 1e-12

W = ah.Well.from_terms

BASES = [HermiteBasis(320, 1.3, 0.4), RadialBasis(320, 0.9, 0, 3), RadialBasis(300, 1.1, 25, 3),
         RadialBasis(200, 1.0, 1, 1), RadialBasis(200, 2.0, 7, 2)]


def _independent_rule(basis, panel=0.05, order=16):
    """Composite Gauss–Legendre rule from numpy (numpy.polynomial.legendre.leggauss) over the
    whole support of the basis: it shares nothing with the basis' own Gauss rules."""
    t, w = np.polynomial.legendre.leggauss(order)
    reach = math.sqrt(4.0 * basis.size + 2.0 * abs(basis.l or 0) + 2.0) + 12.0  # in units of b
    lo, hi = (-reach, reach) if basis.l is None else (0.0, reach)
    edges = np.linspace(lo, hi, math.ceil((hi - lo) / panel) + 1)
    half, mid = 0.5 * np.diff(edges), 0.5 * (edges[1:] + edges[:-1])
    x = (mid[:, None] + half[:, None] * t).ravel() * basis.length
    wx = (half[:, None] * w).ravel() * basis.length
    if basis.l is None:
        return basis.center + x, wx
    return x, wx * x ** (basis.dimension - 1)  # radial measure r^(d-1) dr


@pytest.mark.parametrize("basis", BASES, ids=lambda b: f"{type(b).__name__}-{b.size}-l{b.l}")
def test_basis_functions_are_orthonormal_under_an_independent_rule(basis):
    # Large sizes and l = 25 check the scaled recurrences against overflow and underflow.
    # The integrands are polynomials times a Gaussian, oscillating at most ~2√(2N)/b: 16-point
    # panels of width 0.05 b resolve them to rounding (common practice, no source).
    x, w = _independent_rule(basis)
    f = basis.functions(x)
    assert np.all(np.isfinite(f))
    gram = (f * w) @ f.T
    np.testing.assert_allclose(gram, np.eye(basis.size), atol=ATOL_ORTHO_INDEPENDENT)


@pytest.mark.parametrize("basis", BASES, ids=lambda b: f"{type(b).__name__}-{b.size}-l{b.l}")
@pytest.mark.parametrize("kind", ["weight", "panels"])
def test_quadrature_rules_hold_the_basis_functions_and_integrate_them_exactly(basis, kind):
    # U[q, n] = √w_q φ_n(x_q): every column must be the independently checked functions above
    # times one √w_q per node (same ratio for all n), and UᵀU = 1 then says the rule
    # integrates their products exactly.
    nodes, u = basis.quadrature(basis.size + 40, kind)
    assert np.all(np.isfinite(u))
    f = basis.functions(nodes).T
    if basis.l is not None:
        f = f * nodes[:, None] ** (0.5 * (basis.dimension - 1))
    big = np.abs(f) > 1e-250 * np.abs(f).max(axis=1, keepdims=True)  # skip underflowed values
    ratio = np.where(big, u / np.where(big, f, 1.0), np.nan)  # √w_q, up to rounding
    sqrt_w = np.nanmedian(ratio, axis=1)
    assert np.isfinite(sqrt_w).all()
    np.testing.assert_allclose(u, sqrt_w[:, None] * f, rtol=0, atol=ATOL_RECURRENCE)
    # ×10: each entry sums N + 40 ≈ 360 rounded products
    np.testing.assert_allclose(u.T @ u, np.eye(basis.size), atol=ATOL_ORTHO * 10)


def test_hermite_functions_match_scipy_hermite_polynomials_at_moderate_order():
    # Reference: scipy.special.eval_hermite (H_n) with the textbook normalisation
    # ψ_n = (2^n n! √π)^{-1/2} H_n(x) e^{-x²/2}; fine for n ≤ 30, where nothing overflows.
    from math import factorial, pi, sqrt

    from scipy.special import eval_hermite

    b = HermiteBasis(31, 1.0)
    x = np.linspace(-6, 6, 41)
    f = b.functions(x)
    for n in (0, 1, 5, 17, 30):
        ref = eval_hermite(n, x) * np.exp(-x**2 / 2) / sqrt(2.0**n * factorial(n) * sqrt(pi))
        # rtol 1e-11: scipy's H_n(x) (x up to 6, n = 30) loses ~3 digits to cancellation
        np.testing.assert_allclose(f[n], ref, rtol=1e-11, atol=1e-14)


def test_laguerre_functions_match_mpmath_far_out_where_doubles_underflow():
    # Reference: mpmath.laguerre at 50 digits; at t = r²/b² = 1600 the factor e^{-t/2} is
    # below the double range, so only a scaled recurrence gets these values.
    import mpmath as mp

    mp.mp.dps = 50
    b = RadialBasis(401, 1.0, 3, 3)
    rho = np.array([2.0, 30.0, 40.0])
    got = b.functions(rho)
    alpha = 3 + 0.5
    for n in (0, 100, 400):
        for i, r in enumerate(rho):
            t = mp.mpf(float(r)) ** 2
            norm = mp.sqrt(2 * mp.factorial(n) / mp.gamma(n + alpha + 1))
            ref = norm * mp.laguerre(n, alpha, t) * mp.mpf(float(r)) ** 3 * mp.exp(-t / 2)
            # rel 1e-9: 400 recurrence steps lose a few digits to rounding (ε·n·κ)
            assert got[n, i] == pytest.approx(float(ref), rel=1e-9, abs=1e-300)


def test_exact_coordinate_powers_equal_quadrature():
    # The banded exact matrices must agree with Gauss quadrature of the same power.
    # atol 1e-10 of the largest element: the quadrature settles to 1e-13 of it, powers of the
    # Jacobi matrix round to ~k·ε of their largest entries
    h = HermiteBasis(60, 1.0, 0.0)
    for k in (1, 3, 4, 6):
        q = h.matrix(lambda x, k=k: x**k)
        np.testing.assert_allclose(h.coordinate_power(k), q, atol=1e-10 * np.abs(q).max())
    r = RadialBasis(60, 1.0, 2, 3)
    for k in (2, 4, 6):
        q = r.matrix(lambda x, k=k: x**k)
        np.testing.assert_allclose(r.coordinate_power(k), q, atol=1e-10 * np.abs(q).max())


def test_channel_matrices_are_symmetric():
    w = W([{"woods_saxon": {"depth": 50, "radius": 4.5, "diffuseness": 0.65}},
           {"spin_orbit": {"strength": 20, "radius": 4.5, "diffuseness": 0.65}}], units="nuclear")
    m = channel_hamiltonian(w, Channel(3, 2, 2.5), 40, 2.0)
    np.testing.assert_array_equal(m.total, m.total.T)
    np.testing.assert_array_equal(m.kinetic, m.kinetic.T)  # exact, never symmetrised
    # the raw quadrature sum, before the code symmetrises it, is symmetric to rounding
    r, u = m.basis.quadrature(200, "panels")
    raw = u.T @ (w.value(r)[:, None] * u)
    # atol 1e-13 of the largest element: a sum of 200 rounded products, a few hundred ulp
    np.testing.assert_allclose(raw, raw.T, rtol=0, atol=1e-13 * np.abs(raw).max())


@pytest.mark.parametrize(("dimension", "l"), [(1, None), (3, 0), (3, 2)])
def test_energies_never_increase_as_the_basis_grows(dimension, l):
    # Rayleigh–Ritz: nested subspaces give non-increasing Ritz values. This also catches
    # powers taken from truncated matrices (they converge from below, PITFALLS §4).
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.7}}])
    prev = None
    # the smallest bases are far from converged: solve() says so (and is checked to)
    with pytest.warns(ah.ConvergenceWarning, match="not converged"):
        for n in range(4, 40, 3):
            e = ah.solve(w, dimension=dimension, l=l, size=n, levels=4, length=0.8).energies
            if prev is not None:
                assert np.all(e <= prev + 1e-12)  # + rounding of eigh on levels of order 10
            prev = e


def test_gaussian_levels_never_increase_with_size():
    w = W([{"gaussian": {"depth": 10.0, "range": 2.0}}])
    prev = np.inf
    with pytest.warns(ah.ConvergenceWarning, match="not converged"):  # N = 5, 10 are small
        for n in (5, 10, 20, 40):
            e = ah.solve(w, dimension=3, l=1, size=n, levels=1, length=1.0).energies[0]
            assert e <= prev + 1e-12  # + rounding of eigh on O(10) matrix norms
            prev = e


def test_hellmann_feynman_derivative_equals_r4_expectation():
    # Hellmann–Feynman theorem: dE/dg = ⟨r⁴⟩ for V = ½r² + g r⁴ (central difference, step 1e-4:
    # truncation error ~h² E''' ≈ 1e-8).
    def well(g):
        return W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": g}}])

    g, h = 0.3, 1e-4
    kw = {"dimension": 3, "l": 1, "size": 40, "levels": 2, "length": 0.8}
    de = (ah.solve(well(g + h), **kw).energies - ah.solve(well(g - h), **kw).energies) / (2 * h)
    r4 = ah.solve(well(g), **kw).coordinate_moment(4)
    np.testing.assert_allclose(de, r4, rtol=1e-7)  # the difference quotient's h² error


@pytest.mark.parametrize("p", [4, 6])
def test_virial_theorem_for_power_wells(p):
    # Virial theorem for V = g r^p: 2⟨T⟩ = p⟨V⟩ in an eigenstate (textbook).
    w = W([{"power": {"exponent": p, "strength": 0.5}}])
    s = ah.solve(w, dimension=3, l=1, size=60, levels=3)
    m = channel_hamiltonian(s.well, s.channel, s.basis.size, s.basis.length)
    t = np.einsum("nk,nm,mk->k", s.vectors, m.kinetic, s.vectors)
    v = np.einsum("nk,nm,mk->k", s.vectors, m.potential, s.vectors)
    # rtol 1e-8: the virial theorem holds for the exact state; N = 60 is converged to ~1e-10
    np.testing.assert_allclose(2 * t, p * v, rtol=1e-8)
    assert s.reference.method == "variational"  # V'' = 0: no harmonic approximation


def test_wavefunctions_are_normalised_on_a_fine_grid():
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.2}}])
    s = ah.solve(w, dimension=3, l=2, size=30, levels=3)
    r = np.linspace(0, 12, 24001)
    psi = s.wavefunctions(r)
    norm = np.trapezoid(psi**2 * r**2, r)
    np.testing.assert_allclose(norm, 1.0, rtol=1e-8)  # trapezoid rule, step 5e-4: error ~1e-9


def test_a_basis_reaching_far_into_an_exponential_wall_warns():
    # The Morse wall e^{2α|x|} makes ‖H‖ huge when N·b is large; eigenvalues are then only
    # accurate to eps·‖H‖ (backward stability of eigh, common practice): the user is told.
    w = W([{"morse": {"depth": 10.0, "width": 1.0}}])
    with pytest.warns(ah.ConvergenceWarning, match="not converged"), \
            pytest.warns(ah.ConvergenceWarning, match="steep wall"):
        # the rounding floor also makes the level's error bar exceed the tolerance
        s = ah.solve(w, dimension=1, l=None, size=100, length=1.0, levels=1)
    assert s.rounding > 1e-4  # eps·‖H‖ with the wall at N·b = 100: far above 1e-4
    quiet = ah.solve(w, dimension=1, l=None, size=30, levels=1)
    assert quiet.rounding < 1e-9  # the default basis stays off the wall: eps·‖H‖ ~ 1e-12
