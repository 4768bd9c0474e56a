"""A shell filling is refused when a level that was not computed could lie below its Fermi
level (the completeness rule of anharmony.shells); a filling that passes equals the one
with every level computed."""

import math

import numpy as np
import pytest
from scipy import constants as sc

import anharmony as ah
from anharmony.errors import InputError
from anharmony.shells import fill_shells
from refsolvers import radial_fd_levels

RTOL_EXACT = 1e-12  # oscillator levels are exact in the basis (rounding only)

# The neutron well of docs/nuclei.md (A = 40, Woods–Saxon plus spin–orbit)
WS = {"depth": 51.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}
SO = {"strength": 22.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67, "length": 1.27}
CHANNELS = [(l, j) for l in range(4) for j in ([l + 0.5, l - 0.5] if l else [0.5])]


def nucleus_spectra(levels):
    well = ah.Well.from_terms([{"woods_saxon": WS}, {"spin_orbit": SO}], units="nuclear")
    return [ah.solve(well, 3, l, j, units="nuclear", size=30, levels=levels,
                     tolerance=1e-3, reference={"frequency": 12.0}) for l, j in CHANNELS]


def oscillator_spectra(levels, lmax=3):
    w = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}}])
    return [ah.solve(w, dimension=3, l=l, size=12, levels=levels) for l in range(lmax + 1)]


def test_one_level_per_channel_is_refused_when_2s_lies_below_the_fermi_level():
    # Review finding 5: with one level per channel the 2s1/2 level (not computed) was skipped
    # and 20 neutrons gave "Fermi level -9.24 MeV, open shell". The truth, from an independent
    # radial finite-difference solver (tests/refsolvers.py, s channel: no spin–orbit), has
    # 2s1/2 bound far below that, so the filling must be refused, naming the s channel.
    hbar2_2m = (sc.hbar * sc.c / sc.femto / (sc.mega * sc.e)) ** 2 / (
        2 * 0.5 * (sc.m_p + sc.m_n) * sc.c**2 / (sc.mega * sc.e))  # MeV fm², CODATA
    radius = WS["r0"] * WS["mass_number"] ** (1 / 3)

    def ws(r):
        return -WS["depth"] / (1 + np.exp((r - radius) / WS["diffuseness"]))

    fd_2s = radial_fd_levels(ws, 0, 3, hbar2_2m, r_max=20.0, n_grid=3000, levels=2)[1]
    assert fd_2s < -15.0  # the reviewer's finite differences: -15.671 MeV
    with pytest.raises(InputError) as err:
        fill_shells(nucleus_spectra(1), particles=20)
    text = str(err.value)
    assert "s1/2" in text and "at least 2 levels per channel" in text
    assert "levels.count" in text


def test_a_channel_with_every_bound_level_computed_counts_as_complete():
    # Two levels per channel: the s channel's top level (2s1/2, about -15.7 MeV) lies below
    # the Fermi level of 20 neutrons (1d3/2, about -14.36), but the channel holds only two
    # bound levels (phase-space count), so the filling is trusted. It must equal the filling
    # with three levels per channel: closed shell at N = 20 (magic number; Mayer, Haxel,
    # Jensen & Suess 1949) with the Fermi level on 1d3/2 (the reviewer's radial finite
    # differences: -14.35737 MeV, gap 5.11979 MeV).
    two, three = (fill_shells(nucleus_spectra(n), particles=20) for n in (2, 3))
    assert two.closed and three.closed
    for name in ("fermi_energy", "gap", "rms_radius"):  # the same levels, rounding apart
        assert getattr(two, name) == pytest.approx(getattr(three, name), rel=RTOL_EXACT)
    assert two.fermi_energy == pytest.approx(-14.35737, abs=1e-3)  # SHELL tolerance 1e-3
    occupied = {lv.label: lv.occupancy for lv in two.levels if lv.occupancy}
    assert occupied["2s1/2"] == 2 and sum(occupied.values()) == 20


def test_a_confining_channel_needs_a_level_above_the_fermi_level():
    # 3D oscillator (textbook shells: 1.5, 2.5, 3.5 ħω; Mayer & Jensen 1955). One level per l:
    # 8 particles fill 1s and 1p (Fermi 2.5), and the s channel's only computed level (1.5)
    # is below it; a confining channel holds levels without end, so it is refused. Two levels
    # per l put 2s (3.5) above the Fermi level: accepted, closed at 8 with gap ħω.
    with pytest.raises(InputError, match=r"s \(1 computed.*confining"):
        fill_shells(oscillator_spectra(1), particles=8)
    res = fill_shells(oscillator_spectra(2), particles=8)
    assert res.closed and res.fermi_energy == pytest.approx(2.5, rel=RTOL_EXACT)
    assert res.gap == pytest.approx(1.0, rel=RTOL_EXACT)


def test_closures_stop_at_the_horizon_of_the_levels_computed():
    # Two oscillator levels per l = 0…3: every level below 3.5 ħω (the s channel's second,
    # the lowest top level) is known, so only the closures at 2 and 8 (gaps ħω to 2.5 and
    # 3.5; textbook) are reported; the one at 20 would need the shell at 4.5, where 3p… are
    # not all computed (3s at 5.5 is missing, and so would be any level of an l not given).
    res = fill_shells(oscillator_spectra(2), particles=0)
    assert res.horizon == pytest.approx(3.5, rel=RTOL_EXACT)
    assert [n for n, _ in res.closures] == [2, 8]
    np.testing.assert_allclose([g for _, g in res.closures], 1.0, rtol=RTOL_EXACT)
    assert math.isnan(res.fermi_energy)


def test_a_finite_well_whose_levels_are_all_computed_has_no_horizon():
    # Three levels per channel reach the continuum (or every bound level) in each channel of
    # the A = 40 well: nothing is missing, the horizon is infinite (common practice, no source:
    # a computed level above the threshold bounds every bound level below it).
    res = fill_shells(nucleus_spectra(3), particles=20)
    assert res.horizon == math.inf


def test_a_case_file_with_too_few_levels_fails_and_names_the_setting(tmp_path):
    # The case-file path of the oscillator refusal above (one level per l, 8 particles): the
    # run refuses rather than store an open shell at N = 8.
    path = tmp_path / "fill.yaml"
    path.write_text("schema: 1\nspace: {dimension: 3, l: [0, 1, 2, 3]}\nwell:\n"
                    "  - harmonic: {frequency: 1.0}\nbasis: {size: 12}\nlevels: {count: 1}\n"
                    "filling: {particles: 8}\noutput: fill.nc\n")
    with pytest.raises(InputError, match=r"levels\.count"):
        ah.run_case(path)
    assert not (tmp_path / "fill.nc").exists()
