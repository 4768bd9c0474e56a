"""The escape barrier of an open well is its lowest mountain pass (geometry.potential).

References, each independent of anharmony:

- a 2D Gaussian −V₀ exp(−r²/a²) plus a uniform tilt F·x: V is symmetric about the line of F,
  so its pass lies on that line, at the maximum of −V₀ exp(−s²/a²) − |F| s (s > 0 along −F),
  found here by ``scipy.optimize.brentq`` on the derivative (common practice, no source);
- a rotated cubic well a u² − b u³ + c w² ((u, w) the axes turned by θ): its saddle is
  u = 2a/(3b), w = 0, V = 4a³/(27b²) in closed form (set dV/du = 0);
- a focused beam with gravity off its axis: the saddle is a root of the analytic gradient
  (``scipy.optimize.root``), with one negative eigenvalue of the analytic Hessian;
- the vertical beam: the pass lies on the axis, the maximum of V(0, 0, z) below the focus
  (``scipy.optimize.minimize_scalar``).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import constants, optimize

import anharmony as ah
from anharmony.errors import AnharmonyWarning
from anharmony.geometry.saddle import escape_barrier, escape_saddle

# the saddle is a root of a central-difference gradient (steps 10⁻³ of the grid step): its
# position is good to ~1e-8 of the well's length, its energy (stationary there) to rounding
RTOL_SADDLE_ENERGY = 1e-10
ATOL_SADDLE_POSITION = 1e-6  # in units of the well's length scale

V0, RANGE, FX, FY = 20.0, 1.0, 2.0, 0.83  # the reviewer's tilt, 22.5° off the x axis


def _tilted_gaussian():
    return ah.Well.from_terms([{"gaussian": {"depth": V0, "range": RANGE}},
                               {"tilt": {"force": FX, "axis": "x"}},
                               {"tilt": {"force": FY, "axis": "y"}}])


def _gaussian_pass():
    """The pass of the tilted Gaussian on the line of −F: (energy, position)."""
    f = math.hypot(FX, FY)
    slope = lambda s: 2.0 * V0 * s / RANGE**2 * math.exp(-(s / RANGE) ** 2) - f  # noqa: E731
    s = optimize.brentq(slope, RANGE / math.sqrt(2.0), 10.0 * RANGE, xtol=1e-14)
    energy = -V0 * math.exp(-(s / RANGE) ** 2) - f * s
    return energy, -s * np.array([FX, FY]) / f


def _minimum(well, dimension, hbar2_2m):
    from anharmony.geometry.frequencies import trap_frequencies_of

    return trap_frequencies_of(well, dimension, hbar2_2m).minimum


def test_tilted_gaussian_pass_is_the_saddle_on_the_line_of_the_tilt():
    well = _tilted_gaussian()
    energy, where = _gaussian_pass()
    found = escape_saddle(well, 2, _minimum(well, 2, 0.5))
    assert found.kind == "saddle"
    assert found.energy == pytest.approx(energy, rel=RTOL_SADDLE_ENERGY)  # −4.654, not −4.360
    np.testing.assert_allclose(found.position, where, atol=ATOL_SADDLE_POSITION)
    assert np.sum(found.curvatures < 0) == 1
    assert escape_barrier(well, 2, _minimum(well, 2, 0.5)) == found.energy


@pytest.mark.parametrize("angle", [22.5, 60.0])
def test_rotated_cubic_well_has_its_closed_form_saddle(angle):
    a, b, c = 1.0, 0.3, 2.0
    th = math.radians(angle)
    u = f"({math.cos(th)!r}*x + {math.sin(th)!r}*y)"
    w = f"(-{math.sin(th)!r}*x + {math.cos(th)!r}*y)"
    well = ah.Well.from_terms([{"expression": {"formula": f"{a}*{u}**2 - {b}*{u}**3 + "
                                                          f"{c}*{w}**2"}}])
    found = escape_saddle(well, 2, [0.0, 0.0])
    assert found.kind == "saddle"
    assert found.energy == pytest.approx(4 * a**3 / (27 * b**2), rel=RTOL_SADDLE_ENERGY)
    u0 = 2 * a / (3 * b)
    np.testing.assert_allclose(found.position, u0 * np.array([math.cos(th), math.sin(th)]),
                               atol=ATOL_SADDLE_POSITION)
    # the curvatures of the closed form: d²V/du² = 2a − 6b u₀ = −2a, d²V/dw² = 2c
    np.testing.assert_allclose(found.curvatures, [-2 * a, 2 * c], rtol=1e-5)  # FD Hessian


# the reviewer's 3D case: 40 u atom, 20 h·kHz focused beam (w₀ = 1 µm, λ = 1.064 µm), gravity
# m g (CODATA) turned 35° off the beam axis towards x
MASS, U0, W0, ZR = 40.0, 20.0, 1.0, math.pi / 1.064
G = MASS * constants.atomic_mass * constants.g * constants.micro / (constants.h * 1e3)  # h·kHz/µm


def _beam(angle):
    fx, fz = G * math.sin(math.radians(angle)), G * math.cos(math.radians(angle))
    terms = [{"focused_beam": {"depth": U0, "waist": W0, "rayleigh_length": ZR}},
             {"tilt": {"force": fz, "axis": "z"}}]
    if fx:
        terms.append({"tilt": {"force": fx, "axis": "x"}})
    return ah.Well.from_terms(terms, units="trap", mass=MASS), fx, fz


def _beam_gradient(p, fx, fz):
    """∇V of −U₀/s exp(−2ρ²/(w₀² s)) + f·x, s = 1 + z²/z_R² (differentiated by hand)."""
    x, y, z = p
    s = 1.0 + (z / ZR) ** 2
    e = np.exp(-2.0 * (x * x + y * y) / (W0**2 * s))
    radial = 4.0 * U0 * e / (W0**2 * s * s)  # ∂V/∂x = radial · x
    ds = 2.0 * z / ZR**2
    dz = U0 * e * ds / s**2 * (1.0 - 2.0 * (x * x + y * y) / (W0**2 * s))
    return np.array([radial * x + fx, radial * y, dz + fz])


def _beam_value(p, fx, fz):
    x, y, z = p
    s = 1.0 + (z / ZR) ** 2
    return -U0 / s * math.exp(-2.0 * (x * x + y * y) / (W0**2 * s)) + fx * x + fz * z


def test_beam_with_gravity_off_its_axis_has_its_pass_at_the_root_of_the_gradient():
    well, fx, fz = _beam(35.0)
    tf = ah.trap_frequencies(well, units="trap", mass=MASS)
    found = escape_saddle(well, 3, tf.minimum)
    assert found.kind == "saddle" and found.coordinates == "cartesian"
    ref = optimize.root(_beam_gradient, [0.0, 0.0, -6.0], args=(fx, fz), tol=1e-13)
    assert np.max(np.abs(_beam_gradient(ref.x, fx, fz))) < 1e-12  # a root of ∇V
    h = 1e-6  # Hessian by central differences of the analytic gradient
    hess = np.array([(_beam_gradient(ref.x + h * e, fx, fz)
                      - _beam_gradient(ref.x - h * e, fx, fz)) / (2 * h) for e in np.eye(3)])
    assert np.sum(np.linalg.eigvalsh(0.5 * (hess + hess.T)) < 0) == 1  # a first-order saddle
    energy = _beam_value(ref.x, fx, fz)
    assert found.energy == pytest.approx(energy, rel=RTOL_SADDLE_ENERGY)  # rays: 0.07 higher
    np.testing.assert_allclose(found.position, ref.x, atol=ATOL_SADDLE_POSITION * ZR)


def test_vertical_beam_is_searched_in_rho_z_and_passes_on_the_axis():
    well, _, fz = _beam(0.0)
    tf = ah.trap_frequencies(well, units="trap", mass=MASS)
    found = escape_saddle(well, 3, tf.minimum)
    assert found.kind == "saddle" and found.coordinates == "axial"
    on_axis = optimize.minimize_scalar(lambda z: -_beam_value((0.0, 0.0, z), 0.0, fz),
                                       bounds=(-30.0, -1.0), method="bounded",
                                       options={"xatol": 1e-12})
    assert found.energy == pytest.approx(-on_axis.fun, rel=RTOL_SADDLE_ENERGY)
    np.testing.assert_allclose(found.position, [0.0, on_axis.x], atol=1e-5)
    assert np.sum(found.curvatures < 0) == 1  # along z; the ρ curvature is positive


def test_no_pass_inside_the_search_box_is_said_and_not_invented():
    # ½r² − g x⁴ has its passes at x = ±1/(2√g) = ±1581, beyond the 10³-length box
    well = ah.Well.from_terms([{"expression": {"formula": "0.5*(x**2 + y**2) - 1e-7*x**4"}}])
    found = escape_saddle(well, 2, [0.0, 0.0])
    assert found.kind == "none" and math.isnan(found.energy)
    assert "no pass" in found.message
    with pytest.warns(AnharmonyWarning, match="no escape barrier"):
        assert math.isnan(escape_barrier(well, 2, [0.0, 0.0]))


def test_a_pass_beyond_the_first_box_is_found_by_growing_it():
    # ½r² − g x⁴ with g = 10⁻³: passes at x = ±1/(2√g) = ±15.8, V = 1/(16 g) = 62.5
    well = ah.Well.from_terms([{"expression": {"formula": "0.5*(x**2 + y**2) - 1e-3*x**4"}}])
    found = escape_saddle(well, 2, [0.0, 0.0])
    assert found.kind == "saddle"
    assert found.energy == pytest.approx(1 / (16 * 1e-3), rel=RTOL_SADDLE_ENERGY)
    assert abs(found.position[0]) == pytest.approx(1 / (2 * math.sqrt(1e-3)), rel=1e-8)


def test_quasi_bound_levels_of_the_tilted_gaussian_are_those_below_the_true_pass():
    from anharmony.geometry import by_block

    assert ah.solve_blocks is by_block.solve_blocks  # a top-level name (it was not)
    well = _tilted_gaussian()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        blocks = ah.solve_blocks(well, 2, geometry="cartesian", shells=20, levels=6)
    energy, _ = _gaussian_pass()
    assert blocks.barrier == pytest.approx(energy, rel=RTOL_SADDLE_ENERGY)
    e = blocks.energies[np.isfinite(blocks.energies)]
    # (1,1) at −4.617 and (0,2) at −4.589 lie above the pass −4.654: 4 quasi-bound, not 6
    assert np.sum(e < blocks.barrier) == np.sum(e < energy) == 4


def test_a_narrow_well_on_a_broad_one_is_resolved_at_the_minimum():
    # ranges 0.1 and 20 (well.scale = 20): the pass of the narrow well lies at 0.26 from the
    # centre, on the line of the tilt (symmetry); the grid's step there must be finer than 0.1
    f, angle = 0.5, 0.4
    well = ah.Well.from_terms([{"gaussian": {"depth": 10.0, "range": 0.1}},
                               {"gaussian": {"depth": 1.0, "range": 20.0}},
                               {"tilt": {"force": f * math.cos(angle), "axis": "x"}},
                               {"tilt": {"force": f * math.sin(angle), "axis": "y"}}])
    line = lambda s: -10 * math.exp(-s * s / 0.01) - math.exp(-s * s / 400) - f * s  # noqa: E731
    ref = optimize.minimize_scalar(lambda s: -line(s), bounds=(0.15, 0.5), method="bounded",
                                   options={"xatol": 1e-12})
    found = escape_saddle(well, 2, _minimum(well, 2, 0.5))
    assert found.kind == "saddle"
    assert found.energy == pytest.approx(-ref.fun, rel=RTOL_SADDLE_ENERGY)


def test_a_degenerate_pass_falls_back_on_the_grid_level_with_a_warning():
    # ½x² − 0.1x³ + y²(1 − x/x_s)² + 0.01y⁴: the pass at x_s = 10/3 has zero curvature across
    # (V_yy = 0 there), so it is no first-order saddle; V(x_s, 0) = x_s²/2 − x_s³/10 exactly
    xs = 10.0 / 3.0
    well = ah.Well.from_terms([{"expression": {
        "formula": f"0.5*x**2 - 0.1*x**3 + y**2*(1 - x/{xs!r})**2 + 0.01*y**4"}}])
    found = escape_saddle(well, 2, [0.0, 0.0])
    assert found.kind == "grid" and np.all(np.isnan(found.curvatures))
    assert abs(found.energy - (xs**2 / 2 - xs**3 / 10)) <= found.resolution
    with pytest.warns(AnharmonyWarning, match="could not be refined"):
        escape_barrier(well, 2, [0.0, 0.0])
