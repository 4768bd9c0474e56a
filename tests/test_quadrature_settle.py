"""The settle check of the quadrature matrices (probe vectors, skipped tail nodes, syrk), the
combined potential + spin–orbit quadrature of solve(), and the caches around them.

Every matrix is checked against an independent computation: a composite Gauss–Legendre rule
from numpy (numpy.polynomial.legendre.leggauss) with the basis functions evaluated directly
(``functions()``), which shares no rule, node, pruning or settle logic with ``matrix()``
(common practice, no source).
"""

import itertools
import math
import warnings

import numpy as np
import pytest

import anharmony as ah
import anharmony.basis as basis_mod
from anharmony import spectrum
from anharmony.basis import HermiteBasis, RadialBasis
from anharmony.errors import ConvergenceWarning
from anharmony.hamiltonian import Channel, channel_hamiltonian

W = ah.Well.from_terms
WS = [{"woods_saxon": {"depth": 51.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}},
      {"spin_orbit": {"strength": 22.0, "r0": 1.27, "mass_number": 40, "diffuseness": 0.67}}]
NUCLEAR = W(WS, units="nuclear")

# The settle check holds elements to ~1e-13 of the largest one above a rounding floor of
# 1e4 ulp of max |f| (~2e-12 of it); the independent rule resolves these integrands to
# rounding. 2e-11 of max |f|: the floor ×10 (common practice, no source).
RTOL_SETTLED = 2e-11


def _independent(basis, f, breaks=(), panel=0.04, order=16):
    """⟨m|f|n⟩ by a numpy Gauss–Legendre rule over the basis' whole support (panel edges also
    at ``breaks``, where f has a kink)."""
    t, w = np.polynomial.legendre.leggauss(order)
    reach = math.sqrt(4.0 * basis.size + 2.0 * abs(basis.l or 0) + 2.0) + 12.0  # in b
    lo, hi = (-reach, reach) if basis.l is None else (0.0, reach)
    center = basis.center if basis.l is None else 0.0
    cuts = sorted({lo, hi, *((c - center) / basis.length for c in breaks)})
    edges = np.unique(np.concatenate([np.linspace(a, b, math.ceil((b - a) / panel) + 1)
                                      for a, b in itertools.pairwise(cuts)]))
    half, mid = 0.5 * np.diff(edges), 0.5 * (edges[1:] + edges[:-1])
    x = (mid[:, None] + half[:, None] * t).ravel() * basis.length
    wx = (half[:, None] * w).ravel() * basis.length
    if basis.l is None:
        x = basis.center + x
    else:
        wx = wx * x ** (basis.dimension - 1)  # radial measure r^(d−1) dr
    phi = basis.functions(x)
    fx = f(x)
    return (phi * (wx * fx)) @ phi.T, float(np.max(np.abs(fx)))


def _ws(r):
    return NUCLEAR.value(r)


def _so(r):
    return NUCLEAR.spin_orbit_value(r)


CASES = [
    # one-signed, panels (syrk path); tails of the radial basis beyond the well are skipped
    ("woods-saxon", RadialBasis(100, 2.0, 2, 3), _ws, "panels", ()),
    ("spin-orbit", RadialBasis(60, 1.8, 1, 3), _so, "panels", ()),
    # both signs (j = l − 1/2: ⟨l·s⟩ < 0 makes V_ls repulsive): two syrk updates
    ("ws-minus-so", RadialBasis(60, 1.8, 1, 3), lambda r: _ws(r) - 2.0 * _so(r), "panels", ()),
    ("oscillating", HermiteBasis(40, 1.0, 0.3), lambda x: np.cos(3 * x) * np.exp(-x * x / 8),
     "panels", ()),
    # weight rule, off centre, f large far out (a steep Morse wall inside the basis' reach)
    ("morse-wall", HermiteBasis(40, 0.5, 0.2),
     lambda x: 10.0 * (1.0 - np.exp(-(x - 0.2))) ** 2, "weight", ()),
    ("gaussian-radial", RadialBasis(50, 0.7, 0, 3), lambda r: -20.0 * np.exp(-r * r / 4),
     "weight", ()),
    # a narrow bump away from the centre: not resolved at the first point counts, so the check
    # has to grow the rule (the probes must see it)
    ("narrow-bump", HermiteBasis(30, 1.0), lambda x: np.exp(-(((x - 0.7) / 0.03) ** 2)),
     "panels", ()),
    # a kink at a panel edge
    ("kink", RadialBasis(40, 1.0, 0, 3), lambda r: -np.maximum(0.0, 3.0 - r), "panels",
     (3.0,)),
]


@pytest.mark.parametrize(("name", "basis", "f", "kind", "breaks"), CASES,
                         ids=[c[0] for c in CASES])
def test_settled_matrix_equals_an_independent_rule(name, basis, f, kind, breaks):
    got = basis.matrix(f, kind=kind, breaks=breaks)
    ref, fmax = _independent(basis, f, breaks)
    assert np.array_equal(got, got.T)
    np.testing.assert_allclose(got, ref, rtol=0, atol=RTOL_SETTLED * fmax)


