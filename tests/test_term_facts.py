"""Every term declares the facts the rest of the code asks of it, in the registry.

The contract of the contributor guide (a new term is one file plus its test): the units a scan
or fit of a parameter is stored in come from the term class, so a parameter without declared
dimensions would be stored with a wrong unit without a word. Dimensions checked against the
definitions of DESIGN §3 (common practice, no source).
"""

from __future__ import annotations

import pytest

import anharmony as ah
from anharmony.axes import parameter_axis
from anharmony.cases import case_from_dict


@pytest.mark.parametrize("kind", list(ah.TERMS))
def test_every_parameter_of_every_term_has_words_and_dimensions(kind):
    cls = ah.TERMS[kind]
    assert cls.trade_name()
    for name in cls.parameters:
        words, dims = cls.fact(name)
        assert words and len(dims) == 2, (kind, name)


@pytest.mark.parametrize("term,name,units", [
    ({"woods_saxon": {"depth": 50.0, "radius": 4.0, "diffuseness": 0.65}}, "diffuseness", "fm"),
    ({"morse": {"depth": 30000.0, "width": 1.8, "center": 1.2}}, "width", "angstrom-1"),
    ({"harmonic": {"stiffness": 2.0}}, "stiffness", "MeV fm-2"),
    ({"tilt": {"force": 1.0, "axis": "x"}}, "force", "MeV fm-1"),
])
def test_a_parameter_is_stored_in_the_unit_its_term_declares(term, name, units):
    system = "molecular" if "morse" in term else "nuclear"
    case = case_from_dict({"schema": 1, "units": system, "space": {"dimension": 1},
                           "well": [term, {"harmonic": {"frequency": 1.0}}]
                           if "harmonic" not in term else [term]})
    assert parameter_axis(case, 0, name).units == units
