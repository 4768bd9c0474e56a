"""Caches of solve(): keyed by value, bounded, never stale (common practice, no source).

Each check compares a solve that may hit a cache with the same solve after every cache was
emptied; a stale matrix or reference would make them differ.
"""

import numpy as np
import pytest

import anharmony as ah
import anharmony.basis as basis_mod
from anharmony import spectrum
from anharmony.hamiltonian import Channel, channel_hamiltonian

W = ah.Well.from_terms
WS = [{"woods_saxon": {"depth": 51.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}},
      {"spin_orbit": {"strength": 22.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}}]
# tolerance 1e-3: these checks are about caching; convergence is tested elsewhere
KW = {"dimension": 3, "l": 1, "j": 1.5, "size": 30, "length": 2.0, "units": "nuclear",
      "levels": 2, "tolerance": 1e-3}


def fresh(well, **kw):
    spectrum.clear_caches()
    basis_mod._RULES.clear()
    return ah.solve(well, **kw)


def _ws(depth=51.0):
    return [{"woods_saxon": {**WS[0]["woods_saxon"], "depth": depth}}, WS[1]]


def test_a_changed_well_never_reuses_a_matrix():
    a = ah.solve(W(_ws(51.0)), **KW)
    b = ah.solve(W(_ws(52.0)), **KW)
    assert not np.allclose(a.energies, b.energies)
    np.testing.assert_array_equal(b.energies, fresh(W(_ws(52.0)), **KW).energies)


def test_an_equal_well_rebuilt_hits_the_cache_with_the_same_numbers():
    first = ah.solve(W(WS), **KW)  # oscillator-unit well, rebuilt in nuclear units by solve
    n = len(spectrum._CACHES["matrices"])
    again = ah.solve(W(WS), **KW)
    assert len(spectrum._CACHES["matrices"]) == n  # a hit, not a new entry
    np.testing.assert_array_equal(first.energies, again.energies)


@pytest.mark.parametrize("change", [{"mass": 2.0}, {"j": 0.5}, {"l": 2, "j": 2.5},
                                    {"size": 31}, {"length": 2.1}, {"units": "oscillator"}])
def test_mass_channel_size_length_or_units_are_part_of_the_key(change):
    well = W(WS, units="nuclear")
    ah.solve(well, **KW)
    kw = {**KW, **change}
    if kw["units"] == "oscillator":
        kw["length"] = 1.0
    got = ah.solve(well, **kw).energies
    np.testing.assert_array_equal(got, fresh(well, **kw).energies)


def test_the_reference_of_another_unit_system_is_not_reused():
    w = W([{"harmonic": {"frequency": 2.0}}, {"power": {"exponent": 4, "strength": 0.1}}])
    a = ah.reference_oscillator(w, 3, 0)
    b = ah.reference_oscillator(w.with_context("nuclear", None), 3, 0)
    assert a.length != b.length  # ħ²/2m differs between the systems


def test_cached_matrices_cannot_be_changed_by_a_caller():
    well = W(WS, units="nuclear")
    ah.solve(well, **KW)
    (_mats, total), = [v for k, v in spectrum._CACHES["matrices"].items()
                      if k[1] == Channel(3, 1, 1.5) and k[2] == 30][-1:]
    with pytest.raises(ValueError, match="read-only"):
        total[0, 0] = 0.0


def test_the_matrix_cache_is_bounded():
    well = W([{"gaussian": {"depth": 5.0, "range": 1.0}}])
    for size in range(10, 30):
        ah.solve(well, dimension=3, l=0, size=size, length=0.8, levels=1, tolerance=1.0)
    assert len(spectrum._CACHES["matrices"]) <= spectrum._CACHE_SIZES["matrices"]


def test_quadrature_rules_shared_across_lengths_give_the_same_matrix():
    # rules are stored at b = 1 and stretched: the matrix must equal one made from scratch
    well = W(WS, units="nuclear")
    ch = Channel(3, 0, 0.5)
    channel_hamiltonian(well, ch, 24, 1.7)  # fills the rule cache at another length
    warm = channel_hamiltonian(well, ch, 24, 2.3).total
    basis_mod._RULES.clear()
    cold = channel_hamiltonian(well, ch, 24, 2.3).total
    np.testing.assert_array_equal(warm, cold)


def test_default_length_does_not_depend_on_earlier_calls():
    # Regression: the semiclassical phase space of a channel is cached, and it used to widen
    # its grid in place when one call needed a larger orbit, so the default length of a later
    # solve depended on what had been asked before (jobs=1 and jobs=2 wrote different files).
    from anharmony import spectrum as sp
    from anharmony.hamiltonian import Channel

    well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                               {"power": {"exponent": 4, "strength": 0.1}}])
    sp.clear_caches()
    fresh = ah.solve(well, 3, 0, size=16, levels=3).basis.length
    sp.clear_caches()
    sp._phase_space(well, Channel(3, 0), 0.0).quanta(1e6)  # an orbit far beyond the base grid
    later = ah.solve(well, 3, 0, size=16, levels=3).basis.length
    assert later == fresh  # exactly: the same arithmetic on the same grid


def test_a_given_length_defers_the_reference_and_reading_it_gives_the_eager_one(monkeypatch):
    # The reference of reference="auto" is resolved on first read when the length is given;
    # what is read must equal reference_oscillator() called directly (the eager rule), and a
    # pickled spectrum must carry it (common practice, no source).
    import pickle

    calls = []
    real = spectrum.reference_oscillator
    monkeypatch.setattr(spectrum, "reference_oscillator",
                        lambda *a, **k: calls.append(a) or real(*a, **k))
    well = W(_ws(50.5), units="nuclear")
    spec = fresh(well, **KW)
    assert calls == []  # not searched by solve itself
    direct = real(well, 3, 1, None, KW["levels"], "auto", 1.5)
    assert spec.reference == direct
    assert spec.reference.method == "variational"  # the search that was deferred
    osc = 2.0 * np.arange(KW["levels"]) + 1 + 1.5  # 2n + l + d/2 (DESIGN §2)
    np.testing.assert_allclose(spec.reference_energies, direct.v_min + direct.frequency * osc,
                               rtol=1e-15)  # the same arithmetic; rounding only
    np.testing.assert_array_equal(spec.shifts, spec.energies - spec.reference_energies)
    assert len(calls) == 1  # made once, then kept, for reference and reference_energies
    again = pickle.loads(pickle.dumps(fresh(well, **KW)))
    assert again.reference == direct
    # the same solve with the reference resolved first: identical levels and error bars
    eager = ah.solve(well, **{**KW, "reference": {"length": direct.length}})
    np.testing.assert_array_equal(eager.energies, spec.energies)
    np.testing.assert_array_equal(eager.error_estimate, spec.error_estimate)