def test_a_narrow_feature_makes_the_check_grow_the_rule():
    # The bump is missed by the first count (its matrix there is far off); the returned matrix
    # is the independent one, so the check went on: it did not settle on the probes too early.
    basis = HermiteBasis(30, 1.0)

    def f(x):
        return np.exp(-(((x - 0.7) / 0.03) ** 2))

    first = basis.matrix(f, kind="panels", points=basis.size + 24)
    ref, fmax = _independent(basis, f)
    assert np.max(np.abs(first - ref)) > 1e3 * RTOL_SETTLED * fmax
    np.testing.assert_allclose(basis.matrix(f, kind="panels"), ref, rtol=0,
                               atol=RTOL_SETTLED * fmax)


def test_the_result_does_not_depend_on_earlier_calls():
    # probes are seeded and rules cached by value: the same matrix from a cold and a warm start
    basis = RadialBasis(50, 1.7, 1, 3)
    warm = basis.matrix(_ws, kind="panels")
    basis_mod._RULES.clear()
    basis_mod._PROBES.clear()
    np.testing.assert_array_equal(basis.matrix(_ws, kind="panels"), warm)


@pytest.mark.parametrize("j", [1.5, 0.5])  # ⟨l·s⟩ > 0 (one sign) and < 0 (both signs)
def test_combined_spin_orbit_quadrature_equals_the_separate_terms(j):
    ch = Channel(3, 1, j)
    together = channel_hamiltonian(NUCLEAR, ch, 60, 1.9, combined=True)
    apart = channel_hamiltonian(NUCLEAR, ch, 60, 1.9)
    assert together.combined and not apart.combined
    assert not np.any(together.spin_orbit) and np.any(apart.spin_orbit)
    scale = float(np.max(np.abs(apart.total)))
    # two settled quadratures of the same integrals: within their settle tolerance
    np.testing.assert_allclose(together.total, apart.total, rtol=0, atol=RTOL_SETTLED * scale)
    np.testing.assert_array_equal(together.kinetic, apart.kinetic)


def _independent_total(well, channel, size, length):
    """kinetic (exact, ħω from the well's units and mass) + an independent ⟨V + ⟨l·s⟩V_ls⟩."""
    basis = RadialBasis(size, length, channel.l, 3)
    hw = 2.0 * well.units.hbar2_over_2m(well.mass) / length**2

    def v(r):
        return well.value(r) + channel.ls * well.spin_orbit_value(r)

    pot, fmax = _independent(basis, v)
    return hw * basis.kinetic() + pot, fmax


@pytest.mark.parametrize("change", [{}, {"depth": 52.0}, {"mass": 2.0}, {"j": 0.5},
                                    {"units": "oscillator"}])
def test_a_changed_well_mass_channel_or_unit_system_gets_its_own_matrix(change):
    # After a solve of the base case, a solve with one thing changed must use a matrix equal to
    # an independent build of *its* Hamiltonian (never the cached one of the base case).
    base = {"dimension": 3, "l": 1, "j": 1.5, "size": 30, "length": 2.0, "units": "nuclear",
            "levels": 2, "tolerance": 1.0}
    terms = [{"woods_saxon": {**WS[0]["woods_saxon"], "depth": change.get("depth", 51.0)}},
             WS[1]]
    ah.solve(W(WS), **base)
    kw = {**base, **{k: v for k, v in change.items() if k != "depth"}}
    s = ah.solve(W(terms), **kw)
    key = (spectrum._well_key(s.well), s.channel, 30, 2.0, 0.0)
    _mats, total = spectrum._CACHES["matrices"][key]
    ref, fmax = _independent_total(s.well, s.channel, 30, 2.0)
    np.testing.assert_allclose(total, ref, rtol=0, atol=RTOL_SETTLED * max(fmax, 1.0))
    if change:
        base_well = ah.Well.from_terms(WS, units="nuclear")
        old, _ = _independent_total(base_well, Channel(3, 1, 1.5), 30, 2.0)
        assert np.max(np.abs(total - old)) > 1e-6 * np.max(np.abs(old))


def test_labels_follow_the_unit_system_of_each_call():
    # l = 7: nuclear letters keep j (s p d f g h i j …), atomic ones skip it (… i k): the label
    # cache is keyed by the unit system (convention named in docs; common practice)
    well = W([{"harmonic": {"frequency": 1.0}}])
    with warnings.catch_warnings():  # labels do not depend on convergence
        warnings.simplefilter("ignore", ConvergenceWarning)
        nuclear = ah.solve(well, 3, 7, size=12, units="nuclear", levels=1)
        atomic = ah.solve(well, 3, 7, size=12, units="atomic", levels=1)
    assert nuclear.labels == ("1j",)
    assert atomic.labels == ("1k",)
