"""The reference solvers of tests/refsolvers.py against exact spectra.

Other tests trust these solvers where no exact answer exists (Gaussian, Woods–Saxon with
spin–orbit), so they are checked here on problems with textbook solutions. Units: ħ = m = 1,
so ħ²/2m = 1/2, and ω = 1 for the oscillators; hydrogen in atomic units (ħ²/2m = 1/2,
V = −1/r, energies in hartree). Textbook formulas are quoted from memory with the book named.
"""

from __future__ import annotations

import ast
import pathlib

import numpy as np
import pytest
import scipy.special
from scipy.optimize import brentq

from refsolvers import (
    line_fd_levels,
    line_richardson_levels,
    radial_fd_levels,
    radial_fd_step,
    richardson,
    richardson_levels,
    shooting_level,
)

C = 0.5  # ħ²/2m with ħ = m = 1

# Richardson over three grids of smooth wells leaves an h⁶ remainder below 1e-12; rounding of
# eigh_tridiagonal (~eps·4c/h² ≈ 5e-11 at the finest grid) sets the floor. Stated accuracy:
RTOL_RICHARDSON = 1e-9
# The lowest levels of a hard-walled box sit far below the matrix norm 4c/h², so rounding is
# larger relative to them (≈ eps·0.4·n² with n grid points): 1600 points -> ~3e-10.
RTOL_BOX = 2e-9
# Hydrogen: the Coulomb kink at r = 0 makes the h-series less clean; the box at r_max = 120
# leaves < 1e-12 for n <= 3. Stated accuracy after Richardson:
RTOL_HYDROGEN = 1e-9
# Raw second-order finite differences: the discrete spectrum of the free box is known in
# closed form, so only eigh_tridiagonal rounding (eps·‖T‖/E ≈ 1e-13 at n = 100) remains.
RTOL_DISCRETE_BOX = 1e-11
# Shooting with DOP853 at rtol 1e-12 and brentq to machine precision.
RTOL_SHOOTING = 1e-10
# h² convergence: the ratio of raw errors when h halves is 4 up to O(h²) corrections.
RATIO_TOL = 0.05

FOUR_GRIDS = (200, 400, 800, 1600)  # removes h², h⁴ and h⁶ at a low rounding floor


def oscillator(r):
    return 0.5 * r**2


def coulomb(r):
    return -1.0 / r


def free(r):
    return np.zeros_like(r)


# ------------------------------------------------------------------------------ oscillators
@pytest.mark.parametrize("l", [0, 1, 2, 5])
def test_3d_oscillator_levels_after_richardson(l):
    # Exact: E = ħω(2n + l + 3/2) (Sakurai, Modern Quantum Mechanics, isotropic oscillator).
    res = richardson_levels(oscillator, l, 3, C, 12.0, 4)
    exact = 2 * np.arange(4) + l + 1.5
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_RICHARDSON)
    assert np.all(np.abs(res.energies - exact) <= res.error)


@pytest.mark.parametrize("m", [0, 1, 3])
def test_2d_oscillator_levels_after_richardson(m):
    # Exact: E = ħω(2n + |m| + 1) (Cohen-Tannoudji, Diu & Laloë, Quantum Mechanics, 2D
    # isotropic oscillator). The flux-form grid handles u ~ r^(1/2) at m = 0.
    res = richardson_levels(oscillator, m, 2, C, 12.0, 4)
    exact = 2 * np.arange(4) + m + 1.0
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_RICHARDSON)
    assert np.all(np.abs(res.energies - exact) <= res.error)


def test_1d_oscillator_on_the_line_and_in_parity_channels():
    # Exact: E = ħω(n + 1/2) (Griffiths, Introduction to Quantum Mechanics, §2.3); even
    # parity holds n = 0, 2, 4, ..., odd parity n = 1, 3, 5, ...
    line = line_richardson_levels(oscillator, C, -12.0, 12.0, 6)
    np.testing.assert_allclose(line.energies, np.arange(6) + 0.5, rtol=RTOL_RICHARDSON)
    assert np.all(np.abs(line.energies - (np.arange(6) + 0.5)) <= line.error)
    even = richardson_levels(oscillator, 0, 1, C, 12.0, 3)
    odd = richardson_levels(oscillator, 1, 1, C, 12.0, 3)
    np.testing.assert_allclose(even.energies, [0.5, 2.5, 4.5], rtol=RTOL_RICHARDSON)
    np.testing.assert_allclose(odd.energies, [1.5, 3.5, 5.5], rtol=RTOL_RICHARDSON)


