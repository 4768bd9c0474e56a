"""Tolerance-driven studies grow the basis for bound levels only (time-independent checks).

External facts used:
- Bargmann's bound (V. Bargmann, Proc. Natl. Acad. Sci. USA 38, 961 (1952)): the number of
  bound states of angular momentum l in a central well obeys
  n_l < (2m/ħ²) / (2l + 1) · ∫₀^∞ r |V(r)| dr. For V = −V0 e^{−r²/a²} the integral is V0 a²/2,
  so with ħ = m = 1, V0 = 1 and a = 1 every channel has n_l < 1/(2l + 1) ≤ 1: no bound state.
- A finite basis has only discretised-continuum states in such a channel, and the variational
  principle (Ritz values are upper bounds) means each Ritz value stays above the exact
  continuum threshold 0.
"""

from __future__ import annotations

import pytest

import anharmony as ah
from anharmony.convergence import converge
from anharmony.convergence.driver import NO_BOUND_STEPS, size_ladder

SHALLOW = [{"gaussian": {"depth": 1.0, "range": 1.0}}]  # V0 a² = 1: no bound state (Bargmann)


@pytest.mark.parametrize("l", [0, 1, 2])
def test_channel_without_bound_state_stops_growing_after_a_few_sizes(l):
    well = ah.Well.from_terms(SHALLOW)
    r = converge(well, 3, l, levels=3, tolerance=1e-7, max_size=60, warn=False)
    tried = [size for size, _ in r.history]
    # the ladder would go 10, 14, 20, 28, 40, 57, 60; only NO_BOUND_STEPS sizes are tried
    assert tried == list(size_ladder(10, 60)[:NO_BOUND_STEPS])
    assert not r.bound.any() and not r.converged.any()
    assert (r.energies > 0.0).all()  # Ritz values above the threshold (variational principle)
    assert "no bound level" in r.stopped
    assert len(r.messages) == 3 and all("discretised-continuum" in m for m in r.messages)


def test_bound_levels_still_drive_the_growth_when_continuum_levels_are_asked_for():
    # V0 = 8, a = 1: Bargmann allows at most 8 s states; the deep well binds at least one
    # (its ground state lies below 0 by the variational principle with a Gaussian trial
    # function, common practice, no source), and we ask for 4 levels, some in the continuum.
    well = ah.Well.from_terms([{"gaussian": {"depth": 8.0, "range": 1.0}}])
    r = converge(well, 3, 0, levels=4, tolerance=1e-6, max_size=80, warn=False)
    assert r.bound[0] and not r.bound.all()
    assert r.converged[r.bound].all() and not r.converged[~r.bound].any()
    assert r.stopped.startswith("converged at size")
