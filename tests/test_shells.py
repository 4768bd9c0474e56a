"""Shell filling of independent particles, against oscillator shells and the magic numbers."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.shells import degeneracy, fill_shells

W = ah.Well.from_terms
RTOL_EXACT = 1e-12  # oscillator levels and ⟨r²⟩ are exact in the basis (rounding only)

# Shell gaps are MeV-sized: levels good to 1e-3 of the spacing (≈ 1e-3 MeV) decide the
# ordering, so the 30-state basis is enough and its error bar is allowed that large.
SHELL_TOL = 1e-3


def oscillator_channels(dimension, lmax, spin_orbit=False):
    w = W([{"harmonic": {"frequency": 1.0}}])
    out = []
    for l in range(lmax + 1):
        js = ([l + 0.5, l - 0.5] if l else [0.5]) if spin_orbit else [None]
        out += [ah.solve(w, dimension=dimension, l=l, j=j, size=12, levels=4) for j in js]
    return out


def test_3d_oscillator_closed_shells_are_2_8_20_40_70():
    # Textbook: shell N holds (N+1)(N+2) particles with spin (Mayer & Jensen, Elementary Theory
    # of Nuclear Shell Structure, 1955); cumulative 2, 8, 20, 40, 70 with gaps of ħω.
    res = fill_shells(oscillator_channels(3, 6), particles=8)
    closures = [c for c in res.closures if c[0] <= 70]
    assert [n for n, _ in closures] == [2, 8, 20, 40, 70]
    np.testing.assert_allclose([g for _, g in closures], 1.0, rtol=RTOL_EXACT)
    assert res.closed and res.fermi_energy == pytest.approx(2.5, rel=RTOL_EXACT)
    assert res.gap == pytest.approx(1.0, rel=RTOL_EXACT)
    # ⟨r²⟩ = b²(N + 3/2) per orbital (virial theorem): (2·1.5 + 6·2.5)/8 = 9/4, b = 1
    assert res.rms_radius == pytest.approx(1.5, rel=RTOL_EXACT)


def test_the_table_prints_the_filling_it_describes():
    # the 3D oscillator at N = 8 (textbook shells, as above): the printed read-outs are the
    # numbers of the ShellFilling, one line per level
    res = fill_shells(oscillator_channels(3, 6), particles=8)
    lines = res.table()
    assert len(lines) == 1 + len(res.levels) + 3
    assert f"Fermi level {res.fermi_energy:.6f}" in lines[-3] and "closed shell" in lines[-3]
    assert f"gap above it {res.gap:.4f}" in lines[-3]
    assert f"{res.rms_radius:.4f}" in lines[-2]
    assert lines[-1].endswith(", ".join(str(n) for n in res.magic_numbers(6)))
    occupied = [float(line.split()[3]) for line in lines[1:1 + len(res.levels)]]
    assert sum(occupied) == 8


def test_spin_orbit_channels_hold_2j_plus_1_and_give_the_same_oscillator_shells():
    # Without a spin–orbit term the j = l ± ½ channels are degenerate: 2j+1 + 2j'+1 = 2(2l+1).
    res = fill_shells(oscillator_channels(3, 4, spin_orbit=True), particles=20)
    assert [n for n, _ in res.closures if n <= 40] == [2, 8, 20, 40]
    assert res.closed


def test_2d_oscillator_closed_shells_are_2_6_12_20():
    # Textbook 2D oscillator (Fock–Darwin at zero field): shell N holds 2(N+1) particles with
    # spin, m = ±1 levels twice degenerate; cumulative 2, 6, 12, 20.
    res = fill_shells(oscillator_channels(2, 5), particles=12)
    assert [n for n, _ in res.closures if n <= 20] == [2, 6, 12, 20]
    assert res.closed and res.fermi_energy == pytest.approx(3.0, rel=RTOL_EXACT)


def test_partly_filled_level_and_fermi_energy():
    # 10 particles in the 3D oscillator: 8 fill N = 0, 1 (textbook); the last 2 go into the
    # degenerate N = 2 shell, where ties keep the order of the spectra given (the stated rule):
    # the l = 0 spectrum comes first, so 2s takes both and 1d stays empty.
    res = fill_shells(oscillator_channels(3, 3), particles=10)
    occ = {lv.label: lv.occupancy for lv in res.levels}
    assert occ["2s"] == 2.0 and occ["1d"] == 0.0
    assert not res.closed and math.isnan(res.gap)
    assert res.fermi_energy == pytest.approx(3.5, rel=RTOL_EXACT)
    assert sum(occ.values()) == 10


def nucleus(mass_number, depth, vls):
    return W([{"woods_saxon": {"depth": depth, "r0": 1.27, "mass_number": mass_number,
                               "diffuseness": 0.67}},
              {"spin_orbit": {"strength": vls, "r0": 1.27, "mass_number": mass_number,
                              "diffuseness": 0.67, "length": 1.27}}], units="nuclear")


# (magic numbers checked, A, V0, V_ls): parameters of cases/neutron-ws.yaml, V0 lowered
# slowly with A as there (common practice, no source); ħω = 41 A^(-1/3) MeV for the basis.
NUCLEI = [((2, 8), 16, 51.5, 22.0), ((20,), 40, 51.0, 22.0), ((28,), 48, 50.0, 22.0),
          ((50,), 90, 47.0, 20.0), ((82,), 140, 46.0, 20.0), ((126,), 208, 45.0, 20.0)]
MAGIC = (0, 2, 8, 20, 28, 50, 82, 126, 184)


@pytest.mark.parametrize(("magic", "a", "depth", "vls"), NUCLEI)
def test_woods_saxon_with_spin_orbit_gives_the_magic_numbers(magic, a, depth, vls):
    # Magic numbers 2, 8, 20, 28, 50, 82, 126 (Mayer; Haxel, Jensen & Suess 1949; common
    # practice): in a nucleus near each one, the gap above it is the largest of all gaps
    # between the neighbouring magic numbers.
    w = nucleus(a, depth, vls)
    ref = {"frequency": 41.0 * a ** (-1.0 / 3.0)}
    spectra = [ah.solve(w, dimension=3, l=l, j=j, units="nuclear", size=30, levels=4,
                        tolerance=SHELL_TOL, reference=ref)
               for l in range(8) for j in ([l + 0.5, l - 0.5] if l else [0.5])]
    gaps = dict(fill_shells(spectra, particles=0).closures)
    for n in magic:
        lo, hi = MAGIC[MAGIC.index(n) - 1], MAGIC[MAGIC.index(n) + 1]
        rivals = {m: g for m, g in gaps.items() if lo < m < hi and m != n}
        assert n in gaps, f"no shell closes at {n}"
        assert all(gaps[n] > g for g in rivals.values()), (n, gaps[n], rivals)


def test_fill_shells_reports_rms_radius_of_occupied_orbitals():
    # Consistency with the per-level radii: √(Σ occ ⟨r²⟩ / N).
    w = nucleus(16, 51.5, 22.0)
    spectra = [ah.solve(w, dimension=3, l=l, j=j, units="nuclear", size=30, levels=3,
                        tolerance=SHELL_TOL, reference={"frequency": 16.3})
               for l, j in [(0, 0.5), (1, 1.5), (1, 0.5), (2, 2.5)]]
    res = fill_shells(spectra, particles=8)
    occ = np.array([lv.occupancy for lv in res.levels])
    r = np.array([lv.rms_radius for lv in res.levels])
    assert res.rms_radius == pytest.approx(math.sqrt(occ @ r**2 / 8), rel=1e-14)
    # an A = 16 nucleus has rms radius ≈ 2.7 fm (quoted from memory, ¹⁶O charge radius 2.70)
    assert 2.3 < res.rms_radius < 3.0
    assert res.energy_unit == "MeV" and res.length_unit == "fm"


def test_degeneracies_follow_the_stated_conventions():
    ch = ah.Channel
    assert degeneracy(ch(3, 3, 3.5)) == 8
    assert degeneracy(ch(3, 2)) == 10
    assert degeneracy(ch(2, 0)) == 2 and degeneracy(ch(2, 2)) == 4
    assert degeneracy(ch(1, None), spin_degeneracy=1) == 1


def test_fill_shells_refuses_bad_input():
    spectra = oscillator_channels(3, 1)
    with pytest.raises(InputError, match="particles: 100 exceed"):
        fill_shells(spectra, particles=100)
    with pytest.raises(InputError, match="given twice"):
        fill_shells(spectra + spectra[:1], particles=2)
    with pytest.raises(InputError, match="particles"):
        fill_shells(spectra, particles=-1)


def test_a_filling_case_key_stores_the_shells_of_every_scan_point(tmp_path):
    # 3D oscillator, 20 particles: the shells N = 0, 1, 2 full (2 + 6 + 12; Mayer & Jensen
    # 1955, textbook), Fermi level 3.5 ħω, gap ħω, ⟨r²⟩ = b²(N + 3/2) per orbital gives an rms
    # radius √3 b (virial theorem); the scanned frequency scales energies and b² = 1/ħω
    path = tmp_path / "fill.yaml"
    path.write_text("schema: 1\nspace: {dimension: 3, l: [0, 1, 2, 3]}\nwell:\n"
                    "  - harmonic: {frequency: 1.0}\nbasis: {size: 12}\nlevels: {count: 3}\n"
                    "scan: {parameter: 'well[0].frequency', values: [1.0, 2.0]}\n"
                    "filling: {particles: 20}\noutput: fill.nc\n")
    ds = ah.run_case(path)
    hw = ds.scan_value.values
    np.testing.assert_allclose(ds.shell_fermi_energy.values, 3.5 * hw, rtol=RTOL_EXACT)
    np.testing.assert_allclose(ds.shell_gap.values, hw, rtol=RTOL_EXACT)
    np.testing.assert_allclose(ds.shell_rms_radius.values, np.sqrt(3.0 / hw), rtol=RTOL_EXACT)
    assert list(ds.shell_closed.values) == [1, 1]
    np.testing.assert_array_equal(ds.shell_occupancy.values.sum(axis=(1, 2)), [20, 20])
    assert ds.shell_occupancy.values[0, 3].sum() == 0  # the f shell (N = 3) stays empty
