"""The coordinate of an ``expression`` formula must be the one of the channel it enters.

A 1D well is a function of the line coordinate x; a central well in 2D or 3D is a function of
the radius r (DESIGN §2; common practice, no source). Before this check a formula in ``x`` was
silently read as a function of r in 2D/3D, and a formula in ``r`` silently evaluated at
negative x in 1D. The positive checks use the textbook oscillator levels
E = ħω(2n + l + d/2) (Sakurai, Modern Quantum Mechanics, §3.7 and problem 2.19 for 2D).
"""

import numpy as np
import pytest

import anharmony as ah
from anharmony.hamiltonian import Channel
from tolerances import RTOL_EIGH

W = ah.Well.from_terms


def expression(text, **parameters):
    return {"expression": {"formula": text, "parameters": parameters}}


@pytest.mark.parametrize(("dimension", "l"), [(3, 0), (3, 2), (2, 0), (2, 1)])
def test_formula_in_x_is_refused_in_a_central_channel_naming_r(dimension, l):
    well = W([{"harmonic": {"frequency": 1.0}}, expression("g*x**4", g=0.1)])
    with pytest.raises(ah.TermError) as err:
        ah.solve(well, dimension=dimension, l=l, size=10, levels=2)
    message = str(err.value)
    assert message.startswith("well[1].expression.formula")
    assert "uses 'x'" in message and "write the formula in 'r'" in message


@pytest.mark.parametrize("l", [None, 0, 1])
def test_formula_in_r_is_refused_in_1d_naming_x(l):
    # r**2 is even in x, so the parity channels (l = 0, 1) would accept the well as symmetric.
    well = W([expression("0.5*r**2")])
    with pytest.raises(ah.TermError) as err:
        ah.solve(well, dimension=1, l=l, size=10, levels=2)
    message = str(err.value)
    assert message.startswith("well[0].expression.formula")
    assert "uses 'r'" in message and "write the formula in 'x'" in message


def test_series_and_matrices_check_the_coordinate_too():
    well = W([{"harmonic": {"frequency": 1.0}}, expression("0.1*x**4")])
    with pytest.raises(ah.TermError, match="write the formula in 'r'"):
        ah.series(well, dimension=3, l=0, orders=2)
    with pytest.raises(ah.TermError, match="write the formula in 'r'"):
        ah.channel_hamiltonian(well, Channel(3, 1), 8, 1.0)
    with pytest.raises(ah.TermError, match="write the formula in 'x'"):
        ah.channel_hamiltonian(W([expression("r**2")]), Channel(1, None), 8, 1.0)


def test_well_check_channel_answers_per_dimension():
    radial = W([expression("0.5*r**2")])
    line = W([expression("0.5*x**2")])
    radial.check_channel(2)
    radial.check_channel(3)
    line.check_channel(1)
    for well, dimension in [(radial, 1), (line, 2), (line, 3)]:
        with pytest.raises(ah.TermError, match=r"well\[0\]\.expression\.formula"):
            well.check_channel(dimension)


@pytest.mark.parametrize("name", ["y", "z"])
def test_y_and_z_make_a_formula_of_the_geometries_not_of_a_channel(name):
    # a formula in y or z is a well off the line (tests/test_formula_fields.py); a line or
    # radial channel refuses it and says where it belongs
    well = W([expression(f"0.5*{name}**2")])
    for dimension, l in ((1, None), (3, 0)):
        with pytest.raises(ah.TermError, match="coordinates of a well off the line"):
            ah.solve(well, dimension, l, size=8, levels=2)


@pytest.mark.parametrize(("dimension", "l"), [(3, 0), (3, 3), (2, 1)])
def test_formula_in_r_gives_the_central_oscillator_levels(dimension, l):
    # Textbook: E = ħω(2n + l + d/2) for V = r²/2 in oscillator units (Sakurai §3.7).
    s = ah.solve(W([expression("0.5*r**2")]), dimension=dimension, l=l, size=10, levels=4)
    n = np.arange(4)
    np.testing.assert_allclose(s.energies, 2 * n + l + dimension / 2, rtol=RTOL_EIGH)


@pytest.mark.parametrize("l", [None, 1])
def test_formula_in_x_gives_the_1d_oscillator_levels(l):
    # Textbook: E = ħω(v + ½); the odd parity channel holds v = 1, 3, 5, … (Sakurai §2.3).
    s = ah.solve(W([expression("0.5*x**2")]), dimension=1, l=l, size=10, levels=3)
    v = np.arange(3) if l is None else 2 * np.arange(3) + 1
    np.testing.assert_allclose(s.energies, v + 0.5, rtol=RTOL_EIGH)


@pytest.mark.parametrize("dimension", [1, 2, 3])
def test_a_formula_without_the_coordinate_fits_every_channel(dimension):
    # A constant shift V = c moves every level by c (common practice, no source).
    well = W([{"harmonic": {"frequency": 1.0}}, expression("c", c=0.25)])
    l = None if dimension == 1 else 0
    s = ah.solve(well, dimension=dimension, l=l, size=8, levels=2)
    v = np.arange(2) if dimension == 1 else 2 * np.arange(2)
    np.testing.assert_allclose(s.energies, v + dimension / 2 + 0.25, rtol=RTOL_EIGH)


def test_case_check_names_the_formula_coordinate_with_file_and_line(tmp_path):
    # A case file is refused at validation (exit 2 contract, DESIGN §7), with the term's line.
    from anharmony.cases import load_cases

    path = tmp_path / "bad.yaml"
    path.write_text("schema: 1\nspace: {dimension: 3, l: 0}\nwell:\n"
                    "  - harmonic: {frequency: 1.0}\n"
                    "  - expression: {formula: \"0.1*x**4\"}\n")
    with pytest.raises(ah.CaseError, match=r"bad\.yaml:5:.*well\[1\].*write the formula in 'r'"):
        load_cases([path])
