"""Wells are classified before they are solved: confining, finite threshold, periodic, open."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.well import CONFINING, FINITE, OPEN, PERIODIC
from refsolvers import line_richardson_levels

W = ah.Well.from_terms
LATTICE = {"expression": {"formula": "-V0*cos(k*x)**2", "parameters": {"V0": 5.0, "k": 1.3}}}


@pytest.mark.parametrize(("terms", "dimension", "kind", "threshold"), [
    # limits at infinity of the closed forms (calculus; common practice, no source)
    ([{"harmonic": {"frequency": 1.0}}], 1, CONFINING, math.inf),
    ([{"gaussian": {"depth": 3.0, "range": 1.0}}], 3, FINITE, 0.0),
    ([{"morse": {"depth": 4.0, "width": 1.0}}], 1, FINITE, 4.0),
    ([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.1}}], 1, OPEN,
     -math.inf),
    # a slow 1/r tail, and a decaying oscillation, both have a limit: not periodic
    ([{"coulomb": {"charge": -8, "radius": 3.2}}], 3, FINITE, 0.0),
    ([{"expression": {"formula": "-exp(-x**2)*cos(5*x)"}}], 1, FINITE, 0.0),
    ([LATTICE], 1, PERIODIC, math.nan),
    ([{"expression": {"formula": "-2*sin(r)**2"}}], 3, PERIODIC, math.nan),
])
def test_wells_are_classified_by_their_behaviour_at_infinity(terms, dimension, kind, threshold):
    c = W(terms).classify(dimension)
    assert c.kind == kind and c.reason
    assert c.threshold == threshold or (math.isnan(threshold) and math.isnan(c.threshold))


def test_a_periodic_lattice_is_refused_with_a_way_out():
    # −V₀ cos²(kx) has no limit at infinity, so no threshold: its spectrum is Bloch bands
    # (F. Bloch, Z. Phys. 52, 555 (1929)). It used to get threshold = V_min and every level
    # flagged as unbound, silently.
    well = W([LATTICE])
    with pytest.raises(InputError, match=r"Bloch bands .* out of scope.*harmonic term"):
        well.threshold(1)
    with pytest.raises(InputError, match="Bloch bands"):
        ah.solve(well, dimension=1, l=None)
    with pytest.raises(InputError, match="Bloch bands"):
        ah.series(well, dimension=1, l=None, level=0, orders=3)


def test_one_lattice_site_in_a_harmonic_envelope_is_confined_and_solved():
    # With a confining envelope every level is bound; the levels agree with finite
    # differences on the line (tests/refsolvers; rtol 1e-7: FD reaches ~1e-8). The auto b
    # fits the central site, and the excited levels sit on the neighbouring sites, so the
    # basis needs N ~ 200 to reach them (measured: 4e-4 off at N = 120, settled at 300).
    well = W([LATTICE, {"harmonic": {"frequency": 0.2}}])
    assert well.classify(1).kind == CONFINING
    # tolerance 1e-6 of the spacing: the check below is against FD at 1e-7 relative
    spec = ah.solve(well, dimension=1, l=None, size=300, levels=4, tolerance=1e-6)
    assert spec.bound.all()
    ref = line_richardson_levels(well.value, 0.5, -25.0, 25.0, levels=4,
                                 grids=(2000, 4000, 8000))
    np.testing.assert_allclose(spec.energies, ref.energies, rtol=1e-7)


@pytest.mark.parametrize("dimension, symmetric", [(2, False), (3, False), (1, True)])
@pytest.mark.parametrize("term", [{"tilt": {"force": 0.3}},
                                  {"anisotropic_harmonic": {"frequencies": [1.0, 2.0, 3.0]}}])
def test_a_non_central_term_has_no_radial_classification(term, dimension, symmetric):
    # A Gaussian plus a tilt falls without bound along the tilt (V → −∞ as x → −∞: the
    # well is open; elementary), but its radial limit r → ∞ along +x is +∞: the radial
    # classification said "confining" for it. Radial and parity channels refuse such terms,
    # so classify does too, with the term's own message.
    well = ah.Well.from_terms([{"gaussian": {"depth": 5.0, "range": 1.0}}, term])
    with pytest.raises(InputError, match="not central"):
        well.classify(dimension, symmetric=symmetric)
    if "tilt" in term:  # on the line the tilt is a function of x: open, threshold −∞
        assert well.classify(1).kind == "open" and well.threshold(1) == -np.inf
