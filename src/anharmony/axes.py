"""Units and names of parameters in result files: the scan axis and fitted parameters.

One place for the CF ``units`` string, the long name, the trade name ("quartic strength g")
and the screen symbol of a case parameter (units from :mod:`anharmony.units`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    from .cases import Case

__all__ = ["ScanAxis", "energy_attrs", "parameter_axis", "parameter_units", "scan_axis",
           "scan_units"]

_POWER_WORDS = {1: "linear", 2: "quadratic", 3: "cubic", 4: "quartic", 5: "quintic",
                6: "sextic", 8: "octic"}
_SETTING_WORDS = {("particle", "mass"): ("particle mass m", (0, 0)),
                  ("reference", "frequency"): ("reference ħω", (1, 0)),
                  ("reference", "length"): ("reference length b", (0, 1)),
                  ("reference", "center"): ("reference centre x₀", (0, 1)),
                  ("basis", "length"): ("basis length b", (0, 1))}


@dataclass(frozen=True)
class ScanAxis:
    """The scanned parameter in a file and on screen.

    Attributes
    ----------
    units, long_name
        CF ``units`` (from :func:`anharmony.units.units_string`) and long name.
    display_name, display_units
        Its trade name (``"quartic strength g"``) and screen symbol (``"ħω/b⁴"``, from the
        same table, :func:`anharmony.units.dimension_symbol`); ``display_units`` is ``""``
        for a pure number.
    """

    units: str
    long_name: str
    display_name: str
    display_units: str


def _axis(u: Any, dims: tuple[float, float], long_name: str, name: str, mass: bool = False
          ) -> ScanAxis:
    from .units import dimension_symbol, units_string

    if mass:
        units = "1" if u.energy == "1" else u.mass
        shown = _symbol(units, u, "mass")
    else:
        units = units_string(u, *dims)
        shown = dimension_symbol(u, *dims) or ""
    return ScanAxis(units, long_name, name, shown)


def scan_axis(case: Case) -> ScanAxis:
    """Units, long name and trade name of the scanned parameter of ``case``."""
    u = case.units
    t = case.scan_target
    if t.kind == "coupling":
        return _axis(u, (0, 0), "coupling lambda of H = H_ref + lambda (V - V_ref)",
                     "coupling λ")
    if t.kind == "setting":
        long_name = {("particle", "mass"): "particle mass",
                     ("reference", "frequency"): "hbar*omega of the reference oscillator",
                     ("reference", "length"): "length of the reference oscillator",
                     ("reference", "center"): "centre of the reference oscillator",
                     ("basis", "length"): "oscillator length of the basis"}[t.keys]
        name, dims = _SETTING_WORDS[t.keys]
        return _axis(u, dims, long_name, name, mass=t.keys == ("particle", "mass"))
    _, name, *sub = t.keys
    return parameter_axis(case, t.term, name, *sub)


def parameter_axis(case: Case, index: int, name: str, *sub: Any) -> ScanAxis:
    """Units, long name and trade name of parameter ``name`` of term ``well[index]``.

    The words and dimensions come from the term class (:meth:`Term.fact`,
    :meth:`Term.trade_name`): the registry is the one place a term's facts live.
    """
    from .terms import TERMS

    u = case.units
    (term, params), = case.model.well[index].items()
    params = params or {}
    cls = TERMS[term]
    where = f"well[{index}]"
    long_name = f"{name} of the {term} term {where}"
    words, dims = cls.fact(name)
    if name == "strength" and term == "power":
        exponent = float(params.get("exponent", 0))
        power = _POWER_WORDS.get(int(exponent)) if exponent.is_integer() else None
        return _axis(u, (1, -exponent), long_name, f"{power or f'x^{exponent:g}'} {words}")
    if name == "coefficients":
        k = float(sub[0])
        return _axis(u, (1, -k), long_name, f"{cls.trade_name()} coefficient "
                     f"c_{int(k) if k.is_integer() else k}")
    if name == "parameters":
        return _axis(u, (0, 0), f"parameter {sub[0]} of the formula of {where}",
                     f"formula parameter {sub[0]}")
    return _axis(u, dims, long_name, f"{cls.trade_name()} {words}")


def parameter_units(case: Case, index: int, name: str, *sub: Any) -> tuple[str, str]:
    """CF units and a long name of parameter ``name`` of term ``well[index]``."""
    ax = parameter_axis(case, index, name, *sub)
    return ax.units, ax.long_name


def _symbol(units: str, system: Any, quantity: str) -> str:
    from .units import units_symbol

    return units_symbol(units, system, quantity) or ""


def scan_units(case: Case) -> tuple[str, str]:
    """CF units and a long name of the scanned parameter."""
    ax = scan_axis(case)
    return ax.units, ax.long_name


def energy_attrs(system: Any, units: str, long_name: str, **extra: Any) -> dict[str, Any]:
    """CF ``units`` and ``long_name``; where the stored unit is not an energy unit (E/h in
    kHz, E/(hc) in cm-1) the long name says what the number is (``energy_note``)."""
    note = getattr(system, "energy_note", "")
    tokens = {t.rstrip("-0123456789.") for t in str(units).split()}
    if note and system.energy in tokens:
        long_name = f"{long_name} ({note})"
    return {"units": units, "long_name": long_name, **extra}


# --------------------------------------------------------------------------- dataset
