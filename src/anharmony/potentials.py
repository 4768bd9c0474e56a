"""Terms of a well (DESIGN §3) and the :class:`Well` that adds them up.

Each term is a frozen dataclass registered in :data:`TERMS` under its case-file name. A term
gives vectorised values and first and second derivatives, its limits at ±∞, a length scale, and
its polynomial coefficients where it is a polynomial. Terms are built from the case-file
parameter mappings by :meth:`Term.from_params`, which checks every parameter once and raises a
:class:`TermError` naming the bad one.
"""

from __future__ import annotations

import difflib
import math
from abc import ABC, abstractmethod
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
from scipy.special import expit

from .errors import TermError
from .units import UnitSystem, get_units

__all__ = [
    "TERMS",
    "Coulomb",
    "Expression",
    "Gaussian",
    "Harmonic",
    "Morse",
    "Polynomial",
    "PoschlTeller",
    "Power",
    "SpinOrbit",
    "Term",
    "TermError",
    "Well",
    "WoodsSaxon",
]




# --------------------------------------------------------------------------- parameter checks
def _number(term: str, name: str, value: Any, *, positive: bool = False,
            nonnegative: bool = False, integer: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise TermError(term, name, f"must be a number; got {value!r}")
    x = float(value)
    if not math.isfinite(x):
        raise TermError(term, name, f"must be finite; got {value!r}")
    if positive and not x > 0:
        raise TermError(term, name, f"must be positive; got {value!r}")
    if nonnegative and x < 0:
        raise TermError(term, name, f"must be zero or positive; got {value!r}")
    if integer and x != int(x):
        raise TermError(term, name, f"must be an integer; got {value!r}")
    return x


def _check_names(term: str, params: Mapping[str, Any], allowed: Sequence[str]) -> None:
    if not isinstance(params, Mapping):
        raise TermError(term, None, f"parameters must be a mapping; got {params!r}")
    for key in params:
        if key not in allowed:
            near = difflib.get_close_matches(str(key), allowed, n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise TermError(term, str(key), f"unknown parameter{hint}; "
                            f"valid parameters: {', '.join(allowed)}")


def _require(term: str, params: Mapping[str, Any], name: str) -> Any:
    if name not in params:
        raise TermError(term, name, "is required")
    return params[name]


def _radius(term: str, params: Mapping[str, Any], name: str = "radius") -> float:
    """A radius given directly or as r0 · A^(1/3) (common practice, no source)."""
    if name in params:
        if "r0" in params or "mass_number" in params:
            raise TermError(term, name, "give either radius or r0 with mass_number, not both")
        return _number(term, name, params[name], positive=True)
    if "r0" in params and "mass_number" in params:
        r0 = _number(term, "r0", params["r0"], positive=True)
        a = _number(term, "mass_number", params["mass_number"], positive=True, integer=True)
        return r0 * a ** (1.0 / 3.0)
    missing = "mass_number" if "r0" in params else "r0" if "mass_number" in params else name
    raise TermError(term, missing, f"is required (give {name}, or r0 with mass_number)")


@dataclass(frozen=True)
class _Context:
    units: UnitSystem
    mass: float | None

    @property
    def hbar2_2m(self) -> float:
        return self.units.hbar2_over_2m(self.mass)


# --------------------------------------------------------------------------- terms
@dataclass(frozen=True)
class Term(ABC):
    """Base class of the terms of a well.

    Subclasses set :attr:`kind` and :attr:`parameters`, implement :meth:`_build`,
    :meth:`value`, :meth:`d1`, :meth:`d2` and :meth:`limits`, and may override
    :meth:`polynomial`.
    """

    kind: ClassVar[str] = ""
    parameters: ClassVar[tuple[str, ...]] = ()
    spin_orbit: ClassVar[bool] = False

    @classmethod
    def from_params(cls, params: Mapping[str, Any], units: str | UnitSystem = "oscillator",
                    mass: float | None = None) -> Term:
        """Build the term from its case-file parameters, checking each one."""
        _check_names(cls.kind, params, cls.parameters)
        return cls._build(dict(params), _Context(get_units(units), mass))

    @classmethod
    @abstractmethod
    def _build(cls, params: dict[str, Any], ctx: _Context) -> Term:
        """Check the parameters of the term and make it."""

    center: float = 0.0

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

    def check_channel(self, dimension: int) -> None:  # noqa: B027 (most terms fit any channel)
        """Raise :class:`TermError` if the term cannot enter a channel of this dimension."""


def _arr(x: Any) -> np.ndarray:
    return np.asarray(x, dtype=float)


@dataclass(frozen=True)
class Harmonic(Term):
    """½ k (x − x₀)², with k = mω² given as ``stiffness`` or from ``frequency`` ħω."""

    kind: ClassVar[str] = "harmonic"
    parameters: ClassVar[tuple[str, ...]] = ("frequency", "stiffness", "center")
    stiffness: float = 1.0

    @classmethod
    def _build(cls, p: dict[str, Any], ctx: _Context) -> Harmonic:
        if ("frequency" in p) == ("stiffness" in p):
            raise TermError(cls.kind, "frequency", "give exactly one of frequency or stiffness")
        if "frequency" in p:
            hw = _number(cls.kind, "frequency", p["frequency"], positive=True)
            k = hw**2 / (2.0 * ctx.hbar2_2m)  # mω² = (ħω)² m/ħ² = (ħω)²/(2 ħ²/2m)
        else:
            k = _number(cls.kind, "stiffness", p["stiffness"], positive=True)
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), stiffness=k)

    def value(self, x):
        return 0.5 * self.stiffness * (_arr(x) - self.center) ** 2

    def d1(self, x):
        return self.stiffness * (_arr(x) - self.center)

    def d2(self, x):
        return np.full_like(_arr(x), self.stiffness)

    def limits(self):
        return (math.inf, math.inf)

    @property
    def scale(self):
        return 1.0 / math.sqrt(self.stiffness)

    def polynomial(self):
        return {2: 0.5 * self.stiffness}


