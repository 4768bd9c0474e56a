"""The ``expression`` term: a formula in ``x`` (1D) or ``r`` (radial) and named parameters,
parsed by :mod:`anharmony.formula` (never ``eval``)."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from .base import Term, TermError, arr, center, number, require
from .noncentral import GeometryTerm

__all__ = ["Expression"]


@dataclass(frozen=True)
class Expression(Term):
    """A formula in ``x`` (1D) or ``r`` (radial) and named parameters, parsed safely."""

    kind: ClassVar[str] = "expression"
    display_name: ClassVar[str] = "formula"
    parameter_facts: ClassVar[dict] = {"formula": ("formula", (0, 0)),
                                       "parameters": ("formula parameter", (0, 0))}
    parameters: ClassVar[tuple[str, ...]] = ("formula", "parameters", "center")
    formula: Any = None  # anharmony.formula.Formula
    text: str = ""

    @classmethod
    def _build(cls, p, ctx):
        from ..formula import FormulaError, compile_formula

        text = require(cls.kind, p, "formula")
        if not isinstance(text, str):
            raise TermError(cls.kind, "formula", f"must be text; got {text!r}")
        params = p.get("parameters", {}) or {}
        if not isinstance(params, Mapping):
            raise TermError(cls.kind, "parameters",
                            f"must be a mapping name: value; got {params!r}")
        values = {str(k): number(cls.kind, f"parameters.{k}", v) for k, v in params.items()}
        coordinates = _field_coordinates(text)
        if coordinates:  # a formula off the line: the geometries' form of the term
            return FieldExpression.build(text, coordinates, values, p)
        variable = "r" if _uses_name(text, "r") else "x"
        try:
            f = compile_formula(text, variable=variable, parameters=values)
        except FormulaError as exc:
            raise TermError(cls.kind, "formula", str(exc)) from None
        _check_real(f, text)
        return cls(center=center(cls.kind, p), formula=f, text=text)

    def value(self, x):
        return self.formula.value(arr(x) - self.center)

    def d1(self, x):
        return self.formula.d1(arr(x) - self.center)

    def d2(self, x):
        return self.formula.d2(arr(x) - self.center)

    def limits(self):
        try:
            lo, hi = self.formula.threshold(side=-1), self.formula.threshold(side=+1)
        except Exception:
            lo = hi = math.nan
        return (float(lo), float(hi))

    def check_coordinate(self, dimension: int) -> None:
        # The coordinate is x in 1D (with or without parity) and the radius r in 2D and 3D.
        allowed = "x" if dimension == 1 else "r"
        used = self.formula.variable
        if used != allowed and self.formula.uses_variable:
            where = "a 1D well" if dimension == 1 else f"a central {dimension}D channel"
            meaning = "x" if dimension == 1 else "the radius r"
            raise TermError(self.kind, "formula",
                            f"{self.text!r} uses {used!r}, but the coordinate of {where} is "
                            f"{meaning}; write the formula in {allowed!r}")

    def polynomial(self):
        return self.formula.polynomial()


# Where a formula must be real: |x| (or r) from 1e-3 to 1e3, ten points a decade, not 0 itself
# (sin(x)/x is 0/0 there but has a limit). Wider than the wells of any unit system in use.
_PROBE = np.logspace(-3.0, 3.0, 61)


def _check_real(f: Any, text: str) -> None:
    """Refuse a formula that is not real where a well lives (``sin(x)**x`` at x = -0.5): the
    quadrature of ``run`` would otherwise fail on NaN. NaN from overflow in floats
    (``cosh(x) - sinh(x)`` at x = 1e3) is told apart by guarded mpmath values at those points."""
    import mpmath

    from ..formula.bounded import mp_value
    from ..formula.parse import coordinate_symbol

    xs = _PROBE if f.variable == "r" else np.concatenate([-_PROBE[::-1], _PROBE])
    values = f.value(xs)
    symbol = coordinate_symbol(f.variable)
    for x in sorted(xs[np.isnan(values)], key=abs):
        v = mp_value(f.numeric_expr, {symbol: float(x)})
        if v is None or mpmath.isnan(v):
            continue  # cannot tell: the quadrature decides
        im, re = mpmath.im(v), mpmath.re(v)
        if im != 0 and abs(im) > 1e-12 * abs(re):
            raise TermError("expression", "formula",
                            f"{text!r} has no real value at {f.variable} = {x:.3g} (a fractional "
                            "power or the logarithm of a negative number); a well must be real "
                            + ("for every r > 0" if f.variable == "r" else "for every x"))


def _uses_name(text: str, name: str) -> bool:
    return re.search(rf"(?<![A-Za-z0-9_]){name}(?![A-Za-z0-9_])", text) is not None


def _field_coordinates(text: str) -> tuple[str, ...]:
    """The coordinates of a formula off the line: ``rho, z`` (axial) or ``x, y[, z]``."""
    if _uses_name(text, "rho"):
        return ("rho", "z")
    if _uses_name(text, "z"):
        return ("x", "y", "z")
    if _uses_name(text, "y"):
        return ("x", "y")
    return ()


@dataclass(frozen=True)
class FieldExpression(GeometryTerm):
    """An ``expression`` in x, y[, z] (Cartesian geometry) or ρ, z (axial, symmetric about z):
    the form :meth:`Expression._build` returns for such a formula. Integrated by quadrature;
    its threshold is found by probing the well far out (``limits`` is unknown)."""

    kind: ClassVar[str] = "expression"
    registered: ClassVar[bool] = False
    display_name: ClassVar[str] = "formula"
    parameters: ClassVar[tuple[str, ...]] = Expression.parameters
    parameter_facts: ClassVar[dict] = Expression.parameter_facts
    formula: Any = None  # anharmony.formula.FieldFormula
    text: str = ""
    coordinates: tuple[str, ...] = ()

    @classmethod
    def _build(cls, p, ctx):  # made by Expression._build, never from a case-file name
        raise TypeError("FieldExpression is built by the expression term")

    @classmethod
    def build(cls, text, coordinates, values, p):
        from ..formula import FormulaError, compile_field

        if "center" in p:
            raise TermError(cls.kind, "center", "a formula in x, y, z or rho, z is written "
                            "about the origin; shift its coordinates in the formula instead")
        try:
            f = compile_field(text, coordinates, values)
        except FormulaError as exc:
            raise TermError(cls.kind, "formula", str(exc)) from None
        probe = np.concatenate([-_PROBE[::-1], _PROBE])
        grid = [np.abs(probe) if c == "rho" else probe for c in coordinates]
        if np.any(np.isnan(f.value(*grid))):
            raise TermError(cls.kind, "formula", f"{text!r} has no real value at some points "
                            f"along the diagonal ({', '.join(coordinates)} from -1e3 to 1e3); "
                            "a well must be real everywhere")
        return cls(formula=f, text=text, coordinates=tuple(coordinates))

    def check_coordinate(self, dimension: int) -> None:
        # a line or radial channel has one coordinate: say where this formula belongs
        where = ("space: {geometry: axial}" if self.coordinates[0] == "rho" else
                 "space: {geometry: cartesian}")
        raise TermError(self.kind, "formula", f"{self.text!r} uses {', '.join(self.coordinates)}"
                        f", the coordinates of a well off the line; solve it with {where} (or "
                        "anharmony.solve(..., geometry=...)); a 1D well takes 'x', a central "
                        "channel the radius 'r'")

    @property
    def dimensions(self):
        return (3,) if len(self.coordinates) == 3 or self.coordinates[0] == "rho" else (2,)

    def is_axial(self) -> bool:
        return self.coordinates[0] == "rho"

    def value_axial(self, rho, z):
        return self.formula.value(rho, z)

    def value_cartesian(self, *xs):
        if self.coordinates[0] == "rho":
            x, y, z = xs
            return self.formula.value(np.hypot(x, y), z)
        return self.formula.value(*xs)

    def limits(self):
        return (math.nan, math.nan)

    @property
    def scale(self):
        return 1.0
