"""The deformed Woods–Saxon term in the axial geometry."""

from __future__ import annotations

import functools

import numpy as np
import pytest

import anharmony as ah
from anharmony.geometry import solve_geometry

# A = 16, V0 = 50 MeV, r0 = 1.27 fm, a = 0.67 fm: invented, typical of light nuclei
PARAMS = {"depth": 50.0, "r0": 1.27, "mass_number": 16, "diffuseness": 0.67}
SHELLS, B = 10, 1.8  # major shells N ≤ 10 of an oscillator with b = 1.8 fm


def _axial(beta2, omega, levels=3):
    well = ah.Well.from_terms([{"deformed_woods_saxon": {**PARAMS, "beta2": beta2}}],
                              units="nuclear")
    return solve_geometry(well, 3, geometry="axial", omega=omega, shells=SHELLS,
                          lengths=[B, B], units="nuclear", levels=levels,
                          error_estimate=False).energies


def test_undeformed_well_is_the_spherical_woods_saxon():
    # β₂ = β₄ = 0: V is the spherical Woods–Saxon, so the Λ = 0 block holds the s and p (m = 0)
    # levels of the central solver in the same oscillator space (shells 2n + l ≤ N_max span the
    # same space in every basis: Moshinsky, The Harmonic Oscillator in Modern Physics, 1969)
    well = ah.Well.from_terms([{"woods_saxon": PARAMS}], units="nuclear")
    s = ah.solve(well, 3, 0, size=SHELLS // 2 + 1, length=B, units="nuclear", levels=2,
                 tolerance=1.0).energies  # shells N = 2n ≤ 10: 6 s states (not converged:
    p = ah.solve(well, 3, 1, size=(SHELLS - 1) // 2 + 1, length=B, units="nuclear", levels=1,
                 tolerance=1.0).energies  # the same truncated space is the point here)
    got = _axial(0.0, 0, levels=3)
    expected = np.sort([*s, *p])
    # 1e-6 MeV: the two quadratures (composite panels in (ρ, z) vs in r) of the same matrix
    np.testing.assert_allclose(got, expected[:3], atol=1e-6)


def test_small_deformation_splits_the_p_shell_minus_two_to_one():
    # First-order perturbation theory in β₂: δE_m ∝ ⟨l m|Y₂₀|l m⟩ ∝ 3m² − l(l + 1)
    # (Wigner–Eckart; Bohr & Mottelson vol. II, deformed-oscillator splitting), so for the 1p
    # level δE(m = 0) : δE(|m| = 1) = −2 : 1, and a prolate well (β₂ > 0) lowers m = 0.
    def p_level(beta2, omega):
        e = _axial(beta2, omega, levels=2)
        return e[1] if omega == 0 else e[0]  # Λ = 0: 1s then 1p(m = 0); |Λ| = 1: 1p(m = ±1)

    beta2 = 0.01
    d0 = p_level(beta2, 0) - p_level(0.0, 0)
    d1 = p_level(beta2, 1) - p_level(0.0, 1)
    assert d0 < 0 < d1  # prolate: the m = 0 orbital (along the long axis) goes down
    # second-order terms are O(β₂) relative to the first: 5 % at β₂ = 0.01 is generous
    assert d0 / d1 == pytest.approx(-2.0, rel=0.05)


def test_deformed_well_is_refused_in_central_channels():
    well = ah.Well.from_terms([{"deformed_woods_saxon": {**PARAMS, "beta2": 0.2}}],
                              units="nuclear")
    with pytest.raises(ah.InputError, match="not central"):
        ah.solve(well, 3, 0, units="nuclear")


# --- the shape bound: R(θ) = R₀ (1 + β₂ Y₂₀ + β₄ Y₄₀) must be positive in every direction ----
# Reference: sympy's spherical harmonics Y₂₀, Y₄₀ (sympy.Ynm, expanded in cos θ); with
# t = cos²θ ∈ [0, 1] the surface is a quadratic in t, minimised exactly by sympy below.


@functools.cache
def _sympy_shape():
    import sympy as sp

    theta, phi, t = sp.symbols("theta phi t", real=True)
    y2 = sp.simplify(sp.Ynm(2, 0, theta, phi).expand(func=True))
    y4 = sp.simplify(sp.Ynm(4, 0, theta, phi).expand(func=True))

    def in_t(y):  # an even polynomial in cos θ, rewritten in t = cos²θ
        c = sp.Symbol("c")
        poly = sp.expand(y.subs(sp.cos(theta), c).subs(sp.sin(theta) ** 2, 1 - c**2))
        return sp.expand(poly.subs(c, sp.sqrt(t)))

    return t, in_t(y2), in_t(y4)