@dataclass(frozen=True)
class Power(Term):
    """g (x − x₀)^p; a non-integer p uses |x − x₀|^p."""

    kind: ClassVar[str] = "power"
    parameters: ClassVar[tuple[str, ...]] = ("exponent", "strength", "center")
    exponent: float = 4.0
    strength: float = 0.0

    @classmethod
    def _build(cls, p, ctx):
        e = _number(cls.kind, "exponent", _require(cls.kind, p, "exponent"))
        if e == 0:
            raise TermError(cls.kind, "exponent", "must not be zero (use a constant polynomial)")
        g = _number(cls.kind, "strength", _require(cls.kind, p, "strength"))
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), exponent=e,
                   strength=g)

    @property
    def _integer(self) -> bool:
        return self.exponent == int(self.exponent)

    def value(self, x):
        y = _arr(x) - self.center
        with np.errstate(divide="ignore"):
            if self._integer:
                return self.strength * y ** self.exponent
            return self.strength * np.abs(y) ** self.exponent

    def d1(self, x):
        y = _arr(x) - self.center
        p = self.exponent
        with np.errstate(divide="ignore", invalid="ignore"):
            if self._integer:
                return self.strength * p * (y ** (p - 1) if p != 1 else np.ones_like(y))
            return self.strength * p * np.abs(y) ** (p - 1) * np.sign(y)

    def d2(self, x):
        y = _arr(x) - self.center
        p = self.exponent
        with np.errstate(divide="ignore", invalid="ignore"):
            if self._integer:
                if p in (1.0,):
                    return np.zeros_like(y)
                return self.strength * p * (p - 1) * (y ** (p - 2) if p != 2 else np.ones_like(y))
            return self.strength * p * (p - 1) * np.abs(y) ** (p - 2)

    def limits(self):
        g, p = self.strength, self.exponent
        if p < 0 or g == 0:
            return (0.0, 0.0)
        plus = math.copysign(math.inf, g)
        odd = self._integer and int(p) % 2 == 1
        return (-plus if odd else plus, plus)

    @property
    def scale(self):
        return abs(self.strength) ** (-1.0 / self.exponent) if self.strength else 1.0

    def polynomial(self):
        if self._integer and self.exponent > 0:
            return {int(self.exponent): self.strength}
        return None