def test_1d_oscillator_shifted_well_without_symmetry():
    # Exact: E = ħω(n + 1/2) for any centre; the grid is not symmetric about the minimum.
    res = line_richardson_levels(lambda x: 0.5 * (x - 1.3) ** 2, C, -10.0, 13.0, 4)
    np.testing.assert_allclose(res.energies, np.arange(4) + 0.5, rtol=RTOL_RICHARDSON)


# --------------------------------------------------------------------------------- hydrogen
@pytest.mark.parametrize("l", [0, 1])
def test_hydrogen_levels_after_richardson(l):
    # Exact: E_n = −1/(2n²) hartree, n = l + 1, l + 2, ... (Griffiths, Introduction to
    # Quantum Mechanics, §4.2).
    res = richardson_levels(coulomb, l, 3, C, 120.0, 3, grids=(2000, 4000, 8000))
    n = np.arange(l + 1, l + 4)
    exact = -0.5 / n**2
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_HYDROGEN)
    assert np.all(np.abs(res.energies - exact) <= res.error)


# ------------------------------------------------------------------------------- hard walls
def test_raw_line_grid_matches_the_discrete_laplacian_spectrum():
    # The 3-point Laplacian on n interior points with Dirichlet ends has eigenvalues
    # (4c/h²) sin²(pπh/2L) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007,
    # §2.10); this checks the matrix itself, not only its limit.
    n, length = 100, 2.0
    h = length / (n + 1)
    p = np.arange(1, 8)
    exact = 4 * C / h**2 * np.sin(p * np.pi * h / (2 * length)) ** 2
    got = line_fd_levels(free, C, 0.0, length, n, 7)
    np.testing.assert_allclose(got, exact, rtol=RTOL_DISCRETE_BOX)
    # The same box as the 3D s-wave (u(0) = 0) on r in [0, L]: identical matrix.
    got3 = radial_fd_levels(free, 0, 3, C, length, n, 7)
    np.testing.assert_allclose(got3, exact, rtol=RTOL_DISCRETE_BOX)


def test_infinite_square_well_after_richardson():
    # Exact: E_n = n²π²ħ²/(2mL²) (Griffiths, Introduction to Quantum Mechanics, §2.2).
    length = 2.0
    res = line_richardson_levels(free, C, -0.7, length - 0.7, 5, grids=FOUR_GRIDS)
    exact = C * (np.arange(1, 6) * np.pi / length) ** 2
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_BOX)
    assert np.all(np.abs(res.energies - exact) <= res.error)


def _spherical_bessel_zeros(l, count):
    xs = np.linspace(0.5, 30.0, 6000)
    f = scipy.special.spherical_jn(l, xs)
    idx = np.nonzero(np.sign(f[:-1]) != np.sign(f[1:]))[0][:count]
    return np.array(
        [
            brentq(lambda t: scipy.special.spherical_jn(l, t), xs[i], xs[i + 1], xtol=1e-15)
            for i in idx
        ]
    )


@pytest.mark.parametrize("l", [0, 1, 3])
def test_spherical_box_levels_are_bessel_zeros(l):
    # Exact: E = ħ² x_{l,k}²/(2mR²), x_{l,k} the zeros of the spherical Bessel function j_l
    # (Sakurai, Modern Quantum Mechanics, particle in a spherical box); zeros from scipy.
    radius = 1.5
    res = richardson_levels(free, l, 3, C, radius, 3, grids=FOUR_GRIDS)
    exact = C * (_spherical_bessel_zeros(l, 3) / radius) ** 2
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_BOX)


@pytest.mark.parametrize("m", [0, 1, 2])
def test_disc_levels_are_bessel_zeros(m):
    # Exact: E = ħ² j_{m,k}²/(2mR²), j_{m,k} the zeros of J_m (circular box; e.g. Arfken &
    # Weber, Mathematical Methods for Physicists, Bessel functions); zeros from
    # scipy.special.jn_zeros.
    radius = 1.0
    res = richardson_levels(free, m, 2, C, radius, 3, grids=FOUR_GRIDS)
    exact = C * (scipy.special.jn_zeros(m, 3) / radius) ** 2
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_BOX)


