"""Spectroscopic letters and labels in the atomic and nuclear conventions (anharmony.labels).

Sources (letter sequences and orbit names quoted from memory; figure numbers not checked):
- atomic: Condon & Shortley, "The Theory of Atomic Spectra" (1935), and the NIST atomic
  spectroscopy notation (W. C. Martin & W. L. Wiese, "Atomic Spectroscopy", NIST): l = 0,
  1, 2, … is s p d f g h i k l m n o q …, the letter j left out (the same table, to l = 16,
  is in Wikipedia's "Spectroscopic notation" article).
- nuclear: Bohr & Mottelson, "Nuclear Structure" vol. I (1969), the diagram of
  single-particle orbits of the shell model, and Ring & Schuck, "The Nuclear Many-Body
  Problem" (1980), chapter 2 (the shell model): j is kept, so the l = 7 orbit of the N = 7
  shell is 1j15/2 (and l = 8 is 1k17/2).
"""

import math

import pytest

import anharmony as ah
from anharmony.errors import InputError
from anharmony.hamiltonian import Channel, level_label
from anharmony.labels import (
    ATOMIC_LETTERS,
    NUCLEAR_LETTERS,
    channel_label,
    label_convention,
    orbital_letter,
)

# Condon & Shortley / NIST: the atomic letters for l = 0 … 12 (quoted from memory).
ATOMIC_LISTING = ["s", "p", "d", "f", "g", "h", "i", "k", "l", "m", "n", "o", "q"]
# Bohr & Mottelson vol. I; Ring & Schuck: the shell-model letters for l = 0 … 10 (from memory).
NUCLEAR_LISTING = ["s", "p", "d", "f", "g", "h", "i", "j", "k", "l", "m"]


@pytest.mark.parametrize(("l", "letter"), enumerate(ATOMIC_LISTING))
def test_atomic_letters_skip_j(l, letter):
    assert orbital_letter(l, "atomic") == letter
    assert orbital_letter(l) == letter  # the default convention


@pytest.mark.parametrize(("l", "letter"), enumerate(NUCLEAR_LISTING))
def test_nuclear_letters_keep_j(l, letter):
    assert orbital_letter(l, "nuclear") == letter


def test_no_letter_is_used_twice_and_j_is_where_each_convention_puts_it():
    # Letters name l uniquely (common practice, no source); j appears only in the nuclear one.
    for letters in (ATOMIC_LETTERS, NUCLEAR_LETTERS):
        assert len(set(letters)) == len(letters)
    assert "j" not in ATOMIC_LETTERS and NUCLEAR_LETTERS.index("j") == 7


@pytest.mark.parametrize(
    ("l", "j", "nuclear", "atomic"),
    [
        # Shell-model orbits above N = 126 and in the superheavy region (Bohr & Mottelson
        # vol. I; Ring & Schuck, ch. 2; from memory): 1j15/2, 1j13/2, 1k17/2.
        (7, 7.5, "1j15/2", "1k15/2"),
        (7, 6.5, "1j13/2", "1k13/2"),
        (8, 8.5, "1k17/2", "1l17/2"),
        # Below l = 7 the conventions agree: 1i13/2, 1h11/2, 1d5/2 (same sources).
        (6, 6.5, "1i13/2", "1i13/2"),
        (5, 5.5, "1h11/2", "1h11/2"),
        (2, 2.5, "1d5/2", "1d5/2"),
    ],
)
def test_level_labels_follow_the_unit_system(l, j, nuclear, atomic):
    assert level_label(3, l, j, 0, units="nuclear") == nuclear
    assert level_label(3, l, j, 0, units=ah.get_units("nuclear")) == nuclear
    assert Channel(3, l, j).level_label(0, units="nuclear") == nuclear
    for system in ("oscillator", "molecular", "trap", "dot", "atomic"):  # j given: n l j
        assert level_label(3, l, j, 0, units=system) == atomic
    assert level_label(3, l, j, 0) == atomic  # callers without a unit system: atomic


def test_unit_systems_name_their_convention():
    # Nuclear units use the shell-model letters, molecular units the spectroscopist's v, J,
    # every other system the atomic letters (our choice of which trade each system serves;
    # DESIGN §5).
    conventions = {name: s.label_convention for name, s in ah.SYSTEMS.items()}
    assert conventions.pop("nuclear") == "nuclear"
    assert conventions.pop("molecular") == "molecular"
    assert set(conventions.values()) == {"atomic"}


def test_molecular_units_label_radial_levels_by_v_and_j():
    # the radial channel l = J of a rotating diatomic: level n is the vibrational v
    # (common practice, no source); with spin (j given) the atomic n l j labels stay
    assert level_label(3, 2, None, 0, units="molecular") == "v=0, J=2"
    assert channel_label(3, 4, None, units="molecular") == "J=4"
    assert level_label(3, 2, 2.5, 0, units="molecular") == "1d5/2"
    assert level_label(1, 0, None, 3, units="molecular") == "v=6"


def test_an_explicit_convention_overrides_the_unit_system():
    assert level_label(3, 7, 7.5, 1, units="nuclear", convention="atomic") == "2k15/2"
    assert level_label(3, 7, None, 1, units="atomic", convention="nuclear") == "2j"
    assert label_convention(None, "trap") == "atomic"


def test_channel_labels_in_both_conventions():
    assert channel_label(3, 7, 7.5, units="nuclear") == "j15/2"
    assert channel_label(3, 7, 7.5) == "k15/2" == Channel(3, 7, 7.5).label
    assert channel_label(3, 7, math.nan, convention="nuclear") == "j"  # NaN j: no spin
    # 1D and 2D labels carry no letters (DESIGN §2), whatever the convention.
    for convention in ("atomic", "nuclear"):
        assert channel_label(1, None, convention=convention) == "x"
        assert channel_label(1, 1, convention=convention) == "odd"
        assert channel_label(2, 7, convention=convention) == "m=7"
        assert level_label(2, 7, None, 1, convention=convention) == "n=1, |m|=7"
        assert level_label(1, 1, None, 2, convention=convention) == "v=5"


def test_beyond_the_letters_the_label_names_l():
    assert orbital_letter(len(NUCLEAR_LETTERS), "nuclear") == f"[l={len(NUCLEAR_LETTERS)}]"
    assert level_label(3, 40, 40.5, 0, units="nuclear") == "1[l=40]81/2"


def test_unknown_convention_is_refused_naming_the_argument():
    with pytest.raises(InputError, match=r"convention: must be one of 'atomic', 'nuclear', "
                                         r"'molecular'; got 'spectroscopic'"):
        level_label(3, 2, 2.5, 0, convention="spectroscopic")