@dataclass(frozen=True)
class Polynomial(Term):
    """Σ c_p (x − x₀)^p with non-negative integer powers p."""

    kind: ClassVar[str] = "polynomial"
    parameters: ClassVar[tuple[str, ...]] = ("coefficients", "center")
    coefficients: tuple[tuple[int, float], ...] = ()

    @classmethod
    def _build(cls, p, ctx):
        coeffs = _require(cls.kind, p, "coefficients")
        if not isinstance(coeffs, Mapping) or not coeffs:
            raise TermError(cls.kind, "coefficients",
                            f"must be a non-empty mapping of power: value; got {coeffs!r}")
        items = {}
        for key, val in coeffs.items():
            try:
                power = int(key)
            except (TypeError, ValueError):
                power = -1
            if isinstance(key, bool) or power < 0 or str(power) != str(key).strip():
                raise TermError(cls.kind, f"coefficients[{key!r}]",
                                "powers must be integers 0, 1, 2, …")
            items[power] = items.get(power, 0.0) + _number(cls.kind, f"coefficients[{key}]", val)
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)),
                   coefficients=tuple(sorted(items.items())))

    def _eval(self, x, deriv):
        y = _arr(x) - self.center
        out = np.zeros_like(y)
        for power, c in self.coefficients:
            if power < deriv:
                continue
            fac = math.perm(power, deriv)
            out = out + c * fac * y ** (power - deriv)
        return out

    def value(self, x):
        return self._eval(x, 0)

    def d1(self, x):
        return self._eval(x, 1)

    def d2(self, x):
        return self._eval(x, 2)

    def limits(self):
        top = [(p, c) for p, c in self.coefficients if c != 0 and p > 0]
        if not top:
            const = sum(c for p, c in self.coefficients if p == 0)
            return (const, const)
        p, c = max(top)
        plus = math.copysign(math.inf, c)
        return (-plus if p % 2 else plus, plus)

    @property
    def scale(self):
        top = [(p, c) for p, c in self.coefficients if c != 0 and p > 0]
        if not top:
            return 1.0
        p, c = max(top)
        return abs(c) ** (-1.0 / p)

    def polynomial(self):
        return dict(self.coefficients)


@dataclass(frozen=True)
class Gaussian(Term):
    """−V₀ exp(−(x − x₀)²/a²); ``waist`` w means a = w/√2 (V = −V₀ e^{−2r²/w²})."""

    kind: ClassVar[str] = "gaussian"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "range", "waist", "center")
    depth: float = 1.0
    range: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        depth = _number(cls.kind, "depth", _require(cls.kind, p, "depth"), positive=True)
        if ("range" in p) == ("waist" in p):
            raise TermError(cls.kind, "range", "give exactly one of range or waist")
        if "range" in p:
            a = _number(cls.kind, "range", p["range"], positive=True)
        else:
            a = _number(cls.kind, "waist", p["waist"], positive=True) / math.sqrt(2.0)
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), depth=depth, range=a)

    def _g(self, x):
        y = (_arr(x) - self.center) / self.range
        return y, np.exp(-y * y)

    def value(self, x):
        return -self.depth * self._g(x)[1]

    def d1(self, x):
        y, g = self._g(x)
        return 2.0 * self.depth * y * g / self.range

    def d2(self, x):
        y, g = self._g(x)
        return 2.0 * self.depth * (1.0 - 2.0 * y * y) * g / self.range**2

    @property
    def scale(self):
        return self.range


