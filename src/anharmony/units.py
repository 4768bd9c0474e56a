"""Unit systems (DESIGN §5) and the physical constants they need.

Every case works in one unit system. The kinetic prefactor ħ²/2m is the only place where ħ and
the particle mass enter; Coulomb terms also need e²/(4πε₀) in the system's energy × length.
All constants come from :mod:`scipy.constants`; none is typed by hand.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from scipy import constants as sc

from .errors import InputError

__all__ = ["DISPLAY_ENERGY", "SYSTEMS", "UNIT_SYMBOLS", "UnitSystem", "convert_energy",
           "convert_length", "dimension_symbol", "display_energy_factor", "get_units",
           "units_string", "units_symbol"]

# SI values of one unit of each system's energy, length and mass.
_ELECTRON_VOLT = sc.electron_volt
_MEV = 1e6 * sc.electron_volt
_FM = sc.femto
_NUCLEON_MASS = 0.5 * (sc.m_p + sc.m_n)  # "nucleon": mean of proton and neutron (common practice)
_MEV_PER_C2 = _MEV / sc.c**2
_WAVENUMBER = sc.h * sc.c * 100.0  # energy of 1 cm^-1
_ANGSTROM = sc.angstrom
_U = sc.physical_constants["atomic mass constant"][0]
_H_KHZ = sc.h * 1e3
_MICRON = sc.micro
_MEV_MILLI = 1e-3 * sc.electron_volt
_NM = sc.nano
_HARTREE = sc.physical_constants["Hartree energy"][0]
_BOHR = sc.physical_constants["Bohr radius"][0]
_COULOMB_SI = sc.e**2 / (4.0 * sc.pi * sc.epsilon_0)  # e^2/(4 pi eps0) in J m


@dataclass(frozen=True)
class UnitSystem:
    """One unit system.

    Parameters
    ----------
    name
        Key of the system (``oscillator``, ``nuclear``, ``molecular``, ``trap``, ``atomic``).
    energy, length, mass
        Names of the units, as written in result files (UDUNITS spelling where one exists).
    energy_si, length_si, mass_si
        SI value of one unit; ``None`` for the dimensionless oscillator system.
    default_mass
        Particle mass used when a case gives none, in the system's mass unit.
    default_mass_note
        What the default mass is.
    energy_long, length_long
        Long names of the units, for result-file attributes.
    energy_note
        What a stored energy is when its unit is not an energy unit (``trap``: E/h, a
        frequency; ``molecular``: E/(hc), a wavenumber); added to every ``long_name`` of a
        variable in energy units. Empty for energy units proper.
    label_convention
        Letters of the spectroscopic labels (:mod:`anharmony.labels`): ``"nuclear"`` (l = 7
        is ``j``, as in ``1j15/2``) for nuclear units, ``"atomic"`` (j skipped, l = 7 is
        ``k``) for every other system.
    """

    name: str
    energy: str
    length: str
    mass: str
    energy_si: float | None
    length_si: float | None
    mass_si: float | None
    default_mass: float
    default_mass_note: str
    energy_long: str
    length_long: str
    label_convention: str = "atomic"
    energy_note: str = ""

    @property
    def energy_text(self) -> str:
        """The energy unit for messages: ``hbar*omega`` in oscillator units, else the unit."""
        return "hbar*omega" if self.name == "oscillator" else self.energy

    @property
    def length_text(self) -> str:
        """The length unit for messages: ``b`` in oscillator units, else the unit."""
        return "b" if self.name == "oscillator" else self.length

    @property
    def mass_text(self) -> str:
        """The mass unit for messages: ``m`` in oscillator units, else the unit."""
        return "m" if self.name == "oscillator" else self.mass

    def hbar2_over_2m(self, mass: float | None = None) -> float:
        """ħ²/(2m) in energy × length² of this system, for a particle of ``mass``."""
        m = self.default_mass if mass is None else float(mass)
        if not m > 0.0:
            raise InputError(f"mass must be positive; got {mass!r}")
        if self.energy_si is None:  # ħ = 1 and the mass unit is m (or mₑ)
            value = 0.5 / m
        else:
            value = sc.hbar**2 / (2.0 * m * self.mass_si) / (self.energy_si * self.length_si**2)
        if not 1e-300 < value < 1e300:
            raise InputError(f"mass {mass!r} {self.mass} gives hbar^2/2m = {value:g} "
                             f"{self.energy} {self.length}^2, outside the float range")
        return value

    @property
    def coulomb_constant(self) -> float:
        """e²/(4πε₀) in energy × length of this system (1 in oscillator and atomic units)."""
        if self.energy_si is None:
            return 1.0
        return _COULOMB_SI / (self.energy_si * self.length_si)

    def frequency_from_length(self, length: float, mass: float | None = None) -> float:
        """ħω of the oscillator of length b: ħω = ħ²/(m b²) = 2 (ħ²/2m) / b²."""
        return 2.0 * self.hbar2_over_2m(mass) / length**2

    def length_from_frequency(self, hbar_omega: float, mass: float | None = None) -> float:
        """Oscillator length b = sqrt(ħ/(mω)) = sqrt(2 (ħ²/2m) / ħω)."""
        return (2.0 * self.hbar2_over_2m(mass) / hbar_omega) ** 0.5


SYSTEMS: dict[str, UnitSystem] = {
    "oscillator": UnitSystem(
        "oscillator", "1", "1", "1", None, None, None, 1.0, "the particle mass m",
        "energy in units of hbar*omega", "length in units of the oscillator length b",
    ),
    "nuclear": UnitSystem(
        "nuclear", "MeV", "fm", "MeV/c2", _MEV, _FM, _MEV_PER_C2,
        _NUCLEON_MASS / _MEV_PER_C2, "nucleon mass, mean of proton and neutron (CODATA)",
        "energy in MeV", "length in fm", label_convention="nuclear",
    ),
    "molecular": UnitSystem(
        "molecular", "cm-1", "angstrom", "u", _WAVENUMBER, _ANGSTROM, _U, 1.0,
        "1 u (give the reduced mass)", "energy as wavenumber in cm-1", "length in angstrom",
        energy_note="energy divided by h*c: the wavenumber E/(hc)",
        label_convention="molecular",
    ),
    "trap": UnitSystem(
        "trap", "kHz", "um", "u", _H_KHZ, _MICRON, _U, 1.0,
        "1 u (give the atom's mass)", "energy E/h in kHz", "length in micrometre",
        energy_note="energy divided by the Planck constant h: the frequency E/h",
    ),
    "dot": UnitSystem(
        "dot", "meV", "nm", "m_e", _MEV_MILLI, _NM, sc.m_e, 1.0,
        "the free electron mass (give the effective mass, e.g. 0.067 for GaAs)",
        "energy in meV", "length in nm",
    ),
    "atomic": UnitSystem(
        "atomic", "hartree", "bohr", "m_e", None, None, None, 1.0, "the electron mass",
        "energy in hartree", "length in bohr",
    ),
}
# Atomic units are dimensionless like oscillator units (ħ = mₑ = e²/4πε₀ = 1), but have SI values.
_ATOMIC_SI = (_HARTREE, _BOHR, sc.m_e)


def get_units(name: str | UnitSystem) -> UnitSystem:
    """Return the unit system called ``name``; raise ``ValueError`` listing the valid names."""
    if isinstance(name, UnitSystem):
        return name
    try:
        return SYSTEMS[name]
    except (KeyError, TypeError):
        valid = ", ".join(SYSTEMS)
        raise InputError(f"units: unknown unit system {name!r}; expected one of {valid}") from None


def _si(system: UnitSystem) -> tuple[float, float]:
    if system.name == "atomic":
        return _ATOMIC_SI[0], _ATOMIC_SI[1]
    if system.energy_si is None:
        raise InputError("oscillator units have no SI value; convert from a dimensional system")
    return system.energy_si, system.length_si


def convert_energy(value: float, source: str | UnitSystem, target: str | UnitSystem) -> float:
    """Convert an energy between two dimensional unit systems (e.g. cm⁻¹ → MeV)."""
    return value * _si(get_units(source))[0] / _si(get_units(target))[0]


def convert_length(value: float, source: str | UnitSystem, target: str | UnitSystem) -> float:
    """Convert a length between two dimensional unit systems (e.g. bohr → Å)."""
    return value * _si(get_units(source))[1] / _si(get_units(target))[1]


# =========================================================================== spelling of units
# The one table of unit spellings. Keys are the CF `units` strings (UDUNITS-2 spelling where one
# exists) a result file stores; values the symbols tables and axes show. Trap energies are
# stored as E/h in kHz, a frequency unit UDUNITS parses (the long_name says "energy divided by
# the Planck constant h"), and shown as h·kHz; display energies in kelvin are E/k_B.
# `hartree`, `bohr`, `m_e` and `MeV/c2` have no UDUNITS-2 definition (docs/case-files.md).
UNIT_SYMBOLS: dict[str, str] = {
    "MeV": "MeV", "keV": "keV", "eV": "eV", "meV": "meV", "ueV": "µeV",
    "fm": "fm", "nm": "nm", "um": "µm", "angstrom": "Å", "bohr": "a₀",
    "cm": "cm", "kHz": "h·kHz", "Hz": "h·Hz", "MHz": "h·MHz", "GHz": "h·GHz", "THz": "h·THz",
    "uK": "k_B·µK", "nK": "k_B·nK", "mK": "k_B·mK", "K": "k_B·K",
    "hartree": "Eₕ", "u": "u", "m_e": "mₑ", "MeV/c2": "MeV/c²",
}
_SUPERSCRIPT = str.maketrans("-0123456789.", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹·")
_OSCILLATOR_SYMBOLS = {"energy": "ħω", "length": "b", "mass": "m"}


def _power_token(unit: str, p: float) -> str:
    q = int(p) if float(p).is_integer() else p
    return unit if q == 1 else f"{unit}{q}"


def units_string(system: str | UnitSystem, energy_power: float = 0.0,
                 length_power: float = 0.0) -> str:
    """The CF ``units`` string of energy^e × length^l in ``system``: ``"kHz um-2"``, ``"1"``.

    Powers follow UDUNITS (a space multiplies, a trailing integer is the power).
    """
    u = get_units(system)
    parts = [_power_token(name, p) for name, p in ((u.energy, energy_power),
                                                  (u.length, length_power))
             if p != 0 and name != "1"]
    return " ".join(parts) or "1"


def _screen(parts: list[tuple[str, float]]) -> str | None:
    """``[("MeV", 1), ("fm", -4)]`` → ``"MeV/fm⁴"``; a lone negative power stays ``cm⁻¹``."""
    parts = [(b, p) for b, p in parts if p != 0]
    if not parts:
        return None

    def one(base: str, p: float) -> str:
        q = int(p) if float(p).is_integer() else p
        return base if q == 1 else base + str(q).translate(_SUPERSCRIPT)

    up = [one(b, p) for b, p in parts if p > 0]
    down = [one(b, -p) for b, p in parts if p < 0]
    if not up:
        return " ".join(one(b, p) for b, p in parts)
    text = " ".join(up)
    if down:
        text += "/" + (down[0] if len(down) == 1 else "(" + " ".join(down) + ")")
    return text


def units_symbol(units: str | None, system: str | UnitSystem | None = None,
                 quantity: str | None = None) -> str | None:
    """The screen symbol of a stored CF ``units`` string, from :data:`UNIT_SYMBOLS`.

    ``"cm-1"`` → ``"cm⁻¹"``, ``"kHz"`` → ``"h·kHz"``, ``"MeV fm-4"`` → ``"MeV/fm⁴"``; ``None``
    for a pure number, except in the dimensionless ``oscillator`` system, where an energy
    (``quantity="energy"``) is in ħω and a length in b.
    """
    text = "" if units is None else str(units).strip()
    if text in ("", "1"):
        name = system.name if isinstance(system, UnitSystem) else system
        if name == "oscillator" and quantity in _OSCILLATOR_SYMBOLS:
            return _OSCILLATOR_SYMBOLS[quantity]
        return None
    if text in UNIT_SYMBOLS:  # whole strings first (MeV/c2)
        return UNIT_SYMBOLS[text]
    parts = []
    for token in text.split():
        m = re.fullmatch(r"(.*?[A-Za-z/_])(-?\d+(?:\.\d+)?)?", token)
        if not m:
            parts.append((token, 1.0))
            continue
        parts.append((UNIT_SYMBOLS.get(m[1], m[1]), float(m[2]) if m[2] else 1.0))
    return _screen(parts)


def dimension_symbol(system: str | UnitSystem, energy_power: float = 0.0,
                     length_power: float = 0.0) -> str | None:
    """Screen symbol of energy^e × length^l: ``"ħω/b⁴"`` (oscillator), ``"MeV/fm⁴"``."""
    u = get_units(system)
    if u.name == "oscillator":
        return _screen([("ħω", energy_power), ("b", length_power)])
    return units_symbol(units_string(u, energy_power, length_power), u)


# =========================================================================== display units
# Energies `show` can print per unit system: CLI name → SI value (J) of one unit. The first is
# the stored unit. Frequencies are E/h (so h·Hz is ω/2π in Hz for ħω), temperatures E/k_B.
DISPLAY_ENERGY: dict[str, dict[str, float]] = {
    "nuclear": {"MeV": _MEV, "keV": 1e3 * sc.electron_volt},
    "molecular": {"cm-1": _WAVENUMBER, "THz": sc.h * 1e12, "GHz": sc.h * 1e9,
                  "meV": _MEV_MILLI},
    "trap": {"kHz": _H_KHZ, "Hz": sc.h, "MHz": sc.h * 1e6, "uK": sc.k * 1e-6,
             "nK": sc.k * 1e-9},
    "dot": {"meV": _MEV_MILLI, "ueV": 1e-6 * sc.electron_volt, "THz": sc.h * 1e12},
    "atomic": {"hartree": _HARTREE, "eV": sc.electron_volt, "cm-1": _WAVENUMBER},
}


def display_energy_factor(system: str | UnitSystem, unit: str | None) -> tuple[float, str]:
    """(factor, symbol): a stored energy times ``factor`` is the energy in ``unit``.

    ``unit=None`` keeps the stored unit (factor 1). Raises :class:`~anharmony.errors.InputError`
    naming the valid display units of the system.
    """
    u = get_units(system)
    stored = units_symbol(u.energy, u, "energy") or ""
    if unit is None or unit == u.energy:
        return 1.0, stored
    table = DISPLAY_ENERGY.get(u.name, {})
    if not table:
        raise InputError(f"--units: {u.name} units have no other energy unit than "
                         f"{u.energy_text}; got {unit!r} (leave out --units)")
    if unit not in table:
        raise InputError(f"--units: {unit!r} is not a display unit of {u.name} units; "
                         f"expected one of {', '.join(table)}")
    return _si(u)[0] / table[unit], units_symbol(unit, u) or unit
