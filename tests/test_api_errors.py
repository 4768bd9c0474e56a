"""Bad input to the Python API raises a clear error that names the parameter."""

import inspect
import math
import re

import pytest

import anharmony as ah
from anharmony.convergence import converge, cross_check, residual_bounds, scan_basis

W = ah.Well.from_terms
OSC = [{"harmonic": {"frequency": 1.0}}]

# The functions of the one signature pattern: well, dimension=3, l=0, j=None positional; the
# rest by keyword, sharing solve's names and defaults. Each call below is a cheap valid call
# (a harmonic well, small bases) with one argument replaced by a bad value.
FUNCTIONS = {
    "solve": (ah.solve, {}),
    # dimension given: series' default dimension is being aligned with solve's in parallel
    "series": (ah.series, {"dimension": 1, "l": 0, "orders": 2}),
    "converge": (converge, {"sizes": [4, 6], "levels": 1, "warn": False}),
    "cross_check": (cross_check, {"levels": 1}),
    "scan_basis": (scan_basis, {"sizes": [4], "lengths": [1.0], "levels": 1}),
    "residual_bounds": (residual_bounds, {"size": 6, "levels": 1}),
}
# (functions, bad keyword arguments, the name the message starts with); functions None: every
# function whose signature has all the keywords of the row
BAD = [
    (None, {"well": "harmonic"}, "well"),
    (None, {"well": OSC}, "well"),
    (None, {"dimension": 4}, "dimension"),
    (None, {"dimension": True}, "dimension"),
    (None, {"l": -1}, "l"),
    (None, {"dimension": 2, "l": None}, "l"),
    (None, {"j": "5/3"}, "j"),
    (None, {"j": 2.5, "l": 0}, "j"),  # no spin-orbit term, and j ≠ l ± 1/2
    (None, {"units": "imperial"}, "units"),
    (None, {"mass": -2.0}, "mass"),
    (None, {"mass": "heavy"}, "mass"),
    (None, {"reference": {"frequency": -1.0}}, "reference.frequency"),
    (None, {"reference": {"omega": 1.0}}, "reference"),
    (None, {"levels": 0}, "levels"),
    (None, {"levels": 1.5}, "levels"),
    (None, {"levels": 100, "size": 10}, "levels"),
    (None, {"size": 0}, "size"),
    (None, {"size": 2.5}, "size"),
    (None, {"length": -1.0}, "length"),
    (None, {"length": 0.0}, "length"),
    (("residual_bounds",), {"length": "wide"}, "length"),
    (None, {"sizes": [0]}, "sizes[0]"),
    (None, {"sizes": []}, "sizes"),
    (None, {"sizes": [4, 4]}, "sizes"),
    (None, {"lengths": [-1.0]}, "lengths[0]"),
    (None, {"lengths": "aut"}, "lengths"),
    (None, {"lengths": "auto", "frequencies": [0.0]}, "frequencies[0]"),
    (None, {"lengths": [1.0], "frequencies": [2.0]}, "frequencies"),  # both given
    (None, {"tolerance": 0.0}, "tolerance"),
    (None, {"tolerance": "tight"}, "tolerance"),
    (None, {"grow": "yes"}, "grow"),
    (("converge",), {"grow": True}, "grow"),  # growing needs a tolerance
    (None, {"max_size": 0}, "max_size"),
    (("converge",), {"max_size": 1}, "max_size"),  # a ladder needs two sizes
    (None, {"cross_check": "yes"}, "cross_check"),
    (None, {"bounds": 1}, "bounds"),
    (None, {"ir_length": "box"}, "ir_length"),
    (None, {"warn": "no"}, "warn"),
    (("converge",), {"levels": 8, "sizes": [4, 6]}, "sizes"),  # more levels than states
    (None, {"energies": [1.0, 2.0]}, "energies"),  # the base call asks for one level
    (None, {"energies": [math.nan]}, "energies[0]"),
    (None, {"rtol": 0.0}, "rtol"),
    (None, {"max_points": 2}, "max_points"),  # needs levels + 2
    (None, {"level": -1}, "level"),
    (None, {"orders": 0}, "orders"),
    (None, {"exact": "maybe"}, "exact"),
]


def _applies(names, kwargs, function):
    if names is not None:
        return function in names
    return set(kwargs) <= set(inspect.signature(FUNCTIONS[function][0]).parameters)


CASES = [pytest.param(function, kwargs, arg, id=f"{function}-{kwargs!r}")
         for names, kwargs, arg in BAD for function in FUNCTIONS
         if _applies(names, kwargs, function)]


@pytest.mark.parametrize(("function", "kwargs", "name"), CASES)
def test_bad_argument_is_refused_with_its_name(function, kwargs, name):
    # STYLE.md item 5: every error names the field; common practice, no source
    func, base = FUNCTIONS[function]
    call = {"well": W(OSC), **base, **kwargs}
    with pytest.raises((ValueError, TypeError)) as err:
        func(**call)
    text = str(err.value)
    assert text.startswith((f"{name}:", f"{name} ")), text


def test_every_argument_of_the_signature_is_fed_a_bad_value():
    # the table above must not miss an argument when a signature grows one
    for function, (func, _) in FUNCTIONS.items():
        covered = {key for names, kwargs, _ in BAD if _applies(names, kwargs, function)
                   for key in kwargs}
        missing = set(inspect.signature(func).parameters) - covered
        assert not missing, f"{function}: no bad value for {sorted(missing)}"


SHARED = ("size", "length", "units", "mass", "levels", "reference")


@pytest.mark.parametrize("func", [converge, cross_check, scan_basis, residual_bounds])
def test_convergence_functions_follow_the_signature_of_solve(func):
    # one signature pattern for the public API (this package's own convention)
    params = inspect.signature(func).parameters
    positional = [p for p in params.values() if p.kind is p.POSITIONAL_OR_KEYWORD]
    assert [p.name for p in positional] == ["well", "dimension", "l", "j"]
    assert [p.default for p in positional[1:]] == [3, 0, None]
    assert all(p.kind is p.KEYWORD_ONLY for p in params.values() if p not in positional)
    solve = inspect.signature(ah.solve).parameters
    for name in SHARED:
        if name in params:
            assert params[name].default == solve[name].default, name


@pytest.mark.parametrize("func", [converge, cross_check, scan_basis, residual_bounds])
def test_docstring_documents_every_argument_in_order(func):
    # numpydoc "Parameters" section: one "name : type" entry per argument, in signature order
    # (numpydoc format guide, doc/format.rst); common practice, no source
    doc = inspect.getdoc(func)
    section = doc.split("Parameters\n----------\n", 1)[1].split("\n\n", 1)[0]
    documented = re.findall(r"^(\w+) : \S", section, flags=re.MULTILINE)
    assert documented == list(inspect.signature(func).parameters)
    assert "[" + "channel parameters]" not in doc


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