@dataclass(frozen=True)
class WoodsSaxon(Term):
    """−V₀ / (1 + exp((r − R)/a)), R given or R = r₀ A^(1/3)."""

    kind: ClassVar[str] = "woods_saxon"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "radius", "r0", "mass_number",
                                             "diffuseness")
    depth: float = 50.0
    radius: float = 4.0
    diffuseness: float = 0.65

    @classmethod
    def _build(cls, p, ctx):
        depth = _number(cls.kind, "depth", _require(cls.kind, p, "depth"), positive=True)
        a = _number(cls.kind, "diffuseness", _require(cls.kind, p, "diffuseness"), positive=True)
        return cls(depth=depth, radius=_radius(cls.kind, p), diffuseness=a)

    def _f(self, r):
        return expit(-(_arr(r) - self.radius) / self.diffuseness)  # stable 1/(1+e^{(r-R)/a})

    def value(self, r):
        return -self.depth * self._f(r)

    def d1(self, r):
        f = self._f(r)
        return self.depth * f * (1.0 - f) / self.diffuseness

    def d2(self, r):
        f = self._f(r)
        return -self.depth * f * (1.0 - f) * (1.0 - 2.0 * f) / self.diffuseness**2

    @property
    def scale(self):
        return self.radius


@dataclass(frozen=True)
class SpinOrbit(Term):
    """Radial form V_ls r_ls² (1/r) df/dr of the spin–orbit term; multiplied by ⟨l·s⟩.

    f is the Woods–Saxon form 1/(1 + e^{(r−R)/a}); V_ls > 0 lowers j = l + ½.
    """

    kind: ClassVar[str] = "spin_orbit"
    parameters: ClassVar[tuple[str, ...]] = ("strength", "radius", "r0", "mass_number",
                                             "diffuseness", "length")
    spin_orbit: ClassVar[bool] = True
    strength: float = 0.0
    radius: float = 4.0
    diffuseness: float = 0.65
    length: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        s = _number(cls.kind, "strength", _require(cls.kind, p, "strength"))
        a = _number(cls.kind, "diffuseness", _require(cls.kind, p, "diffuseness"), positive=True)
        ls = _number(cls.kind, "length", p.get("length", 1.0), positive=True)
        return cls(strength=s, radius=_radius(cls.kind, p), diffuseness=a, length=ls)

    def _form(self, r):
        """r, the prefactor V_ls r_ls², and f′, f″, f‴ of the Woods–Saxon form."""
        r = _arr(r)
        a = self.diffuseness
        f = expit(-(r - self.radius) / a)
        g = f * (1.0 - f)
        return (r, self.strength * self.length**2, -g / a, g * (1.0 - 2.0 * f) / a**2,
                -g * (1.0 - 6.0 * g) / a**3)

    def value(self, r):
        r, c, f1, _, _ = self._form(r)
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * f1 / r

    def d1(self, r):
        r, c, f1, f2, _ = self._form(r)  # d/dr (f′/r) = f″/r − f′/r²
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * (f2 / r - f1 / r**2)

    def d2(self, r):
        r, c, f1, f2, f3 = self._form(r)  # d²/dr² (f′/r) = f‴/r − 2f″/r² + 2f′/r³
        with np.errstate(divide="ignore", invalid="ignore"):
            return c * (f3 / r - 2.0 * f2 / r**2 + 2.0 * f1 / r**3)

    @property
    def scale(self):
        return self.radius


