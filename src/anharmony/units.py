"""Unit systems (DESIGN §5) and the physical constants they need.

Every case works in one unit system. The kinetic prefactor ħ²/2m is the only place where ħ and
the particle mass enter; Coulomb terms also need e²/(4πε₀) in the system's energy × length.
All constants come from :mod:`scipy.constants`; none is typed by hand.
"""

from __future__ import annotations

from dataclasses import dataclass

from scipy import constants as sc

__all__ = ["SYSTEMS", "UnitSystem", "convert_energy", "convert_length", "get_units"]

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
            raise ValueError(f"mass must be positive; got {mass!r}")
        if self.energy_si is None:  # ħ = 1 and the mass unit is m (or mₑ)
            return 0.5 / m
        return sc.hbar**2 / (2.0 * m * self.mass_si) / (self.energy_si * self.length_si**2)

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
    ),
    "trap": UnitSystem(
        "trap", "kHz", "um", "u", _H_KHZ, _MICRON, _U, 1.0,
        "1 u (give the atom's mass)", "energy E/h in kHz", "length in micrometre",
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
        raise ValueError(f"units: unknown unit system {name!r}; expected one of {valid}") from None


def _si(system: UnitSystem) -> tuple[float, float]:
    if system.name == "atomic":
        return _ATOMIC_SI[0], _ATOMIC_SI[1]
    if system.energy_si is None:
        raise ValueError("oscillator units have no SI value; convert from a dimensional system")
    return system.energy_si, system.length_si


def convert_energy(value: float, source: str | UnitSystem, target: str | UnitSystem) -> float:
    """Convert an energy between two dimensional unit systems (e.g. cm⁻¹ → MeV)."""
    return value * _si(get_units(source))[0] / _si(get_units(target))[0]


def convert_length(value: float, source: str | UnitSystem, target: str | UnitSystem) -> float:
    """Convert a length between two dimensional unit systems (e.g. bohr → Å)."""
    return value * _si(get_units(source))[1] / _si(get_units(target))[1]
