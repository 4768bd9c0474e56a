"""Bad input to the Python API raises a clear error that names the parameter."""

import pytest

import anharmony as ah

W = ah.Well.from_terms
OSC = [{"harmonic": {"frequency": 1.0}}]


@pytest.mark.parametrize(("kwargs", "name"), [
    ({"size": 0}, "size"),
    ({"size": -3}, "size"),
    ({"size": 2.5}, "size"),
    ({"l": -1}, "l"),
    ({"dimension": 4}, "dimension"),
    ({"dimension": 2, "l": None}, "l"),
    ({"length": 0.0}, "length"),
    ({"length": -1.0}, "length"),
    ({"levels": 0}, "levels"),
    ({"levels": 100, "size": 10}, "levels"),
    ({"units": "imperial"}, "units"),
    ({"j": "5/3"}, "j"),
    ({"j": 2.5, "l": 0}, "j"),
    ({"reference": {"frequency": -1.0}}, "reference.frequency"),
    ({"reference": {"omega": 1.0}}, "reference"),
    ({"mass": -2.0}, "mass"),
])
def test_solve_rejects_bad_arguments_naming_them(kwargs, name):
    with pytest.raises((ValueError, TypeError)) as err:
        ah.solve(W(OSC), **kwargs)
    assert str(err.value).startswith(name)


@pytest.mark.parametrize(("terms", "fragment"), [
    ([{"gaussian": {"depth": -1.0, "range": 1.0}}], "well[0].gaussian.depth"),
    ([{"gaussian": {"depth": 1.0, "range": 0.0}}], "well[0].gaussian.range"),
    ([{"gaussian": {"depth": 1.0}}], "well[0].gaussian.range"),
    ([{"gaussian": {"depth": "deep", "range": 1.0}}], "well[0].gaussian.depth"),
    ([{"woods_saxon": {"depth": 50, "diffuseness": 0.6, "r0": 1.2}}],
     "well[0].woods_saxon.mass_number"),
    ([{"morse": {"depth": 1.0, "widht": 1.0}}], "did you mean 'width'"),
    ([{"quartic": {"strength": 1.0}}], "well[0].quartic: unknown term"),
    ([{"expression": {"formula": "__import__('os').system('true')"}}],
     "well[0].expression.formula"),
    ([{"harmonic": {"frequency": True}}], "well[0].harmonic.frequency"),
    ([OSC[0], {"power": {"exponent": 0, "strength": 1.0}}], "well[1].power.exponent"),
])
def test_bad_terms_raise_term_errors_naming_the_field(terms, fragment):
    with pytest.raises(ah.TermError) as err:
        W(terms)
    assert fragment in str(err.value)


def test_unsafe_formula_is_rejected_and_quoted():
    with pytest.raises(ah.TermError) as err:
        W([{"expression": {"formula": "x**2 + __import__('os').getcwd()"}}])
    assert "__import__" in str(err.value)


def test_solve_rejects_non_well():
    with pytest.raises(TypeError, match="well"):
        ah.solve({"harmonic": {}})


def test_parity_channel_of_an_asymmetric_well_is_refused():
    w = W([{"harmonic": {"frequency": 1.0}}, {"power": {"exponent": 3, "strength": 0.1}}])
    with pytest.raises(ValueError, match=r"^l: 1D parity"):
        ah.solve(w, dimension=1, l=0)


def test_spin_orbit_needs_j():
    w = W([{"woods_saxon": {"depth": 50, "radius": 4.0, "diffuseness": 0.6}},
           {"spin_orbit": {"strength": 20, "radius": 4.0, "diffuseness": 0.6}}], units="nuclear")
    with pytest.raises(ValueError, match=r"^j: required"):
        ah.solve(w, dimension=3, l=1, units="nuclear")