@dataclass(frozen=True)
class Coulomb(Term):
    """Coulomb field of a uniformly charged sphere of charge Z (times the particle's)."""

    kind: ClassVar[str] = "coulomb"
    parameters: ClassVar[tuple[str, ...]] = ("charge", "radius", "r0", "mass_number")
    charge: float = 1.0
    radius: float = 1.0
    e2: float = 1.0  # e²/(4πε₀) in the unit system's energy × length

    @classmethod
    def _build(cls, p, ctx):
        z = _number(cls.kind, "charge", _require(cls.kind, p, "charge"))
        return cls(charge=z, radius=_radius(cls.kind, p), e2=ctx.units.coulomb_constant)

    def value(self, r):
        r = np.abs(_arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, k * (3.0 - (r / rc) ** 2) / (2.0 * rc), k / r)

    def d1(self, r):
        r = np.abs(_arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, -k * r / rc**3, -k / r**2)

    def d2(self, r):
        r = np.abs(_arr(r))
        k, rc = self.charge * self.e2, self.radius
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r < rc, -k / rc**3, 2.0 * k / r**3)

    @property
    def scale(self):
        return self.radius


@dataclass(frozen=True)
class Morse(Term):
    """D (1 − e^{−α(x − x₀)})²."""

    kind: ClassVar[str] = "morse"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "width", "center")
    depth: float = 1.0
    width: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        d = _number(cls.kind, "depth", _require(cls.kind, p, "depth"), positive=True)
        a = _number(cls.kind, "width", _require(cls.kind, p, "width"), positive=True)
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), depth=d, width=a)

    def _e(self, x):
        with np.errstate(over="ignore"):
            return np.exp(-self.width * (_arr(x) - self.center))

    def value(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return self.depth * (1.0 - e) ** 2

    def d1(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return 2.0 * self.depth * self.width * e * (1.0 - e)

    def d2(self, x):
        e = self._e(x)
        with np.errstate(over="ignore", invalid="ignore"):
            return 2.0 * self.depth * self.width**2 * e * (2.0 * e - 1.0)

    def limits(self):
        return (math.inf, self.depth)

    @property
    def scale(self):
        return 1.0 / self.width


@dataclass(frozen=True)
class PoschlTeller(Term):
    """−V₀ / cosh²((x − x₀)/a)."""

    kind: ClassVar[str] = "poschl_teller"
    parameters: ClassVar[tuple[str, ...]] = ("depth", "range", "center")
    depth: float = 1.0
    range: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        d = _number(cls.kind, "depth", _require(cls.kind, p, "depth"), positive=True)
        a = _number(cls.kind, "range", _require(cls.kind, p, "range"), positive=True)
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), depth=d, range=a)

    def _st(self, x):
        y = (_arr(x) - self.center) / self.range
        return 1.0 / np.cosh(np.clip(y, -700, 700)) ** 2, np.tanh(y)

    def value(self, x):
        return -self.depth * self._st(x)[0]

    def d1(self, x):
        s2, t = self._st(x)
        return 2.0 * self.depth * s2 * t / self.range

    def d2(self, x):
        s2, t = self._st(x)
        return 2.0 * self.depth * s2 * (s2 - 2.0 * t * t) / self.range**2

    @property
    def scale(self):
        return self.range


