"""Mode constants of traps with two equal frequencies (anharmony.mode_shifts, degenerate pairs).

References:

- symmetry: x and y of a well symmetric about z are equivalent, so χ_xx = χ_yy exactly;
- first-order perturbation theory of ½Σ ω_i² x_i² + λ r⁴ with ω_x = ω_y (oscillator units),
  computed here with sympy: the r⁴ matrix within each degenerate manifold (v = n_x + n_y, n_z)
  from the exact ladder matrices x = b (a + a†)/√2, its eigenvalues and their multiplicities
  (ℓ = ±2 is doubly degenerate, ℓ = 0 single at v = 2). The constants are those of Herzberg's
  form for a degenerate vibration, E = … + x_tt (v + 1)² + g_tt ℓ² (Infrared and Raman Spectra
  of Polyatomic Molecules, ch. II; quoted from memory): g_tt = [E(2, ±2) − E(2, 0)]/4 and
  x_tt = [E(2, 0) − 2E(1) + E(0)]/2 + g_tt; for the isotropic 2D r⁴ they are 3λ/2 and −λ/2
  (⟨r⁴⟩ = [3(v + 1)² − ℓ² + 1]/2, which the sympy matrices reproduce);
- the focused beam: levels of an independent axial finite-difference solver (cell-centred ρ
  grid, Richardson-extrapolated over 4 grids, spread ≤ 1e-5 h·kHz; review notes), quoted.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import sympy as sp

import anharmony as ah
from anharmony.errors import AnharmonyWarning, InputError

# χ(λ)/λ = A + Bλ: 2χ(λ)/λ − χ(2λ)/(2λ) removes B and leaves O(λ²); at λ = 1e-4 that is ~1e-7
# of A, and the levels (converged to ~1e-13) add ~1e-9/λ² … well below this
RTOL_FIRST_ORDER = 1e-4


def _ladder_x(n, b):
    """x = b (a + a†)/√2 on n Hermite states, exact (sympy)."""
    m = sp.zeros(n, n)
    for k in range(1, n):
        m[k - 1, k] = m[k, k - 1] = sp.sqrt(k) / sp.sqrt(2) * b
    return m


def _first_order(b, manifold):
    """Eigenvalues (with multiplicities) of r⁴ = (Σ x_i²)² on the states ``manifold``."""
    size = max(max(s) for s in manifold) + 5  # x⁴ reaches 4 states up: exact below this
    x2 = [_ladder_x(size, bi) ** 2 for bi in b]
    x4 = [m**2 for m in x2]
    d = len(b)

    def element(s, t):
        total = 0
        for i in range(d):
            for j in range(d):
                ops = [sp.eye(size)] * d
                if i == j:
                    ops[i] = x4[i]
                else:
                    ops[i], ops[j] = x2[i], x2[j]
                term = 1
                for k in range(d):
                    term *= ops[k][s[k], t[k]]
                total += term
        return total

    mat = sp.Matrix([[element(s, t) for t in manifold] for s in manifold])
    return mat.eigenvals()


def _herzberg_constants(b, z=None):
    """(x_tt, g_tt, χ_zz, χ_tz) per unit λ at first order, from the sympy matrices."""
    def manifold(v, n_z=0):
        return [(nx, v - nx, *([n_z] if z is not None else [])) for nx in range(v + 1)]

    bb = list(b) + ([z] if z is not None else [])
    e0 = next(iter(_first_order(bb, manifold(0))))
    e1 = list(_first_order(bb, manifold(1)))
    assert len(e1) == 1  # ℓ = ±1, one doubly degenerate value
    e1 = e1[0]
    two = _first_order(bb, manifold(2))
    e22 = next(v for v, mult in two.items() if mult == 2)  # ℓ = ±2
    e20 = next(v for v, mult in two.items() if mult == 1)  # ℓ = 0
    g = (e22 - e20) / 4
    x = (e20 - 2 * e1 + e0) / 2 + g
    if z is None:
        return float(x), float(g), None, None
    ez1 = next(iter(_first_order(bb, [(0, 0, 1)])))
    ez2 = next(iter(_first_order(bb, [(0, 0, 2)])))
    e11 = list(_first_order(bb, manifold(1, 1)))
    assert len(e11) == 1
    chi_zz = (ez2 - 2 * ez1 + e0) / 2
    chi_tz = e11[0] - e1 - ez1 + e0
    return float(x), float(g), float(chi_zz), float(chi_tz)


def _solve(freqs, lam, levels):
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": list(freqs)}},
                               {"power": {"exponent": 4, "strength": lam}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        return ah.solve_geometry(well, len(freqs), geometry="cartesian", shells=10,
                                 levels=levels, lengths=list(1 / np.sqrt(freqs)))


def test_isotropic_2d_quartic_gives_herzberg_constants_of_first_order_theory():
    lam = 1e-4
    x, g, _, _ = _herzberg_constants([1, 1])
    assert (x, g) == pytest.approx((1.5, -0.5), rel=1e-14)  # ⟨r⁴⟩ = [3(v+1)² − ℓ² + 1]/2
    one, two = (ah.mode_shifts(_solve([1.0, 1.0], s, 6)) for s in (lam, 2 * lam))
    assert one.degenerate == ((0, 1),)
    assert one.chi[0, 0] == one.chi[1, 1]  # one mode: equal by construction, not by luck
    assert np.isnan(one.chi[0, 1])  # no cross term between the components of one mode
    slope = 2 * one.chi[0, 0] / lam - two.chi[0, 0] / (2 * lam)
    slope_g = 2 * one.g[0] / lam - two.g[0] / (2 * lam)
    assert slope == pytest.approx(x, rel=RTOL_FIRST_ORDER)
    assert slope_g == pytest.approx(g, rel=RTOL_FIRST_ORDER)
    assert one.fundamentals[0] == one.fundamentals[1]


def test_axially_symmetric_3d_quartic_has_equal_chi_and_first_order_cross_terms():
    lam, w = 1e-4, np.array([1.0, 1.0, 1.7])
    b = 1 / np.sqrt(w)
    x, g, chi_zz, chi_tz = _herzberg_constants([sp.Integer(1), sp.Integer(1)],
                                               z=1 / sp.sqrt(sp.Rational(17, 10)))
    one, two = (ah.mode_shifts(_solve(w, s, 14)) for s in (lam, 2 * lam))
    assert one.degenerate == ((0, 1),)
    assert one.chi[0, 0] == one.chi[1, 1] and one.chi[0, 2] == one.chi[1, 2]

    def slope(a, c):
        return 2 * a / lam - c / (2 * lam)

    assert slope(one.chi[0, 0], two.chi[0, 0]) == pytest.approx(x, rel=RTOL_FIRST_ORDER)
    assert slope(one.g[0], two.g[0]) == pytest.approx(g, rel=RTOL_FIRST_ORDER)
    assert slope(one.chi[2, 2], two.chi[2, 2]) == pytest.approx(chi_zz, rel=RTOL_FIRST_ORDER)
    assert slope(one.chi[0, 2], two.chi[0, 2]) == pytest.approx(chi_tz, rel=RTOL_FIRST_ORDER)
    # the closed forms the sympy values carry: χ_zz = 3b_z⁴/2, χ_tz = 2b²b_z², g = −b⁴/2
    assert (chi_zz, chi_tz, g) == pytest.approx((1.5 * b[2] ** 4, 2 * b[2] ** 2, -0.5))


def test_focused_beam_gives_one_chi_for_x_and_y_and_honest_uncertainties():
    # the reviewer's trap: 40 u, U₀ = 200 h·kHz, w₀ = 1 µm, λ = 1.064 µm, no gravity
    well = ah.Well.from_terms([{"focused_beam": {"depth": 200.0, "waist": 1.0,
                                                 "wavelength": 1.064}}], units="trap", mass=40.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        spec = ah.solve_geometry(well, 3, geometry="cartesian", shells=10, truncation="energy",
                                 units="trap", mass=40.0, levels=45)
    m = ah.mode_shifts(spec)
    assert m.degenerate == ((0, 1),)
    assert m.chi[0, 0] == m.chi[1, 1]  # was −0.132 and −0.260 from tied labels
    # finite-difference levels (h·kHz): ground, Λ = ±1, Λ = 0 with n_ρ = 1, Λ = ±2
    e0, e1, e20, e22 = -184.40459, -170.76057, -157.63623, -157.38150
    g = (e22 - e20) / 4
    x = (e20 - 2 * e1 + e0) / 2 + g
    fd_error = 2e-5  # the reference levels' spread, carried through the formulas
    assert abs(m.g[0] - g) <= m.uncertainty_g[0] + fd_error
    assert abs(m.chi[0, 0] - x) <= m.uncertainty_chi[0, 0] + fd_error


def test_triply_degenerate_modes_are_refused_by_name():
    spec = _solve([1.0, 1.0, 1.0], 1e-3, 10)
    with pytest.raises(InputError, match="x, y, z are degenerate"):
        ah.mode_shifts(spec)


def test_nearly_degenerate_modes_whose_labels_tie_are_refused():
    # ω differ by 1e-6, far below the r⁴ coupling 1e-3: the two-quantum states mix 50/50
    spec = _solve([1.0, 1.0 + 1e-6], 1e-3, 6)
    with pytest.raises(InputError, match="near ties"):
        ah.mode_shifts(spec)


def test_labels_mixed_above_ten_percent_are_flagged():
    # a near 1:2 Fermi resonance (ω = 1, 2.02, 0.08 x²y): dominant weights 0.76–0.86 (common
    # practice, no source: the weight of the dominant basis state is the label's share)
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [1.0, 2.02]}},
                               {"expression": {"formula": "0.08*x**2*y + 0.01*(x**2+y**2)**2"}}])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ah.ConvergenceWarning)
        spec = ah.solve_geometry(well, 2, geometry="cartesian", shells=24, levels=8)
    with pytest.warns(AnharmonyWarning, match="mixing above 10 %"):
        m = ah.mode_shifts(spec)
    weights = dict(m.mixed)
    assert set(weights) >= {"(0,1)", "(2,0)"}
    assert all(0.6 <= w < 0.9 for w in weights.values())
    # the weights are the squared overlaps with the labelled basis state
    for lab, w in weights.items():
        k = spec.labels.index(lab)
        q = tuple(int(v) for v in lab.strip("()").split(","))
        row = int(np.flatnonzero(np.all(spec.states == q, axis=1))[0])
        assert w == pytest.approx(spec.vectors[row, k] ** 2, rel=1e-12)


def test_levels_without_error_bars_are_not_taken_for_degenerate():
    # error_estimate=False leaves the bars NaN: they must not widen the degeneracy test
    w = np.array([1.0, 1.3, 1.7])
    well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": list(w)}},
                               {"power": {"exponent": 4, "strength": 1e-4}}])
    spec = ah.solve_geometry(well, 3, geometry="cartesian", shells=10, levels=12,
                             lengths=list(1 / np.sqrt(w)), error_estimate=False)
    m = ah.mode_shifts(spec)
    assert m.degenerate == ()
    assert np.all(np.isfinite(m.chi))  # every pair has its cross term
