"""Spectroscopic labels of channels and levels (DESIGN §2), in the atomic or nuclear convention.

The orbital angular momentum l is written with a letter: s, p, d, f for l = 0…3, then the
alphabet onwards. The two trades differ from l = 7 on:

- **atomic** (Condon & Shortley; NIST atomic spectroscopy notation): the letter j is skipped,
  ``s p d f g h i k l m n o q r t u …`` (l = 7 is ``k``);
- **nuclear** (shell model; Bohr & Mottelson, *Nuclear Structure* vol. I): j is kept,
  ``s p d f g h i j k l m n o …`` (l = 7 is ``j``, the orbit ``1j15/2``).

Both skip the letters already taken (p, s) after o; beyond the last letter the label is
``[l=N]``. A third convention, **molecular**, is the spectroscopist's for the radial channel
l = J of a rotating diatomic: channels ``J=2``, levels ``v=0, J=2`` (the vibrational quantum
number v is the radial index; common practice, no source); its orbital letters, where asked
for, are the atomic ones. A unit system names its convention
(:attr:`anharmony.units.UnitSystem.label_convention`: ``nuclear`` units use the nuclear
letters, ``molecular`` units the molecular labels, every other system the atomic ones), so the
label functions take ``units=`` and follow it; ``convention=`` overrides it.
"""

from __future__ import annotations

import math

from .errors import InputError
from .units import UnitSystem, get_units

__all__ = [
    "ATOMIC_LETTERS",
    "CONVENTIONS",
    "L_LETTERS",
    "NUCLEAR_LETTERS",
    "channel_label",
    "label_convention",
    "level_label",
    "orbital_letter",
]

ATOMIC_LETTERS = "spdfghiklmnoqrtuvwxyz"  # j skipped after i (Condon & Shortley; NIST)
NUCLEAR_LETTERS = "spdfghijklmnoqrtuvwxyz"  # j kept after i (shell-model orbits, 1j15/2)
L_LETTERS = ATOMIC_LETTERS  # the default sequence, under its earlier name
_LETTERS = {"atomic": ATOMIC_LETTERS, "nuclear": NUCLEAR_LETTERS, "molecular": ATOMIC_LETTERS}
CONVENTIONS = tuple(_LETTERS)


def label_convention(convention: str | None = None,
                     units: str | UnitSystem | None = None) -> str:
    """The convention to use: ``convention`` if given, else the unit system's, else atomic.

    Raises
    ------
    InputError
        If ``convention`` is not one of :data:`CONVENTIONS`.
    ValueError
        If ``units`` names no unit system.
    """
    if convention is None:
        return "atomic" if units is None else get_units(units).label_convention
    if convention not in _LETTERS:
        raise InputError(f"convention: must be one of {', '.join(map(repr, CONVENTIONS))}; "
                         f"got {convention!r}")
    return convention


def orbital_letter(l: int, convention: str | None = None,
                   units: str | UnitSystem | None = None) -> str:
    """The letter of orbital angular momentum ``l`` (``[l=N]`` beyond the alphabet)."""
    letters = _LETTERS[label_convention(convention, units)]
    return letters[l] if 0 <= l < len(letters) else f"[l={l}]"


def _spin(j: float | None) -> str:
    return "" if j is None or not math.isfinite(j) else f"{round(2 * j)}/2"


def channel_label(dimension: int, l: int | None, j: float | None = None, *,
                  convention: str | None = None,
                  units: str | UnitSystem | None = None) -> str:
    """Label of a channel: ``x``, ``even``/``odd`` (1D), ``m=2`` (2D), ``d`` or ``d5/2`` (3D).

    ``l`` is ``None`` for the 1D basis without symmetry; ``j`` is ``None`` (or NaN) without
    spin. The letter follows :func:`label_convention`.
    """
    if l is None:
        return "x"
    if dimension == 1:
        return ("even", "odd")[l]
    if dimension == 2:
        return f"m={l}"
    if label_convention(convention, units) == "molecular" and j is None:
        return f"J={l}"
    return orbital_letter(l, convention, units) + _spin(j)


def level_label(dimension: int, l: int, j: float | None, n: int, *,
                convention: str | None = None,
                units: str | UnitSystem | None = None) -> str:
    """Label of level ``n`` (0-based radial index) of a channel.

    3D: ``n l j`` with n counted from 1 (``1d5/2``; ``2s`` without spin), the trade's
    spectroscopic convention, letters by :func:`label_convention`. 2D: ``n=0, |m|=1``. 1D:
    ``v=3`` with v the oscillator-like quantum number (v = 2n + parity in the parity channels,
    v = n without symmetry, l = −1).
    """
    if dimension == 3:
        if label_convention(convention, units) == "molecular" and j is None:
            return f"v={n}, J={l}"
        return f"{n + 1}{orbital_letter(l, convention, units)}{_spin(j)}"
    if dimension == 2:
        return f"n={n}, |m|={l}"
    return f"v={n if l < 0 else 2 * n + l}"