# ------------------------------------------------------------------------- convergence order
@pytest.mark.parametrize(("dimension", "l"), [(3, 0), (3, 2), (2, 0), (2, 1), (1, 0), (1, 1)])
def test_raw_levels_converge_like_h_squared(dimension, l):
    # Second-order differences: error ∝ h², so halving h divides it by 4 (common practice,
    # no source). Exact levels: the oscillator formula ħω(2n + l + d/2).
    exact = l + dimension / 2
    errors, steps = [], []
    for n in (400, 800, 1600):
        steps.append(radial_fd_step(l, dimension, 12.0, n))
        errors.append(radial_fd_levels(oscillator, l, dimension, C, 12.0, n, 1)[0] - exact)
    for k in (1, 2):
        ratio = errors[k - 1] / errors[k] * (steps[k] / steps[k - 1]) ** 2
        assert ratio == pytest.approx(1.0, abs=RATIO_TOL)


def test_richardson_table_is_exact_for_polynomials_in_h_squared():
    # Polynomial extrapolation to h = 0 reproduces a + b h² + c h⁴ exactly from three steps
    # (Richardson 1911; Neville's scheme, Numerical Recipes §3.2).
    steps = np.array([0.3, 0.17, 0.05])
    values = 2.0 - 3.0 * steps**2 + 7.0 * steps**4
    table = richardson(values, steps)
    assert table[-1, -1] == pytest.approx(2.0, rel=1e-13)  # rounding of the Neville table
    # one level up: a + b h² is exact from two steps, not a + c h⁴ terms: the h⁴ term
    # leaves ~1e-2 there, far outside 1e-6
    assert table[2, 1] != pytest.approx(2.0, rel=1e-6)
    with pytest.raises(ValueError, match="distinct"):
        richardson(values, [0.1, 0.1, 0.2])


# --------------------------------------------------------------------------------- shooting
# The shooting solver gets only the level's index (its node count), never an energy.
@pytest.mark.parametrize(
    ("dimension", "l", "level"),
    [(3, 0, 0), (3, 0, 3), (3, 2, 1), (2, 0, 0), (2, 1, 2), (1, 0, 1), (1, 1, 2)],
)
def test_shooting_finds_oscillator_levels_by_node_count(dimension, l, level):
    # Exact: ħω(2n + l + d/2) with n = level (Sakurai, Modern Quantum Mechanics; 1D: even
    # parity holds 2n + ½, odd 2n + 3/2).
    exact = 2 * level + l + dimension / 2
    got = shooting_level(oscillator, l, C, level, 10.0, dimension=dimension)
    assert got == pytest.approx(exact, rel=RTOL_SHOOTING)


@pytest.mark.parametrize(("z", "n", "l"), [(1, 1, 0), (1, 7, 0), (3, 3, 2)])
def test_shooting_reaches_near_threshold_hydrogen_like_levels(z, n, l):
    # Exact: −Z²/(2n²) hartree, n = n_r + l + 1 (Griffiths, Introduction to Quantum Mechanics,
    # §4.2, with e² → Z e²). n = 7 is bound by 0.01 hartree and extends to r ≈ 2n² = 98 bohr;
    # the inward solution starts at r_max = 700 on its decaying branch.
    exact = -0.5 * z**2 / n**2
    got = shooting_level(lambda r: -z / r, l, C, n - l - 1, 700.0 / z)
    assert got == pytest.approx(exact, rel=RTOL_SHOOTING)


MORSE_D, MORSE_A, MORSE_RE = 10.0, 1.0, 2.5  # V(0) ≈ 1.2e3: u(0) ~ e^(−50), r = 0 is hidden


def morse(r):
    return MORSE_D * (1.0 - np.exp(-MORSE_A * (r - MORSE_RE))) ** 2


def morse_exact(n):
    # Morse, Phys. Rev. 34, 57 (1929): E_n = ħω(n+½) − [ħω(n+½)]²/(4D), ħω = α√(2D/m), ħ = m = 1
    # (exact on the whole line; at α r_e = 2.5 the s-wave condition u(0) = 0 changes it by far
    # less than rounding, since u(0) ~ exp(−∫√(2V)) there)
    hw = MORSE_A * np.sqrt(2.0 * MORSE_D)
    return hw * (n + 0.5) - (hw * (n + 0.5)) ** 2 / (4.0 * MORSE_D)


