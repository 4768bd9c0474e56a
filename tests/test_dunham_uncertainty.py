"""Dunham constants carry their truncation error: on a Morse diatomic, whose constants are
known independently, |value − truth| ≤ uncertainty for every constant and several J sets, and
the uncertainty is not absurdly large.

Truth. ωe and ωexe are exact closed forms (Morse, Phys. Rev. 34, 57 (1929)): the J = 0
levels are ωe(v+½) − ωexe(v+½)² exactly, so ωeye = Y30 = 0. Pekeris's closed forms (Phys. Rev.
45, 98 (1934)) for Be, αe, De are first-order approximations, off from the Dunham Y01, −Y11,
−Y02 by more than the fits' errors; for those the truth is computed here, independently of
anharmony, following the reviewer's finite-difference approach (B_v = ∂E/∂x,
D_v = −½ ∂²E/∂x² at x = J(J+1) = 0, then polynomials in v + ½): the radial equation on a
sinc-DVR grid (Colbert & Miller, J. Chem. Phys. 96, 1982 (1992)), B_v as ⟨v|ħ²/2μr²|v⟩
(Hellmann–Feynman) and D_v as the second-order sum over the grid's whole spectrum, then
interpolation in v + ½ over 9 … 13 levels; the spread of those interpolants is the truth's
own accuracy (checked against Pekeris to the order he gives).
"""

import math

import numpy as np
import pytest
from scipy import linalg

import anharmony as ah
from anharmony.errors import ConvergenceWarning
from anharmony.molecular import constants_of, dunham_fit
from anharmony.units import get_units

# an invented light hydride (docs/observables.md): D = 38000 cm-1, α = 2.1 Å^-1, r_e = 0.93 Å
D, ALPHA, RE, MU = 38000.0, 2.1, 0.93, 0.96
HB = get_units("molecular").hbar2_over_2m(MU)  # ħ²/2μ in cm-1 Å²
WE = 2.0 * math.sqrt(D * ALPHA**2 * HB)  # Morse 1929
WEXE = WE**2 / (4.0 * D)  # Morse 1929
PEKERIS_BE = HB / RE**2  # Pekeris 1934 (rigid rotor)
PEKERIS_AE = 6.0 * math.sqrt(WEXE * PEKERIS_BE**3) / WE - 6.0 * PEKERIS_BE**2 / WE
PEKERIS_DE = 4.0 * PEKERIS_BE**3 / WE**2  # Kratzer relation as Pekeris gives it

MORSE_ACCURACY = 1e-9  # cm-1: the radial problem's wall at r = 0 (V = 36 D) moves the
# Morse levels by ~e^-150, the basis (120 states) by ~1e-9 (tests/test_molecular.py)
ABSURD = 100.0  # an uncertainty above 100× the true error is useless (common practice)
MEASURABLE = 3.0  # a true error counts as measured when above 3× the truth's accuracy


def sinc_dvr_dunham(n=240, r_min=0.35, r_max=3.2, levels=14):
    """Y01, Y11, Y02 of the Morse well and their accuracy, by the method in the module notes
    (numpy/scipy only; the grid reaches 0.35…3.2 Å, where the lowest 13 levels vanish)."""
    h = (r_max - r_min) / (n + 1)
    r = r_min + h * np.arange(1, n + 1)
    d = np.subtract.outer(np.arange(n), np.arange(n))
    with np.errstate(divide="ignore"):
        t = np.where(d == 0, np.pi**2 / 3, 2.0 * (-1.0) ** d / np.where(d == 0, 1, d) ** 2)
    e, u = linalg.eigh(HB / h**2 * t + np.diag(D * (1 - np.exp(-ALPHA * (r - RE))) ** 2))
    wmat = u.T @ ((HB / r**2)[:, None] * u[:, :levels])  # ⟨m|ħ²/2μr²|v⟩
    b = np.diag(wmat[:levels])
    gaps = e[:, None] - e[None, :levels]
    np.fill_diagonal(gaps[:levels], np.inf)
    dv = np.sum(wmat**2 / gaps, axis=0)  # −½ ∂²E/∂x² = Σ_m≠v |W_mv|²/(E_m − E_v)
    vh = np.arange(levels) + 0.5
    fits = []
    for nv in range(9, 14):
        for deg in (nv - 2, nv - 1):
            cb = np.polynomial.polynomial.polyfit(vh[:nv], b[:nv], deg)
            cd = np.polynomial.polynomial.polyfit(vh[:nv], dv[:nv], deg)
            fits.append((cb[0], -cb[1], cd[0]))
    fits = np.array(fits)
    lo, hi = fits.min(axis=0), fits.max(axis=0)
    names = ("Be", "alpha_e", "De")
    values = dict(zip(names, (lo + hi) / 2, strict=True))
    accuracy = dict(zip(names, (hi - lo) / 2, strict=True))
    return values, accuracy, e[:6]  # e: the J = 0 levels from the bottom, to check Morse


@pytest.fixture(scope="module")
def truth():
    values, accuracy, g = sinc_dvr_dunham()
    values |= {"we": WE, "wexe": WEXE, "weye": 0.0}
    accuracy |= dict.fromkeys(("we", "wexe", "weye"), MORSE_ACCURACY)
    return values, accuracy, g


@pytest.fixture(scope="module")
def levels():
    morse = ah.Well.from_terms([{"expression": {
        "formula": "D*(1 - exp(-a*(r - re)))**2",
        "parameters": {"D": D, "a": ALPHA, "re": RE}}}], units="molecular", mass=MU)
    return ah.rovibrational(morse, J=tuple(range(9)), levels=6, mass=MU, size=120)


