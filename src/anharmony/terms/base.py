"""The base class of the terms of a well, and the parameter checks every term uses.

A term is a frozen dataclass with a case-file name (:attr:`Term.kind`). Besides its values and
derivatives it *declares* everything the rest of the code asks of it, so that a new term is one
file in this package plus its test (DEVELOPERS.md, "Adding a term to a well"):

=========================  =========================================================  =========
fact                       meaning                                                    default
=========================  =========================================================  =========
``quadrature_1d``          matrix elements in the 1D Hermite basis: ``"exact"``       panels
                           (a polynomial: banded coordinate powers), ``"weight"``
                           (analytic in x: the basis' own Gauss–Hermite rule) or
                           ``"panels"`` (composite Gauss–Legendre, for kinks)
``quadrature_radial``      the same in a radial channel, for the term centred at 0    panels
                           (``"weight"`` means analytic in r²)
:meth:`quadrature`         the kind for this instance and basis (a polynomial is
                           exact; off-centre or odd powers in r use panels)
:meth:`breaks`             coordinates where the term has a kink (panel edges)        none
``linear_parameter``       the parameter (also the dataclass field) the term is       None
                           proportional to, or ``None``
:meth:`polynomial`         coefficients of powers of (x − centre), or ``None``        None
:meth:`limits`             limits at −∞ and +∞: its contribution to the threshold     (0, 0)
``central``                a function of r alone (allowed in radial channels)         True
``spin_orbit``             a radial form multiplied by ⟨l·s⟩                           False
:attr:`inverse_square`     g of a pure g/r² term centred at 0 (absorbed into the      None
                           centrifugal term), else ``None``
:meth:`check_channel`      refuse a channel the term cannot be solved in (raises)     see below
=========================  =========================================================  =========

Perturbation order
------------------
Every term, of every kind, takes one generic key besides its own parameters: ``order``, the
power of λ with which it enters the perturbation series (:func:`anharmony.series`),
H(λ) = H_ref + Σ_k λ^k W_k. It is read here, in :meth:`Term.from_params`, once for all terms
(case files and :meth:`anharmony.Well.from_terms` dicts alike:
``{"power": {"exponent": 4, "strength": 0.1, "order": 2}}``), and kept on the term as
:attr:`Term.order` (a keyword-only field, default 1). It is not one of the term's
``parameters``: it cannot be scanned or fitted, and it changes nothing but the series —
λ = 1 is the physical well whatever the orders.
"""

from __future__ import annotations

import difflib
import math
from abc import ABC, abstractmethod
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from ..errors import InputError, TermError
from ..units import UnitSystem, get_units

__all__ = ["MAX_TERM_ORDER", "ORDER_KEY", "QUADRATURE_KINDS", "Context", "Term", "TermError",
           "arr", "center", "check_names", "diffuseness", "number", "positive", "radius",
           "require", "term_order"]

QUADRATURE_KINDS = ("exact", "weight", "panels")

#: Words (for axis labels) and dimensions (energy power, length power: a scan or fit of the
#: parameter is stored in energy^e length^l of the unit system) of parameter names that mean
#: the same in every term. A term declares others in ``parameter_facts``.
PARAMETER_FACTS: dict[str, tuple[str, tuple[float, float]]] = {
    "strength": ("strength g", (1, 0)), "frequency": ("frequency ħω", (1, 0)),
    "stiffness": ("stiffness k", (1, -2)), "depth": ("depth V₀", (1, 0)),
    "radius": ("radius R", (0, 1)), "diffuseness": ("diffuseness a", (0, 1)),
    "range": ("range a", (0, 1)), "waist": ("waist w", (0, 1)),
    "center": ("centre x₀", (0, 1)), "r0": ("radius constant r₀", (0, 1)),
    "length": ("length", (0, 1)), "width": ("width α", (0, -1)),
    "mass_number": ("mass number A", (0, 0)), "charge": ("charge Z", (0, 0)),
    "exponent": ("exponent p", (0, 0)), "rayleigh_length": ("Rayleigh length z_R", (0, 1)),
    "wavelength": ("wavelength λ", (0, 1)), "force": ("force F", (1, -1)),
    "beta2": ("quadrupole deformation β₂", (0, 0)),
    "beta4": ("hexadecapole deformation β₄", (0, 0)),
}
ORDER_KEY = "order"  # the generic key of every term: its perturbation order (module docstring)
MAX_TERM_ORDER = 100  # highest perturbation order a term may carry (series rarely pass ~200)
_REGISTRY: dict[str, type[Term]] = {}  # filled by Term.__init_subclass__


