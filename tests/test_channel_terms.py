"""No term falls out of a channel silently: each is solved there, or refused with a reason."""

import math

import numpy as np
import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.hamiltonian import Channel, channel_hamiltonian

W = ah.Well.from_terms
RTOL_EXACT = 1e-10  # the inverse-square term is absorbed exactly; N = 40 leaves rounding only


def test_inverse_square_on_the_line_without_symmetry_is_refused():
    # g/x² on the whole line is a singular barrier at x = 0 (it used to be left out, giving
    # the bare oscillator's levels); the error says what to do instead.
    well = W([{"harmonic": {"frequency": 1.0, "center": 3.0}},
              {"power": {"exponent": -2, "strength": 5.0}}])
    with pytest.raises(InputError, match=r"dimension=3\) with l = J"):
        ah.solve(well, dimension=1, l=None)
    with pytest.raises(InputError, match="singular barrier"):
        ah.series(well, dimension=1, l=None, level=0, orders=4)
    with pytest.raises(InputError, match="singular barrier"):
        ah.converge(well, dimension=1, l=None, levels=1)


@pytest.mark.parametrize(("dimension", "l"), [(1, 0), (1, 1), (2, 0), (2, 2), (3, 1)])
def test_inverse_square_in_a_central_channel_is_the_singular_oscillator(dimension, l):
    # V = ½ r² + g/r² (ħ = m = ω = 1) in d dimensions:
    # E_n = 2n + 1 + sqrt((l + d/2 − 1)² + 2g), the isotonic (singular) oscillator, a textbook
    # exact solution (e.g. F. Calogero, J. Math. Phys. 10, 2191 (1969); quoted from memory).
    # In 1D both parities give the same levels: the barrier cuts the line in two.
    g = 0.8
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": -2, "strength": g}}])
    spec = ah.solve(well, dimension=dimension, l=l, size=40, levels=4)
    nu = l + 0.5 * dimension - 1.0
    expected = 2.0 * np.arange(4) + 1.0 + math.sqrt(nu**2 + 2.0 * g)
    np.testing.assert_allclose(spec.energies, expected, rtol=RTOL_EXACT)


def test_spin_orbit_outside_the_3d_channels_with_j_is_refused():
    # ⟨l·s⟩ exists only for a spin-1/2 particle in 3D (DESIGN §2); the term used to be
    # dropped in 1D and 2D, and in 3D when the channel was given without j.
    well = W([{"gaussian": {"depth": 50.0, "range": 4.0}},  # symmetric: parity channels exist
              {"spin_orbit": {"strength": 20.0, "radius": 4.0, "diffuseness": 0.6}}],
             units="nuclear")
    for dimension, l in ((1, None), (1, 0), (2, 1)):
        with pytest.raises(InputError, match="spin_orbit: the spin-orbit term needs"):
            ah.solve(well, dimension=dimension, l=l, units="nuclear")
    with pytest.raises(InputError, match="j: required with spin_orbit"):
        channel_hamiltonian(well, Channel(3, 1), 20, 2.0)
    # l = 0 has only j = 1/2, where ⟨l·s⟩ = 0: nothing is dropped, so it is allowed
    assert channel_hamiltonian(well, Channel(3, 0), 20, 2.0).spin_orbit.any() == False  # noqa: E712


@pytest.mark.parametrize(("spec", "dimension", "l", "match"), [
    ({"exponent": -4, "strength": 0.1}, 1, None, "not integrable"),
    ({"exponent": -1, "strength": -0.5, "center": 1.0}, 1, None, "not integrable"),
    ({"exponent": -3, "strength": 0.1}, 3, 0, "more singular than the centrifugal"),
    ({"exponent": -1.5, "strength": 0.1}, 1, 0, "divergent matrix elements"),
    ({"exponent": -2, "strength": 0.1, "center": 1.0}, 3, 0, "singular barrier inside"),
])
def test_negative_powers_the_basis_cannot_represent_are_refused(spec, dimension, l, match):
    # ∫ φ_m φ_n |x|^p diverges at the centre for p ≤ −1 on the line (the Hermite functions do
    # not vanish there), and for 2λ + d + p ≤ 0 in a radial channel (R ~ r^λ); below −2 the
    # term beats the centrifugal barrier (calculus; common practice, no source). These used
    # to give finite, meaningless numbers from the quadrature.
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": spec}])
    with pytest.raises(InputError, match=match):
        channel_hamiltonian(well, Channel(dimension, l), 20, 1.0)


def test_an_integrable_negative_power_is_still_solved():
    # −g/r in 3D, l = 0 (R(0) finite, r² dr removes the singularity): the Ritz values
    # decrease towards the limit as the basis grows (Rayleigh–Ritz; common practice).
    well = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": -1, "strength": -0.5}}])
    # the 1/r cusp converges slowly: small bases are deliberately unconverged here (the test is
    # about the Ritz order), so the tolerance is opened instead of ignoring the warning
    e = [ah.solve(well, dimension=3, l=0, size=n, levels=1, tolerance=1.0).energies[0]
         for n in (10, 20, 40)]
    assert e[0] >= e[1] >= e[2]
    assert e[2] < 1.5  # below the bare oscillator's 3/2: an attractive term was added