@dataclass(frozen=True)
class Expression(Term):
    """A formula in ``x`` (1D) or ``r`` (radial) and named parameters, parsed safely."""

    kind: ClassVar[str] = "expression"
    parameters: ClassVar[tuple[str, ...]] = ("formula", "parameters", "center")
    formula: Any = None  # anharmony.formula.Formula
    text: str = ""

    @classmethod
    def _build(cls, p, ctx):
        from .formula import FormulaError, compile_formula

        text = _require(cls.kind, p, "formula")
        if not isinstance(text, str):
            raise TermError(cls.kind, "formula", f"must be text; got {text!r}")
        params = p.get("parameters", {}) or {}
        if not isinstance(params, Mapping):
            raise TermError(cls.kind, "parameters",
                            f"must be a mapping name: value; got {params!r}")
        values = {str(k): _number(cls.kind, f"parameters.{k}", v) for k, v in params.items()}
        variable = "r" if _uses_name(text, "r") else "x"
        try:
            f = compile_formula(text, variable=variable, parameters=values)
        except FormulaError as exc:
            raise TermError(cls.kind, "formula", str(exc)) from None
        return cls(center=_number(cls.kind, "center", p.get("center", 0.0)), formula=f, text=text)

    def value(self, x):
        return self.formula.value(_arr(x) - self.center)

    def d1(self, x):
        return self.formula.d1(_arr(x) - self.center)

    def d2(self, x):
        return self.formula.d2(_arr(x) - self.center)

    def limits(self):
        try:
            lo, hi = self.formula.threshold(side=-1), self.formula.threshold(side=+1)
        except Exception:
            lo = hi = math.nan
        return (float(lo), float(hi))

    def polynomial(self):
        return self.formula.polynomial()

    def check_channel(self, dimension: int) -> None:
        # The coordinate is x in 1D (with or without parity) and the radius r in 2D and 3D.
        allowed = "x" if dimension == 1 else "r"
        used = self.formula.variable
        if used != allowed and self.formula.uses_variable:
            where = "a 1D well" if dimension == 1 else f"a central {dimension}D channel"
            meaning = "x" if dimension == 1 else "the radius r"
            raise TermError(self.kind, "formula",
                            f"{self.text!r} uses {used!r}, but the coordinate of {where} is "
                            f"{meaning}; write the formula in {allowed!r}")


def _uses_name(text: str, name: str) -> bool:
    import re

    return re.search(rf"(?<![A-Za-z0-9_]){name}(?![A-Za-z0-9_])", text) is not None


TERMS: dict[str, type[Term]] = {
    cls.kind: cls
    for cls in (Harmonic, Power, Polynomial, Gaussian, WoodsSaxon, SpinOrbit, Coulomb, Morse,
                PoschlTeller, Expression)
}


# --------------------------------------------------------------------------- the well
def _sum(terms: Sequence[Term], method: Callable[[Term], Callable], x) -> np.ndarray:
    x = _arr(x)
    out = np.zeros_like(x)
    for t in terms:
        out = out + method(t)(x)
    return out