# --------------------------------------------------------------------------- parameter checks
def number(term: str, name: str, value: Any, *, positive: bool = False,
           nonnegative: bool = False, integer: bool = False) -> float:
    """A finite real parameter value, or a :class:`TermError` naming the parameter."""
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise TermError(term, name, f"must be a number; got {value!r}")
    try:
        x = float(value)
    except OverflowError:  # an integer beyond the float range (10**400)
        raise TermError(term, name, f"must be a finite number; got an integer of "
                        f"{len(str(abs(int(value))))} digits") from None
    if not math.isfinite(x):
        raise TermError(term, name, f"must be finite; got {value!r}")
    if positive and not x > 0:
        raise TermError(term, name, f"must be positive; got {value!r}")
    if nonnegative and x < 0:
        raise TermError(term, name, f"must be zero or positive; got {value!r}")
    if integer and x != int(x):
        raise TermError(term, name, f"must be an integer; got {value!r}")
    return x


def check_names(term: str, params: Mapping[str, Any], allowed: Sequence[str]) -> None:
    """Reject parameter names the term does not know, with a near-miss suggestion."""
    if not isinstance(params, Mapping):
        raise TermError(term, None, f"parameters must be a mapping; got {params!r}")
    for key in params:
        if key not in allowed:
            near = difflib.get_close_matches(str(key), allowed, n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise TermError(term, str(key), f"unknown parameter{hint}; "
                            f"valid parameters: {', '.join(allowed)}")


def term_order(term: str, value: Any) -> int:
    """The ``order`` of a term: an integer from 1 to :data:`MAX_TERM_ORDER`."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise TermError(term, ORDER_KEY, "must be an integer from 1 (the default, first "
                            f"order in λ) to {MAX_TERM_ORDER}; got {value!r}")
    if not 1 <= value <= MAX_TERM_ORDER:
        raise TermError(term, ORDER_KEY, f"must be an integer from 1 to {MAX_TERM_ORDER} "
                        "(order 0 is the reference oscillator, which the series chooses "
                        f"itself); got {value!r}")
    return int(value)


def require(term: str, params: Mapping[str, Any], name: str) -> Any:
    """The value of a required parameter."""
    if name not in params:
        raise TermError(term, name, "is required")
    return params[name]


def positive(term: str, params: Mapping[str, Any], name: str) -> float:
    """A required positive parameter."""
    return number(term, name, require(term, params, name), positive=True)


MAX_MASS_NUMBER = 1000  # nucleons; common practice, no source (the heaviest known: ~300)
MIN_SURFACE = 1e-6  # smallest diffuseness / radius of a Woods–Saxon form


def radius(term: str, params: Mapping[str, Any], name: str = "radius") -> float:
    """A radius given directly or as r0 · A^(1/3) (common practice, no source)."""
    if name in params:
        if "r0" in params or "mass_number" in params:
            raise TermError(term, name, "give either radius or r0 with mass_number, not both")
        return number(term, name, params[name], positive=True)
    if "r0" in params and "mass_number" in params:
        r0 = number(term, "r0", params["r0"], positive=True)
        a = number(term, "mass_number", params["mass_number"], positive=True, integer=True)
        if a > MAX_MASS_NUMBER:
            raise TermError(term, "mass_number", f"must be at most {MAX_MASS_NUMBER}; got "
                            f"{params['mass_number']!r} (the heaviest nuclei known have about "
                            "300 nucleons)")
        return r0 * a ** (1.0 / 3.0)
    missing = "mass_number" if "r0" in params else "r0" if "mass_number" in params else name
    raise TermError(term, missing, f"is required (give {name}, or r0 with mass_number)")


def diffuseness(term: str, params: Mapping[str, Any], radius_: float) -> float:
    """The surface diffuseness a > 0 of a Woods–Saxon form, at least MIN_SURFACE · R."""
    a = positive(term, params, "diffuseness")
    if a < MIN_SURFACE * radius_:
        raise TermError(term, "diffuseness", f"must be at least {MIN_SURFACE:g} times the "
                        f"radius ({MIN_SURFACE * radius_:.3g}); got {params['diffuseness']!r}: "
                        "a surface this sharp is a step no oscillator basis resolves")
    return a


def center(term: str, params: Mapping[str, Any]) -> float:
    """The optional ``center`` parameter (0 by default)."""
    return number(term, "center", params.get("center", 0.0))


def arr(x: Any) -> np.ndarray:
    """``x`` as a float array."""
    return np.asarray(x, dtype=float)


@dataclass(frozen=True)
class Context:
    """What a term may need from the well when it is built: units and particle mass."""

    units: UnitSystem
    mass: float | None

    @property
    def hbar2_2m(self) -> float:
        return self.units.hbar2_over_2m(self.mass)


# --------------------------------------------------------------------------- the base class
@dataclass(frozen=True)
class Term(ABC):
    """Base class of the terms of a well.

    A subclass sets :attr:`kind` and :attr:`parameters`, implements :meth:`_build`,
    :meth:`value`, :meth:`d1` and :meth:`d2`, and declares its facts (module docstring) by
    overriding the class attributes and methods whose defaults do not fit. Defining the class
    registers it in :data:`anharmony.terms.TERMS` under :attr:`kind`.
    """

    kind: ClassVar[str] = ""
    parameters: ClassVar[tuple[str, ...]] = ()
    # the term's name in axis labels ("Woods–Saxon"); default: its kind with spaces
    display_name: ClassVar[str | None] = None
    # words and dimensions of parameters not in PARAMETER_FACTS (or that differ here)
    parameter_facts: ClassVar[dict[str, tuple[str, tuple[float, float]]]] = {}
    quadrature_1d: ClassVar[str] = "panels"
    quadrature_radial: ClassVar[str] = "panels"
    linear_parameter: ClassVar[str | None] = None
    central: ClassVar[bool] = True
    spin_orbit: ClassVar[bool] = False

    center: float = 0.0
    #: Power of λ with which the term enters the perturbation series (1: the default, W₁).
    order: int = field(default=1, kw_only=True)

    def __init_subclass__(cls, **kwargs: Any) -> None:
        super().__init_subclass__(**kwargs)
        if not cls.kind or not cls.__dict__.get("registered", True):
            return  # a form another term's _build returns (not a case-file name of its own)
        for name in ("quadrature_1d", "quadrature_radial"):
            if getattr(cls, name) not in QUADRATURE_KINDS:
                raise TypeError(f"{cls.__name__}.{name} must be one of {QUADRATURE_KINDS}")
        if cls.linear_parameter is not None and cls.linear_parameter not in cls.parameters:
            raise TypeError(f"{cls.__name__}.linear_parameter {cls.linear_parameter!r} is not "
                            "one of its parameters")
        other = _REGISTRY.get(cls.kind)
        if other is not None and other.__qualname__ != cls.__qualname__:
            raise TypeError(f"term kind {cls.kind!r} is defined twice ({other.__module__} and "
                            f"{cls.__module__})")
        _REGISTRY[cls.kind] = cls

    @classmethod
    def trade_name(cls) -> str:
        """The term's name in axis labels and tables."""
        return cls.display_name or cls.kind.replace("_", " ")

    @classmethod
    def fact(cls, name: str) -> tuple[str, tuple[float, float]]:
        """Words and (energy power, length power) of parameter ``name``: the term's own
        ``parameter_facts``, else the shared :data:`PARAMETER_FACTS`.

        Raises
        ------
        KeyError
            For a parameter neither knows (a test holds every term to having all of them,
            so that no scan or fit of a new parameter is stored with a wrong unit).
        """
        if name in cls.parameter_facts:
            return cls.parameter_facts[name]
        return PARAMETER_FACTS[name]

    @classmethod
    def from_params(cls, params: Mapping[str, Any], units: str | UnitSystem = "oscillator",
                    mass: float | None = None) -> Term:
        """Build the term from its case-file parameters, checking each one.

        The generic key ``order`` (an integer from 1 to :data:`MAX_TERM_ORDER`, default 1) is
        taken out here for every kind, before the term's own parameters are checked, and set
        on the built term (:attr:`order`).
        """
        if not isinstance(params, Mapping):
            raise TermError(cls.kind, None, f"parameters must be a mapping; got {params!r}")
        own = {k: v for k, v in params.items() if k != ORDER_KEY}
        check_names(cls.kind, own, (*cls.parameters, ORDER_KEY))
        term = cls._build(own, Context(get_units(units), mass))
        if ORDER_KEY in params:
            k = term_order(cls.kind, params[ORDER_KEY])
            if k != term.order:
                # the instance was just made here and is not shared yet: set the field in
                # place rather than rebuild it (a formula term compiles on construction)
                object.__setattr__(term, "order", k)
        return term

    @classmethod
    @abstractmethod
    def _build(cls, params: dict[str, Any], ctx: Context) -> Term:
        """Check the parameters of the term and make it."""

    # values ------------------------------------------------------------------------------
    @abstractmethod
    def value(self, x: np.ndarray) -> np.ndarray:
        """V(x), vectorised."""

    @abstractmethod
    def d1(self, x: np.ndarray) -> np.ndarray:
        """V′(x), vectorised."""

    @abstractmethod
    def d2(self, x: np.ndarray) -> np.ndarray:
        """V″(x), vectorised."""

    def limits(self) -> tuple[float, float]:
        """Limits of the term at −∞ and +∞ (``±inf`` where it grows without bound)."""
        return (0.0, 0.0)

    @property
    def scale(self) -> float:
        """A length over which the term changes appreciably (used to size search grids)."""
        return 1.0

    def polynomial(self) -> dict[int, float] | None:
        """Coefficients of powers of ``(x - center)``, or ``None`` if not a polynomial."""
        return None

    # facts the Hamiltonian asks for -------------------------------------------------------
    @property
    def inverse_square(self) -> float | None:
        """g when the term is g/r² about the origin (absorbed into the centrifugal term)."""
        return None

    def quadrature(self, radial: bool) -> str:
        """How the matrix of this term is computed in a 1D (``radial=False``) or radial basis.

        A polynomial is ``"exact"`` in 1D and, in a radial channel, when it is a polynomial in
        r² (centred at 0, even powers only); about another centre it has odd powers of r,
        which are neither banded nor analytic in r², and uses panels. A ``"weight"`` term
        centred away from r = 0 is no longer analytic in r², so it uses panels too.
        """
        poly = self.polynomial()
        if poly is not None:
            if not radial or (self.center == 0.0 and all(p % 2 == 0 for p in poly)):
                return "exact"
            return "panels"
        kind = self.quadrature_radial if radial else self.quadrature_1d
        if radial and self.center != 0.0:
            return "panels"
        return kind

    def breaks(self, radial: bool) -> tuple[float, ...]:
        """Coordinates (x, or r ≥ 0) where the term has a kink: panel edges for quadrature."""
        return ()

    def check_coordinate(self, dimension: int) -> None:  # noqa: B027 (most terms fit any)
        """Raise :class:`TermError` if the term is written in another coordinate than the
        channel's (x in 1D, r in 2D/3D); only formulas can be."""

    def check_channel(self, dimension: int, l: int | None, j: float | None,
                      lam: float | None) -> None:
        """Raise :class:`InputError` if the term cannot be solved in this channel.

        ``l`` is ``None`` for the 1D basis without symmetry; ``lam`` is the effective angular
        momentum of the radial basis (``l`` unless inverse-square terms are absorbed). The
        default refuses a term that is not central in a radial channel, and a term centred at
        a negative radius.
        """
        if l is None:
            return
        if not self.central:
            raise InputError(f"{self.kind}: the term is not central (not a function of r "
                             f"alone), so it has no {_channel_name(dimension)} channels; use "
                             "dimension=1 with l=None")
        if dimension > 1 and self.center < 0.0:
            raise InputError(f"{self.kind}.center: in a central well the centre is a radius "
                             f"and must be >= 0; got {self.center}")


@dataclass(frozen=True)
class ExactTerm(Term):
    """Base of the polynomial terms: exact banded matrices in the 1D and radial bases."""

    quadrature_1d: ClassVar[str] = "exact"
    quadrature_radial: ClassVar[str] = "exact"


@dataclass(frozen=True)
class DepthTerm(Term):
    """Base of wells proportional to a depth V₀ > 0 (a depth scan reuses one pencil)."""

    linear_parameter: ClassVar[str | None] = "depth"
    depth: float = 1.0


@dataclass(frozen=True)
class AnalyticDepthTerm(DepthTerm):
    """A depth well analytic in x and, centred at 0, in r²: the basis' own Gauss rule."""

    quadrature_1d: ClassVar[str] = "weight"
    quadrature_radial: ClassVar[str] = "weight"  # analytic in r² when centred at 0


@dataclass(frozen=True)
class StrengthTerm(Term):
    """Base of terms proportional to a strength (a strength scan reuses one pencil)."""

    linear_parameter: ClassVar[str | None] = "strength"
    strength: float = 0.0

def _channel_name(dimension: int) -> str:
    return "parity" if dimension == 1 else f"{dimension}D central"