def constants(rv, js):
    """The constants of the J in ``js`` alone, as spectroscopic_constants would fit them."""
    rows = [list(rv.J).index(j) for j in js]
    return constants_of(type(rv)(rv.J[rows], rv.v, rv.energies[rows], rv.bound[rows],
                                 rv.bottom, rv.unit, tuple(rv.spectra[i] for i in rows)))


def test_the_reference_agrees_with_morse_and_pekeris(truth):
    # the helper's own check: its J = 0 levels are Morse's to rounding, and its Y01, −Y11, −Y02
    # differ from Pekeris's first-order forms by the orders Dunham (1932) gives:
    # Y01 − Be = O(Be³/ωe²), αe likewise, Y02 + De = O(De · Be/ωe)
    values, accuracy, g = truth
    vh = np.arange(6) + 0.5
    np.testing.assert_allclose(g, WE * vh - WEXE * vh**2, atol=1e-8 * WE)
    eps = PEKERIS_BE / WE
    assert values["Be"] == pytest.approx(PEKERIS_BE, rel=3 * eps**2)
    assert values["alpha_e"] == pytest.approx(PEKERIS_AE, rel=3 * eps**2)
    assert values["De"] == pytest.approx(PEKERIS_DE, rel=eps)
    # and it is accurate enough to judge the fits: far below the reviewer's 230σ / 420σ
    assert accuracy["Be"] < 2e-7 and accuracy["De"] < 1e-9


J_SETS = [(0, 1, 2), (0, 1, 2, 3), (0, 1, 2, 3, 4), (5, 6, 7, 8)]


@pytest.mark.parametrize("js", J_SETS, ids=lambda js: f"J{js[0]}-{js[-1]}")
def test_every_constant_lies_within_its_uncertainty(levels, truth, js):
    # Review finding 6: before, J = 0–3 put De 22σ off and J = 5–8 put Be 230σ and De 420σ
    # off the independent values, the uncertainties being the fit's scatter alone.
    values, accuracy, _ = truth
    c = constants(levels, js)
    for name, ref in values.items():
        err = abs(c[name].value - ref)
        assert err <= c[name].uncertainty + accuracy[name], (name, err, c[name])
        if err > MEASURABLE * accuracy[name]:
            assert c[name].uncertainty <= ABSURD * err, (name, err, c[name])


def test_the_docs_example_covers_the_reviewers_independent_de():
    # docs/observables.md: 6 levels, J = 0–3; the reviewer's finite differences (review
    # script dunham_ref.py) give De = 0.0028445725 ± 1.5e-9 cm-1, 22σ from the old ± 4.5e-10
    morse = ah.Well.from_terms([{"morse": {"depth": D, "width": ALPHA, "center": RE}}],
                               units="molecular", mass=MU)
    de = ah.spectroscopic_constants(morse, mass=MU, levels=6, J=(0, 1, 2, 3), size=120)["De"]
    assert abs(de.value - 0.0028445725) <= math.hypot(de.uncertainty, 1.5e-9)
    # the three parts are kept, and here the truncation error is most of it
    parts = (de.statistical, de.truncation, de.level_error)
    assert de.uncertainty == pytest.approx(math.sqrt(sum(x**2 for x in parts)), rel=1e-12)
    assert de.truncation > de.statistical and de.truncation > de.level_error > 0


def test_a_truncation_error_that_cannot_be_assessed_is_flagged(levels):
    # Four levels: Y30 needs all four v (Dunham 1932), so leaving the highest out cannot
    # show its truncation: NaN uncertainty, a note, and a warning (never a bare fit error).
    rv = levels
    rows = [list(rv.J).index(j) for j in (0, 1, 2)]
    short = type(rv)(rv.J[rows], rv.v[:4], rv.energies[np.ix_(rows, range(4))],
                     rv.bound[np.ix_(rows, range(4))], rv.bottom, rv.unit,
                     tuple(rv.spectra[i] for i in rows))
    with pytest.warns(ConvergenceWarning, match="weye"):
        c = constants_of(short)
    assert math.isfinite(c["weye"].value) and math.isnan(c["weye"].uncertainty)
    assert "give one more v" in c["weye"].note
    assert all(math.isfinite(c[n].uncertainty) for n in ("we", "wexe", "Be", "alpha_e", "De"))


def test_level_errors_bound_the_change_of_every_coefficient():
    # The contract of dunham_fit(level_errors=δE): a least-squares fit is linear in the
    # energies, so shifting every level by ±δE, signs chosen against a coefficient, moves it
    # by at most its level_error (common practice, no source: |Σ g_i s_i δ_i| ≤ Σ |g_i| δ_i).
    # Pekeris's closed form (1934) as data: an exact polynomial, so the order stays fixed.
    vv, jj = np.meshgrid(np.arange(6), np.arange(5))
    x = jj * (jj + 1.0)
    e = (WE * (vv + 0.5) - WEXE * (vv + 0.5) ** 2 + PEKERIS_BE * x - PEKERIS_DE * x**2
         - PEKERIS_AE * (vv + 0.5) * x)
    delta = 1e-6 * (1.0 + vv)  # invented bounds, growing with v as a basis' do
    base = dunham_fit(vv, jj, e, level_errors=delta)
    rng = np.random.default_rng(3)
    for _ in range(20):
        shifted = dunham_fit(vv, jj, e + delta * rng.choice([-1.0, 1.0], size=e.shape))
        assert sorted(shifted.coefficients) == sorted(base.coefficients)
        for kl, c in base.coefficients.items():
            assert abs(shifted.coefficients[kl].value - c.value) <= c.level_error * (1 + 1e-6)
    assert all(c.level_error > 0 for c in base.coefficients.values())