@dataclass(frozen=True)
class Well:
    """A well: a list of terms whose potentials add, in one unit system.

    Build it with :meth:`from_terms` from the same single-key mappings as the case file's
    ``well:`` list. The central potential (everything but spin–orbit) is :meth:`value`.
    """

    terms: tuple[Term, ...]
    specs: tuple[tuple[str, Any], ...] = field(default=(), repr=False)
    units: UnitSystem = field(default_factory=lambda: get_units("oscillator"))
    mass: float | None = None
    _memo: dict = field(default_factory=dict, repr=False, compare=False, hash=False)

    @classmethod
    def from_terms(cls, terms: Sequence[Mapping[str, Any]] | Sequence[Term],
                   units: str | UnitSystem = "oscillator", mass: float | None = None) -> Well:
        """Build a well from ``[{"harmonic": {...}}, {"power": {...}}, …]``.

        Raises
        ------
        TermError
            For an unknown term or a bad parameter; ``str(err)`` starts with
            ``well[i].<term>.<parameter>``.
        """
        system = get_units(units)
        if mass is not None and not (isinstance(mass, (int, float)) and mass > 0):
            raise ValueError(f"mass: must be a positive number; got {mass!r}")
        if isinstance(terms, (str, bytes, Mapping)) or not isinstance(terms, Sequence):
            raise TypeError(f"terms: expected a list of single-key mappings; got {terms!r}")
        if not terms:
            raise ValueError("terms: a well needs at least one term")
        built, specs = [], []
        for i, spec in enumerate(terms):
            if isinstance(spec, Term):
                built.append(spec)
                specs.append((spec.kind, spec))
                continue
            if not isinstance(spec, Mapping) or len(spec) != 1:
                raise TypeError(f"well[{i}]: expected a mapping with one term name as its key; "
                                f"got {spec!r}")
            (name, params), = spec.items()
            if name not in TERMS:
                near = difflib.get_close_matches(str(name), list(TERMS), n=1)
                hint = f" (did you mean {near[0]!r}?)" if near else ""
                raise TermError(f"well[{i}].{name}", None,
                                f"unknown term{hint}; known terms: {', '.join(TERMS)}")
            try:
                built.append(TERMS[name].from_params(params or {}, system, mass))
            except TermError as exc:
                raise TermError(f"well[{i}].{name}", exc.field, exc.message) from None
            specs.append((name, dict(params or {})))
        return cls(terms=tuple(built), specs=tuple(specs), units=system, mass=mass)

    def check_channel(self, dimension: int) -> None:
        """Raise :class:`TermError` (``well[i].<term>.<parameter>``) if a term does not fit
        channels of ``dimension``: a formula must be in ``x`` in 1D and in ``r`` in 2D/3D."""
        for i, t in enumerate(self.terms):
            try:
                t.check_channel(dimension)
            except TermError as exc:
                raise TermError(f"well[{i}].{t.kind}", exc.field, exc.message) from None

    def with_context(self, units: str | UnitSystem, mass: float | None) -> Well:
        """The same well rebuilt for another unit system or particle mass."""
        system = get_units(units)
        if system == self.units and mass == self.mass:
            return self
        raw = [s if isinstance(s, Term) else {k: s} for k, s in self.specs]
        return Well.from_terms(raw, system, mass)

    # central potential ----------------------------------------------------------------
    @property
    def central_terms(self) -> tuple[Term, ...]:
        return tuple(t for t in self.terms if not t.spin_orbit)

    @property
    def spin_orbit_terms(self) -> tuple[Term, ...]:
        return tuple(t for t in self.terms if t.spin_orbit)

    @property
    def has_spin_orbit(self) -> bool:
        return bool(self.spin_orbit_terms)

    def value(self, x) -> np.ndarray:
        """Central potential V(x) (spin–orbit excluded)."""
        return _sum(self.central_terms, lambda t: t.value, x)

    def d1(self, x) -> np.ndarray:
        return _sum(self.central_terms, lambda t: t.d1, x)

    def d2(self, x) -> np.ndarray:
        return _sum(self.central_terms, lambda t: t.d2, x)

    def spin_orbit_value(self, r) -> np.ndarray:
        """Sum of the spin–orbit radial forms (to be multiplied by ⟨l·s⟩)."""
        return _sum(self.spin_orbit_terms, lambda t: t.value, r)

    @property
    def scale(self) -> float:
        """The largest length scale of the terms."""
        return max(t.scale for t in self.terms)

    @property
    def center(self) -> float:
        """Mean centre of the terms that have one (0 for central wells)."""
        cs = [t.center for t in self.central_terms]
        return float(np.mean(cs)) if cs else 0.0

    def limits(self) -> tuple[float, float]:
        """Limits of the central potential at −∞ and +∞."""
        lo = hi = 0.0
        for t in self.central_terms:
            a, b = t.limits()
            lo, hi = lo + a, hi + b
        if math.isnan(lo) or math.isnan(hi):  # competing infinities or unknown limits
            far = 1e3 * self.scale + abs(self.center)
            vlo, vhi = self.value(np.array([-far, far]))
            lo = lo if not math.isnan(lo) else _far_limit(vlo, self.value(-2 * far))
            hi = hi if not math.isnan(hi) else _far_limit(vhi, self.value(2 * far))
        return (lo, hi)

    def threshold(self, dimension: int = 3, symmetric: bool = False) -> float:
        """Threshold of the continuum: lim V(r→∞) for central wells, the lower side in 1D."""
        lo, hi = self.limits()
        if dimension == 1 and not symmetric:
            return min(lo, hi)
        return hi

    def polynomial(self, center: float = 0.0) -> dict[int, float] | None:
        """The central potential as Σ c_p (x − center)^p, or ``None`` if it is not one."""
        out: dict[int, float] = {}
        for t in self.central_terms:
            poly = t.polynomial()
            if poly is None:
                return None
            shift = t.center - center  # (x - c_t) = (x - center) - shift
            for p, c in poly.items():
                for k in range(p + 1):
                    out[k] = out.get(k, 0.0) + c * math.comb(p, k) * (-shift) ** (p - k)
        return {p: c for p, c in sorted(out.items()) if c != 0.0} or {0: 0.0}

    def is_symmetric(self, center: float | None = None, rtol: float = 1e-12) -> bool:
        """True if V(c + x) = V(c − x) on a test grid (so 1D parity channels apply)."""
        c = self.center if center is None else center
        x = np.linspace(0.05, 6.0, 61) * self.scale
        a, b = self.value(c + x), self.value(c - x)
        fin = np.isfinite(a) & np.isfinite(b)
        if not np.array_equal(np.isfinite(a), np.isfinite(b)):
            return False
        return bool(np.allclose(a[fin], b[fin], rtol=rtol, atol=rtol * np.max(np.abs(a[fin]) + 1)))

    def minimum(self, radial: bool = False, near: float | None = None
                ) -> tuple[float, float, float]:
        """Local minimum nearest the centre of the terms: (position, V_min, V″ there).

        For radial wells the search is over r ≥ 0, and a minimum at r = 0 with V′(0) ≠ 0 (a
        cusp, as for Woods–Saxon) is reported with V″ = 0.
        """
        key = ("minimum", radial, near)
        if key not in self._memo:  # a well is immutable: its minimum is found once
            self._memo[key] = self._minimum(radial, near)
        return self._memo[key]

    def _minimum(self, radial: bool, near: float | None) -> tuple[float, float, float]:
        from scipy.optimize import minimize_scalar

        c = self.center if near is None else near
        span = 12.0 * self.scale
        lo = 0.0 if radial else c - span
        grid = np.linspace(lo, c + span, 4001)
        with np.errstate(all="ignore"):
            v = self.value(grid)
        v = np.where(np.isfinite(v), v, np.inf)
        inner = np.flatnonzero((v[1:-1] <= v[:-2]) & (v[1:-1] <= v[2:])) + 1
        cand = list(inner)
        if radial and v[0] <= v[1]:
            cand.append(0)
        if not cand:
            raise ValueError("the well has no local minimum near its centre; give reference "
                             "frequency and center explicitly")
        i = min(cand, key=lambda k: (abs(grid[k] - c), v[k]))
        if i == 0 and radial:
            slope = float(self.d1(np.array([0.0]))[0])
            x0 = 0.0
            if abs(slope) > 1e-9 * max(1.0, abs(v[0])) / self.scale:
                return 0.0, float(v[0]), 0.0
        else:
            a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
            res = minimize_scalar(lambda t: float(self.value(np.array([t]))[0]), bounds=(a, b),
                                  method="bounded", options={"xatol": 1e-12 * max(1, abs(b))})
            x0 = float(res.x)
            # polish with Newton on V' where the derivative is available
            for _ in range(3):
                d2 = float(self.d2(np.array([x0]))[0])
                if not d2 > 0:
                    break
                x0 -= float(self.d1(np.array([x0]))[0]) / d2
        return x0, float(self.value(np.array([x0]))[0]), float(self.d2(np.array([x0]))[0])


def _far_limit(v_far: float, v_farther: float) -> float:
    if not np.isfinite(v_far):
        return float(v_far)
    if abs(v_farther) > 2.0 * abs(v_far) + 1e-300:  # still growing: treat as unbounded
        return math.copysign(math.inf, v_farther)
    return float(v_farther)
