"""Fitting a well to measured levels (anharmony.fit)."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

import anharmony as ah
from anharmony.fit import FitWarning, fit

# p²/2 + x²/2·k + g x⁴ in oscillator units (ħ = m = 1): polynomial, so the matrices are exact
# and the synthetic data carry no basis error at N = 40 for the lowest levels.
QUARTIC = [{"harmonic": {"stiffness": 1.3}}, {"power": {"exponent": 4, "strength": 0.07}}]
PATHS = ["well[0].stiffness", "well[1].strength"]


def _levels(terms, n, size=40, dimension=1, l=None, length=1.0):
    return ah.solve(ah.Well.from_terms(terms), dimension, l, size=size, length=length,
                    levels=n).energies


def _data(energies, sigma):
    return [{"level": k, "value": float(e), "uncertainty": sigma} for k, e in enumerate(energies)]


def test_noise_free_synthetic_data_recover_the_parameters():
    # Round trip: data computed at known parameters, fit started elsewhere (the check).
    true = _levels(QUARTIC, 6)
    start = [{"harmonic": {"stiffness": 1.0}}, {"power": {"exponent": 4, "strength": 0.02}}]
    res = fit(start, 1, None, parameters=PATHS, data=_data(true, 1e-6), size=40, length=1.0)
    # 1e-8 relative: the fit converges to machine-level residuals (xtol 1e-12) on exact data
    assert res.values["well[0].stiffness"] == pytest.approx(1.3, rel=1e-8)
    assert res.values["well[1].strength"] == pytest.approx(0.07, rel=1e-8)
    assert res.chi2 < 1e-6 and res.dof == 4


def test_hellmann_feynman_jacobian_matches_finite_differences():
    # Hellmann–Feynman (Feynman, Phys. Rev. 56, 340 (1939)) against central differences of the
    # eigenvalues themselves in the same fixed basis.
    from anharmony.fit import _measurements, _Model

    specs = [{k: dict(v)} for t in QUARTIC for k, v in t.items()]
    data = _measurements(_data(np.zeros(5), 1.0), None, None)
    model = _Model(specs, PATHS, data, 1, "oscillator", None, 40, 1.0)
    x = np.array([1.3, 0.07])
    _, jac, _ = model.evaluate(x)
    for p in range(2):
        h = 1e-5 * x[p]
        xp, xm = x.copy(), x.copy()
        xp[p] += h
        xm[p] -= h
        fd = (model.predict(model.spectra(xp)[1]) - model.predict(model.spectra(xm)[1])) / (2 * h)
        # 1e-7: central-difference error ~h² ≈ 1e-12 plus quadrature of ∂V/∂p (~1e-10),
        # amplified by 1/h for rounding of the eigenvalues (1e-15/1e-7)
        np.testing.assert_allclose(jac[:, p], fd, rtol=1e-7, atol=1e-9)


def test_morse_fit_agrees_with_the_closed_form_inversion():
    # Morse, Phys. Rev. 34, 57 (1929): G(v) = ωe(v+½) − ωexe(v+½)², ωe = α·sqrt(2D/m) (ħ = 1),
    # ωexe = ωe²/(4D). Closed-form inversion: D = ωe²/(4ωexe), α = ωe·sqrt(m/(2D)).
    depth, width = 30.0, 0.5
    we = width * math.sqrt(2 * depth)
    wexe = we**2 / (4 * depth)
    g = [we * (v + 0.5) - wexe * (v + 0.5) ** 2 for v in range(5)]
    d_closed = we**2 / (4 * wexe)
    a_closed = we * math.sqrt(1 / (2 * d_closed))
    data = [{"quantity": "spacing", "levels": [0, v], "value": g[v] - g[0],
             "uncertainty": 1e-4} for v in range(1, 5)]
    res = fit([{"morse": {"depth": 25.0, "width": 0.45}}], 1, None,
              parameters=["well[0].depth", "well[0].width"], data=data, size=100)
    # 3 σ of the fitted parameters: the data carry σ = 1e-4 and the basis error is checked
    # below to be far smaller
    assert abs(res.values["well[0].depth"] - d_closed) < 3 * res.uncertainties["well[0].depth"]
    assert abs(res.values["well[0].width"] - a_closed) < 3 * res.uncertainties["well[0].width"]
    assert res.basis_error.max() < 1e-5
    assert res.chi2 < 0.1  # exact data: residuals far inside σ


@pytest.mark.slow
def test_one_sigma_intervals_cover_the_truth_about_68_percent_of_the_time():
    # Coverage of Gaussian 1σ intervals: 68.27 % (normal distribution); with 200 trials the
    # binomial standard deviation is sqrt(0.68·0.32/200) = 3.3 %, so accept 58 %–78 % (3σ).
    rng = np.random.default_rng(20261203)
    true = _levels(QUARTIC, 6, size=40)
    sigma = 1e-3
    hits = np.zeros(2)
    trials = 200
    for _ in range(trials):
        noisy = true + sigma * rng.standard_normal(true.size)
        res = fit(QUARTIC, 1, None, parameters=PATHS, data=_data(noisy, sigma), size=40,
                  length=1.0)
        for k, (path, value) in enumerate((("well[0].stiffness", 1.3),
                                           ("well[1].strength", 0.07))):
            hits[k] += abs(res.values[path] - value) < res.uncertainties[path]
    coverage = hits / trials
    assert np.all((coverage > 0.58) & (coverage < 0.78)), coverage


def test_undetermined_parameter_combination_is_named():
    # Two harmonic terms: only the sum of stiffnesses enters the levels (common practice, no
    # source: k₁x²/2 + k₂x²/2 = (k₁ + k₂)x²/2).
    terms = [{"harmonic": {"stiffness": 0.5}}, {"harmonic": {"stiffness": 0.7}}]
    true = _levels([{"harmonic": {"stiffness": 1.2}}], 3)
    with pytest.warns(FitWarning, match="cannot fix"):
        res = fit(terms, 1, None, parameters=["well[0].stiffness", "well[1].stiffness"],
                  data=_data(true, 1e-6), size=40, length=1.0)
    assert res.undetermined and "well[0].stiffness" in res.undetermined[0]
    assert math.isinf(res.uncertainties["well[0].stiffness"])


@pytest.mark.parametrize(("kwargs", "message"), [
    ({"parameters": ["well[3].depth"]}, r"well\[3\]\.depth.*2 term"),
    ({"parameters": ["well[1].strenght"]}, "did you mean 'strength'"),
    ({"parameters": ["depth"]}, "not a parameter path"),
    ({"data": [{"level": 0, "value": 1.0, "uncertainty": 0.0}]}, r"data\[0\]\.uncertainty"),
    ({"data": [{"level": 0, "value": 1.0, "uncertainty": -1.0}]}, r"data\[0\]\.uncertainty"),
    ({"data": [{"level": 0, "value": 1.0, "uncertainty": 0.1}]}, "2 parameters cannot be fixed"),
    ({"data": [{"level": 99, "value": 1.0, "uncertainty": 0.1},
               {"level": 0, "value": 1.0, "uncertainty": 0.1}]}, r"data\[0\]: level 99"),
    ({"data": [{"levle": 0, "value": 1.0, "uncertainty": 0.1}]}, "did you mean 'level'"),
])
def test_bad_fit_input_names_the_field(kwargs, message):
    args = {"parameters": PATHS,
            "data": _data(_levels(QUARTIC, 3), 1e-3)} | kwargs
    with pytest.raises(ah.InputError,
                       match=message):
        fit(QUARTIC, 1, None, size=40, length=1.0, **args)


def test_radial_channels_from_the_data():
    # 3D isotropic oscillator: E = ħω(2n + l + 3/2) (any QM textbook, e.g. Sakurai); fit ħω
    # from levels of two channels named in the data.
    hw = 1.7
    data = [{"level": 0, "l": 0, "value": 1.5 * hw, "uncertainty": 1e-6},
            {"level": 0, "l": 1, "value": 2.5 * hw, "uncertainty": 1e-6},
            {"level": 1, "l": 0, "value": 3.5 * hw, "uncertainty": 1e-6}]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = fit([{"harmonic": {"frequency": 1.0}}], 3, 0, parameters=["well[0].frequency"],
                  data=data, size=20)
    # 1e-9: exact data, exact matrices; limited by the least-squares tolerances
    assert res.values["well[0].frequency"] == pytest.approx(hw, rel=1e-9)


def test_gaussian_trap_fit_agrees_with_the_harmonic_limit_inversion():
    # V = −U₀ exp(−2x²/w²) ≈ −U₀ + 2U₀x²/w² − 2U₀x⁴/w⁴ (ħ = m = 1): ω = sqrt(4U₀/w²) (Grimm,
    # Weidemüller & Ovchinnikov, Adv. At. Mol. Opt. Phys. 42, 95 (2000)); first-order shift of
    # the quartic (⟨x⁴⟩_n = ¾(2n² + 2n + 1)/ω², textbook) gives the second difference
    # (E₂ − E₁) − (E₁ − E₀) = −(3/8)ω²/U₀. Inverting: ω ≈ 2(E₁ − E₀) − (E₂ − E₁),
    # U₀ = (3/8)ω²/|second difference|, w = 2 sqrt(U₀)/ω. Neglected terms (x⁶ at first order,
    # x⁴ at second) are O(ω/U₀) relative.
    depth, waist = 3000.0, 1.0
    e = _levels([{"gaussian": {"depth": depth, "waist": waist}}], 3, size=60, length="auto")
    d1, d2 = e[1] - e[0], e[2] - e[1]
    omega = 2 * d1 - d2
    u0 = 3 / 8 * omega**2 / (d1 - d2)
    w = 2 * math.sqrt(u0) / omega
    data = [{"quantity": "spacing", "levels": [0, 1], "value": d1, "uncertainty": 1e-6},
            {"quantity": "spacing", "levels": [1, 2], "value": d2, "uncertainty": 1e-6}]
    res = fit([{"gaussian": {"depth": u0, "waist": w}}], 1, None,
              parameters=["well[0].depth", "well[0].waist"], data=data, size=60)
    ratio = omega / depth  # size of the neglected terms, relative
    assert res.values["well[0].depth"] == pytest.approx(depth, rel=1e-6)  # exact data
    assert res.values["well[0].waist"] == pytest.approx(waist, rel=1e-6)
    # the closed form is good to a few times ω/U₀ (≈ 0.036 here): allow 3·ω/U₀
    assert u0 == pytest.approx(depth, rel=3 * ratio)
    assert w == pytest.approx(waist, rel=3 * ratio)


def test_rms_radius_data_fix_the_oscillator_frequency():
    # 3D oscillator: ⟨r²⟩ = b²(2n + l + 3/2), b² = ħ/(mω) (Messiah, Quantum Mechanics, App. B;
    # ħ = m = 1 here). A level and an rms radius of another channel fix ħω = 1.7.
    hw = 1.7
    data = [{"level": 0, "l": 0, "value": 1.5 * hw, "uncertainty": 1e-6},
            {"quantity": "rms_radius", "level": 1, "l": 1,
             "value": math.sqrt((2 + 1 + 1.5) / hw), "uncertainty": 1e-6}]
    res = fit([{"harmonic": {"frequency": 1.0}}], 3, 0, parameters=["well[0].frequency"],
              data=data, size=20)
    # 1e-9: exact data, exact r² operator; limited by the least-squares tolerances
    assert res.values["well[0].frequency"] == pytest.approx(hw, rel=1e-9)
    assert res.predictions[1] == pytest.approx(math.sqrt(4.5 / hw), rel=1e-9)


def test_rms_radius_jacobian_matches_finite_differences_of_the_radius():
    # d sqrt⟨r²⟩/dω = −½ sqrt(4.5) ω^{-3/2} for level n = 1, l = 1 (from ⟨r²⟩ = 4.5/ω above)
    from anharmony.fit import _measurements, _Model

    data = _measurements([{"quantity": "rms_radius", "level": 1, "l": 1, "value": 1.0,
                           "uncertainty": 1.0}], 0, None)
    model = _Model([{"harmonic": {"frequency": 1.0}}], ["well[0].frequency"], data, 3,
                   "oscillator", None, 20, 1.0)
    _, jac, _ = model.evaluate(np.array([1.7]))
    # 1e-7: central difference with step 1e-5 relative (error ~1e-10) of an exact operator
    assert jac[0, 0] == pytest.approx(-0.5 * math.sqrt(4.5) * 1.7 ** -1.5, rel=1e-7)


def test_rms_radius_without_a_centre_is_refused():
    with pytest.raises(ah.InputError, match="rms radius needs a radial or 1D parity channel"):
        fit(QUARTIC, 1, None, parameters=PATHS, size=40, length=1.0,
            data=[{"quantity": "rms_radius", "level": 0, "value": 1.0, "uncertainty": 0.1},
                  {"level": 0, "value": 1.0, "uncertainty": 0.1}])