def _sympy_minimum(beta2, beta4):
    import sympy as sp

    t, y2, y4 = _sympy_shape()
    s = 1 + sp.nsimplify(beta2) * y2 + sp.nsimplify(beta4) * y4
    points = [sp.Integer(0), sp.Integer(1)] + [r for r in sp.solve(sp.diff(s, t), t)
                                               if r.is_real and 0 < r < 1]
    return float(min(s.subs(t, p) for p in points))


@pytest.mark.parametrize(("beta2", "beta4"), [(-1.7, 0.0), (0.3, -1.5), (0.3, 0.1),
                                              (-0.4, 0.6), (0.0, 2.0)])
def test_smallest_radius_matches_the_sympy_spherical_harmonics(beta2, beta4):
    from anharmony.terms.deformed_woods_saxon import surface_minimum

    # 1e-12: the same quadratic evaluated in floating point
    assert surface_minimum(beta2, beta4)[0] == pytest.approx(_sympy_minimum(beta2, beta4),
                                                             rel=1e-12, abs=1e-14)


def test_allowed_ranges_are_the_closed_forms_at_the_other_beta_zero():
    import sympy as sp

    from anharmony.terms.deformed_woods_saxon import allowed_range

    t, y2, y4 = _sympy_shape()
    # β₄ = 0: 1 + β₂ Y₂₀ > 0 from Y₂₀'s extremes, at θ = 0 (t = 1) and θ = 90° (t = 0)
    lo2, hi2 = -1 / y2.subs(t, 1), -1 / y2.subs(t, 0)
    # β₂ = 0: Y₄₀'s extremes, at t = 1 and at its vertex t = 3/7
    lo4, hi4 = -1 / y4.subs(t, 1), -1 / y4.subs(t, sp.Rational(3, 7))
    # 1e-9: the bounds are taken on 20001 values of t and polished by a bounded search
    assert allowed_range("beta2", 0.0) == pytest.approx((float(lo2), float(hi2)), rel=1e-9)
    assert allowed_range("beta4", 0.0) == pytest.approx((float(lo4), float(hi4)), rel=1e-9)


@pytest.mark.parametrize("kind", ["deformed_woods_saxon", "deformed_spin_orbit"])
@pytest.mark.parametrize(("beta2", "beta4", "field", "span"),
                         [(-1.7, 0.0, "beta2", "-1.585 < beta2 < 3.171"),
                          (0.3, -1.5, "beta4", "-1.405 < beta4 < 2.826")])
def test_shapes_with_a_negative_radius_are_refused(kind, beta2, beta4, field, span):
    from anharmony.errors import TermError

    shape = {k: v for k, v in PARAMS.items() if k != "depth"}
    strength = {"depth": 50.0} if kind == "deformed_woods_saxon" else {"strength": 20.0}
    spec = {**shape, **strength, "beta2": beta2, "beta4": beta4}
    with pytest.raises(TermError, match="not positive in every direction") as err:
        ah.Well.from_terms([{kind: spec}], units="nuclear")
    assert err.value.field == field
    assert span in str(err.value)  # the allowed range at the other β fixed


def test_shape_bound_holds_for_terms_built_directly():
    import dataclasses

    from anharmony.errors import TermError
    from anharmony.terms.deformed_woods_saxon import DeformedWoodsSaxon

    good = DeformedWoodsSaxon(depth=50.0, radius=3.2, diffuseness=0.67, beta2=0.3)
    with pytest.raises(TermError, match="beta2"):
        dataclasses.replace(good, beta2=-1.7)


def test_case_check_refuses_a_negative_radius_at_the_fields_line(tmp_path):
    from anharmony.cases import CaseError, load_cases

    text = ("schema: 1\ntitle: too oblate\nunits: nuclear\n"
            "space: {dimension: 3, geometry: axial, shells: 4}\n"
            "well:\n"
            "  - deformed_woods_saxon: {depth: 51.0, r0: 1.27, mass_number: 24,\n"
            "                           diffuseness: 0.67, beta2: -1.7}\n"
            "levels: {count: 1}\noutput: out.nc\n")
    path = tmp_path / "oblate.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(CaseError) as err:
        load_cases(path)
    (problem,) = [str(p) for p in err.value.problems]
    assert problem.startswith(f"{path}:7:")  # the line of beta2 (DESIGN §7: file:line:col)
    assert "well[0].beta2" in problem and "-1.585 < beta2 < 3.171" in problem
