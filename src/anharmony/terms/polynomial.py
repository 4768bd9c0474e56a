"""Polynomial terms: ``harmonic``, ``power`` (any real exponent) and ``polynomial``.

Polynomials enter the Hamiltonian exactly through the basis' coordinate powers (banded); a
``power`` with a negative or non-integer exponent is integrated with panels, and g/r² is the
inverse-square term absorbed into the centrifugal term of a radial channel.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..errors import InputError
from .base import ExactTerm, TermError, arr, center, number, require

__all__ = ["Harmonic", "Polynomial", "Power"]


def _top(coefficients) -> tuple[int, float] | None:
    """Highest non-constant power with a non-zero coefficient, and its coefficient."""
    top = [(p, c) for p, c in coefficients if c != 0 and p > 0]
    return max(top) if top else None


def _polynomial_limits(p: int, c: float) -> tuple[float, float]:
    plus = math.copysign(math.inf, c)
    return (-plus if p % 2 else plus, plus)


#: Largest |exponent| of a power or polynomial term: beyond it the oscillator-basis matrix
#: elements (about (N b²)^{p/2} for N states) leave the float range.
MAX_POWER = 100


def _too_high(p: float) -> str:
    return (f"must be at most {MAX_POWER} in size; got {p:g}: the matrix elements of such a "
            "power overflow in an oscillator basis (a steep wall is better made with a "
            "woods_saxon or expression term)")


@dataclass(frozen=True)
class Harmonic(ExactTerm):
    """½ k (x − x₀)², with k = mω² given as ``stiffness`` or from ``frequency`` ħω."""

    kind: ClassVar[str] = "harmonic"
    display_name: ClassVar[str] = "harmonic"
    parameters: ClassVar[tuple[str, ...]] = ("frequency", "stiffness", "center")
    linear_parameter: ClassVar[str | None] = "stiffness"
    stiffness: float = 1.0

    @classmethod
    def _build(cls, p, ctx):
        if ("frequency" in p) == ("stiffness" in p):
            raise TermError(cls.kind, "frequency", "give exactly one of frequency or stiffness")
        if "frequency" in p:
            hw = number(cls.kind, "frequency", p["frequency"], positive=True)
            k = hw**2 / (2.0 * ctx.hbar2_2m)  # mω² = (ħω)² m/ħ² = (ħω)²/(2 ħ²/2m)
        else:
            k = number(cls.kind, "stiffness", p["stiffness"], positive=True)
        return cls(center=center(cls.kind, p), stiffness=k)

    def value(self, x):
        return 0.5 * self.stiffness * (arr(x) - self.center) ** 2

    def d1(self, x):
        return self.stiffness * (arr(x) - self.center)

    def d2(self, x):
        return np.full_like(arr(x), self.stiffness)

    def limits(self):
        return (math.inf, math.inf)

    @property
    def scale(self):
        return 1.0 / math.sqrt(self.stiffness)

    def polynomial(self):
        return {2: 0.5 * self.stiffness}


@dataclass(frozen=True)
class Power(ExactTerm):
    """g (x − x₀)^p; a non-integer p uses |x − x₀|^p."""

    kind: ClassVar[str] = "power"
    display_name: ClassVar[str] = "power"
    parameters: ClassVar[tuple[str, ...]] = ("exponent", "strength", "center")
    linear_parameter: ClassVar[str | None] = "strength"
    exponent: float = 4.0
    strength: float = 0.0

    @classmethod
    def _build(cls, p, ctx):
        e = number(cls.kind, "exponent", require(cls.kind, p, "exponent"))
        if e == 0:
            raise TermError(cls.kind, "exponent", "must not be zero (use a constant polynomial)")
        if abs(e) > MAX_POWER:
            raise TermError(cls.kind, "exponent", _too_high(e))
        g = number(cls.kind, "strength", require(cls.kind, p, "strength"))
        return cls(center=center(cls.kind, p), exponent=e, strength=g)

    @property
    def _integer(self) -> bool:
        return self.exponent == int(self.exponent)

    def value(self, x):
        y = arr(x) - self.center
        if self.strength == 0.0:  # 0 · ∞ at the centre of a negative power is no term at all
            return np.zeros_like(y)
        with np.errstate(divide="ignore"):
            if self._integer:
                return self.strength * y ** self.exponent
            return self.strength * np.abs(y) ** self.exponent

    def d1(self, x):
        y = arr(x) - self.center
        p = self.exponent
        with np.errstate(divide="ignore", invalid="ignore"):
            if self._integer:
                return self.strength * p * (y ** (p - 1) if p != 1 else np.ones_like(y))
            return self.strength * p * np.abs(y) ** (p - 1) * np.sign(y)

    def d2(self, x):
        y = arr(x) - self.center
        p = self.exponent
        with np.errstate(divide="ignore", invalid="ignore"):
            if self._integer:
                if p == 1.0:
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

    @property
    def inverse_square(self):
        return self.strength if self.exponent == -2 and self.center == 0.0 else None

    def quadrature(self, radial):
        if self.exponent < 0 or not self._integer:
            return "panels"
        return super().quadrature(radial)

    def breaks(self, radial):
        if radial and self.center <= 0.0:
            return ()
        return (self.center,)

    def check_channel(self, dimension, l, j, lam):
        super().check_channel(dimension, l, j, lam)
        p = self.exponent
        if p >= 0 or self.strength == 0:
            return
        if l is None:
            if p == -2:
                raise InputError(
                    "power: an inverse-square term g/(x - x0)^2 on the whole line (dimension=1, "
                    "l=None) is a singular barrier at x0 that the Hermite basis cannot "
                    "represent, and it is not dropped silently. For the rotation of a "
                    "diatomic molecule, solve the 3D radial channel (dimension=3) with l = J "
                    "and leave the centrifugal term to the channel; for a symmetric well "
                    "with the barrier at x = 0, use the 1D parity channels (l=0 or l=1)")
            if p <= -1:
                raise InputError(
                    f"power.exponent: g/|x - x0|^{-p:g} on the whole line is not integrable "
                    "at the centre (the Hermite functions do not vanish there); use an "
                    "exponent > -1, or the 1D parity channels / a radial channel where the "
                    "basis vanishes at the origin")
            return
        if self.center != 0.0:
            raise InputError(
                f"power: a negative power (exponent {p:g}) centred at r = {self.center:g} is "
                "a singular barrier inside the channel; centre it at 0")
        if p == -2:
            return  # absorbed into the centrifugal term
        if p < -2:
            raise InputError(
                f"power.exponent: g/r^{-p:g} is more singular than the centrifugal term "
                "at r = 0 (it falls to the centre, or is a barrier the oscillator basis "
                "cannot represent); use an exponent >= -2")
        nu = (l if lam is None else lam)
        if 2.0 * nu + dimension + p <= 0.0:
            raise InputError(
                f"power.exponent: g/r^{-p:g} has divergent matrix elements in this channel "
                f"(dimension {dimension}, l = {l}: the basis functions behave like r^{nu:g} "
                "at r = 0); use a channel with larger l, or an exponent closer to 0")


@dataclass(frozen=True)
class Polynomial(ExactTerm):
    """Σ c_p (x − x₀)^p with non-negative integer powers p."""

    kind: ClassVar[str] = "polynomial"
    display_name: ClassVar[str] = "polynomial"
    parameter_facts: ClassVar[dict] = {"coefficients": ("coefficient c_p", (1, 0))}
    parameters: ClassVar[tuple[str, ...]] = ("coefficients", "center")
    coefficients: tuple[tuple[int, float], ...] = ()

    @classmethod
    def _build(cls, p, ctx):
        coeffs = require(cls.kind, p, "coefficients")
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
            if power > MAX_POWER:
                raise TermError(cls.kind, f"coefficients[{key!r}]", _too_high(power))
            items[power] = items.get(power, 0.0) + number(cls.kind, f"coefficients[{key}]", val)
        return cls(center=center(cls.kind, p), coefficients=tuple(sorted(items.items())))

    def _eval(self, x, deriv):
        y = arr(x) - self.center
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
        top = _top(self.coefficients)
        if top is None:
            const = sum(c for p, c in self.coefficients if p == 0)
            return (const, const)
        return _polynomial_limits(*top)

    @property
    def scale(self):
        top = _top(self.coefficients)
        return 1.0 if top is None else abs(top[1]) ** (-1.0 / top[0])

    def polynomial(self):
        return dict(self.coefficients)
