"""The automatic reference oscillator (the convention of the design notes, §2)."""

import math

import pytest

import anharmony as ah

W = ah.Well.from_terms


def test_weak_quartic_uses_the_harmonic_approximation():
    w = W([{"harmonic": {"frequency": 1.3}}, {"power": {"exponent": 4, "strength": 0.01}}])
    ref = ah.reference_oscillator(w, dimension=3, l=0)
    assert ref.method == "harmonic"
    assert ref.frequency == pytest.approx(1.3, rel=1e-12)  # V'' found to rounding
    assert ref.length == pytest.approx(1 / math.sqrt(1.3), rel=1e-12)  # b² = ħ/(mω), ħ = m = 1


def test_pure_quartic_has_no_curvature_and_is_chosen_variationally():
    ref = ah.reference_oscillator(W([{"power": {"exponent": 4, "strength": 1.0}}]), 1, None)
    assert ref.method == "variational" and "V'' = 0" in ref.reason


def test_flat_bottomed_woods_saxon_is_chosen_variationally():
    w = W([{"woods_saxon": {"depth": 50.0, "radius": 4.5, "diffuseness": 0.65}}],
          units="nuclear")
    ref = ah.reference_oscillator(w, dimension=3, l=0)
    assert ref.method == "variational"
    # the variational b minimises the levels: it must beat nearby lengths
    kw = {"dimension": 3, "l": 0, "size": 16, "levels": 5, "units": "nuclear"}
    # the 16-state basis of the search is far from converged: solve() must say so
    with pytest.warns(ah.ConvergenceWarning, match="not converged"):
        best = ah.solve(w, length=ref.length, **kw).energies.clip(max=0).sum()
        for f in (0.8, 1.25):
            assert ah.solve(w, length=f * ref.length, **kw).energies.clip(max=0).sum() > best


def test_cubic_unbounded_below_expands_about_its_local_minimum():
    # A cubic is unbounded below; its formal series is still defined about the local minimum.
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.1}}])
    ref = ah.reference_oscillator(w, dimension=1, l=None)
    # abs 1e-12: the minimum is Newton-polished on V' to rounding
    assert ref.method == "harmonic" and ref.center == pytest.approx(0.0, abs=1e-12)
    assert "unbounded below" in ref.reason
    # no level is below a threshold of −∞; both lie below the escape barrier (the local
    # maximum at x = −10/3, V = 50/27: calculus). The 20-state basis reaches past the barrier:
    # its lowest state (−0.09) lives beyond the pass (a state of the open side, not
    # quasi-bound); the next (0.484) is the resonance v = 0 (second-order theory:
    # ½ − 11 g²/8 = 0.486; Landau & Lifshitz, Quantum Mechanics, §38 problem 3), quasi-bound,
    # judged, and not converged there: a warning
    with pytest.warns(ah.ConvergenceWarning) as rec:
        spec = ah.solve(w, dimension=1, l=None, size=20, levels=2)
    text = " ".join(str(r.message) for r in rec)
    assert "not converged" in text and "beyond the pass" in text
    assert not spec.bound.any() and spec.quasi_bound.tolist() == [False, True]
    assert spec.energies[1] == pytest.approx(0.5 - 11 * 0.1**2 / 8, abs=0.01)  # PT error ~ g⁴
    assert spec.barrier == pytest.approx(50.0 / 27.0, rel=1e-9)


def test_morse_reference_sits_at_the_minimum_with_the_morse_frequency():
    # Morse (1929): ħω = α sqrt(2Dħ²/m) at the minimum x₀.
    w = W([{"morse": {"depth": 20.0, "width": 0.8, "center": 1.5}}])
    ref = ah.reference_oscillator(w, dimension=1, l=None)
    assert ref.method == "harmonic"
    assert ref.center == pytest.approx(1.5, abs=1e-9)  # Newton-polished minimum
    assert ref.frequency == pytest.approx(0.8 * math.sqrt(2 * 20.0), rel=1e-9)  # V'' there


def test_given_length_or_frequency_is_kept():
    w = W([{"gaussian": {"depth": 5.0, "range": 1.0}}])
    a = ah.reference_oscillator(w, 3, 0, reference={"length": 0.9})
    b = ah.reference_oscillator(w, 3, 0, reference={"frequency": 2.0})
    assert (a.method, a.length) == ("given", 0.9)
    assert b.length == pytest.approx(math.sqrt(2 * 0.5 / 2.0), rel=1e-14)  # b = √(ħ/mω): rounding


def test_strong_quartic_keeps_the_harmonic_reference_so_shifts_are_positive():
    # A positive quartic raises every level above the oscillator's (first-order RS: ⟨r⁴⟩ > 0;
    # variational principle for the positive perturbation, common practice): with the
    # harmonic reference of DESIGN §2 all shifts are positive, whatever `levels` is.
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 4, "strength": 0.5}}])
    for levels in (3, 5):
        spec = ah.solve(w, dimension=3, l=0, size=40, levels=levels)
        assert spec.reference.method == "harmonic" and spec.reference.frequency == 1.0
        assert (spec.shifts > 0).all()


def test_shallow_gaussian_is_chosen_variationally():
    # ħω = √(2V₀/(m a²)) = 2 exceeds the depth here: no oscillator level fits in the well.
    w = W([{"gaussian": {"depth": 2.0, "range": 1.0}}])
    ref = ah.reference_oscillator(w, 3, 0)
    assert ref.method == "variational" and "threshold" in ref.reason


def test_woods_saxon_reason_names_the_cusp_at_the_origin():
    w = W([{"woods_saxon": {"depth": 50.0, "radius": 4.5, "diffuseness": 0.65}}],
          units="nuclear")
    assert "cusp" in ah.reference_oscillator(w, 3, 0).reason