@pytest.mark.parametrize("level", [0, 3])
def test_shooting_finds_morse_levels_by_node_count(level):
    got = shooting_level(morse, 0, C, level, 25.0)  # level 3: κ ≈ 1, e^(−2κ·22) at r_max
    assert got == pytest.approx(morse_exact(level), rel=RTOL_SHOOTING)


def test_morse_levels_on_the_line_after_richardson():
    res = line_richardson_levels(morse, C, 0.0, 30.0, 4)
    exact = morse_exact(np.arange(4))
    np.testing.assert_allclose(res.energies, exact, rtol=RTOL_RICHARDSON)
    assert np.all(np.abs(res.energies - exact) <= res.error)


def poschl_teller(r):
    return -6.0 / np.cosh(r) ** 2  # V0 = 6, a = 1 with ħ = m = 1: s(s + 1) = 12, s = 3


# Pöschl & Teller, Z. Phys. 83, 143 (1933); Flügge, Practical Quantum Mechanics, Problem 39:
# E_n = −(ħ²/2ma²)(s − n)², n < s: −4.5 (n = 0, even), −2 (n = 1, odd), −0.5 (n = 2, even).
@pytest.mark.parametrize(("l", "level", "exact"), [(0, 0, -4.5), (1, 0, -2.0), (0, 1, -0.5)])
def test_shooting_finds_poschl_teller_levels_in_both_parities(l, level, exact):
    got = shooting_level(poschl_teller, l, C, level, 30.0, dimension=1)
    assert got == pytest.approx(exact, rel=RTOL_SHOOTING)


def test_poschl_teller_levels_on_the_line_after_richardson():
    res = line_richardson_levels(poschl_teller, C, -25.0, 25.0, 3)  # h ≤ 0.05: 2e-6 of 1/κ²
    np.testing.assert_allclose(res.energies, [-4.5, -2.0, -0.5], rtol=RTOL_BOX)


def test_shooting_refuses_a_level_the_channel_does_not_bind():
    # Pöschl–Teller with s = 3 binds two even levels only (n = 0, 2 above); the odd ones
    # are n = 1 alone.
    with pytest.raises(ValueError, match="level 2 is not bound"):
        shooting_level(poschl_teller, 0, C, 2, 30.0, dimension=1)
    with pytest.raises(ValueError, match="level 1 is not bound"):
        shooting_level(poschl_teller, 1, C, 1, 30.0, dimension=1)


# ------------------------------------------------------------------------------ the contract
@pytest.mark.parametrize(
    ("call", "needle"),
    [
        (lambda: radial_fd_levels(oscillator, -1, 3, C, 10.0, 100, 2), "l must be"),
        (lambda: radial_fd_levels(oscillator, 2, 1, C, 10.0, 100, 2), "l must be 0"),
        (lambda: radial_fd_levels(oscillator, 0, 0, C, 10.0, 100, 2), "dimension must be"),
        (lambda: radial_fd_levels(oscillator, 0, 3, 0.0, 10.0, 100, 2), "hbar2_2m must be"),
        (lambda: radial_fd_levels(oscillator, 0, 3, C, -1.0, 100, 2), "r_max must be"),
        (lambda: radial_fd_levels(oscillator, 0, 3, C, 10.0, 2, 2), "n_grid must be"),
        (lambda: radial_fd_levels(oscillator, 0, 3, C, 10.0, 100, 0), "levels must be"),
        (lambda: radial_fd_levels(oscillator, 0, 3, C, 10.0, 10, 20), "levels must be at most"),
        (lambda: line_fd_levels(oscillator, C, 1.0, -1.0, 100, 2), "x_max must be"),
        (lambda: richardson_levels(oscillator, 0, 3, C, 10.0, 2, grids=(100,)), "grids must"),
        (
            lambda: radial_fd_levels(lambda r: np.log(r - 1.0), 0, 3, C, 10.0, 100, 2),
            "V must be finite",
        ),
    ],
)
def test_bad_arguments_raise_value_errors_naming_the_parameter(call, needle):
    with pytest.raises(ValueError, match=needle), np.errstate(all="ignore"):
        call()


def test_reference_solvers_do_not_import_anharmony():
    # Independence: the module may use numpy and scipy only.
    tree = ast.parse(pathlib.Path(__file__).with_name("refsolvers.py").read_text())
    modules = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            modules.update(a.name.split(".")[0] for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            modules.add((node.module or "").split(".")[0])
    assert modules <= {"__future__", "math", "collections", "dataclasses", "numpy", "scipy"}
