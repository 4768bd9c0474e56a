"""Analysis of a parsed formula: numbers, derivatives, polynomial form and limits at infinity.

:class:`Formula` holds the validated sympy expression of :mod:`anharmony.formula.parse` and
turns it into numpy functions with :func:`sympy.lambdify`, whose generated source contains
nothing but printed sympy numbers, the coordinate's name and numpy / scipy function names.
Derivatives (in the coordinate and in each parameter) are exact sympy derivatives; the
polynomial form and the limits at ±∞ come from sympy, with numeric fallbacks.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import mpmath
import numpy as np
import scipy.special
import sympy as sp

from ..errors import FormulaError
from .bounded import (
    MAX_TOWER_FOR_SYMPY,
    SYMPY_CALL_BUDGET,
    mp_value,
    tower_height,
    within_budget,
)
from .parse import (
    _short,
    check_constant_parts,
    check_parameter_values,
    coordinate_symbol,
    exact_rational,
    parameter_symbol,
    parse,
)

__all__ = ["MAX_POLYNOMIAL_DEGREE", "FieldFormula", "Formula", "compile_field",
           "compile_formula"]

MAX_POLYNOMIAL_DEGREE = 100  # above this, polynomial() answers None (use quadrature)

# Where lambdify should find erf: scipy.special; everything else from numpy.
_MODULES = [{"erf": scipy.special.erf}, "numpy"]


def compile_formula(
    text: str, variable: str = "x", parameters: Mapping[str, float] | None = None
) -> Formula:
    """Parse a formula safely and return a :class:`Formula`.

    Parameters
    ----------
    text
        The formula, at most :data:`MAX_LENGTH` characters.
    variable
        ``"x"`` (1D coordinate) or ``"r"`` (radial coordinate).
    parameters
        Names (plain identifiers: a letter, then letters, digits or ``_``; no keywords, no
        function or constant names, not the variable) and finite real values.

    Returns
    -------
    Formula

    Raises
    ------
    FormulaError
        If the text uses anything outside the grammar of :mod:`.parse`, is too long or
        too deep, or uses an unknown name (with a near-miss suggestion); the message quotes
        the offending piece and says what is allowed.
    TypeError
        If ``text`` is not a string or ``parameters`` not a mapping.

    Examples
    --------
    >>> f = compile_formula("0.5*x**2 + g*x**4", parameters={"g": 0.1})
    >>> f.polynomial()
    {2: 0.5, 4: 0.1}
    """
    expr, params = parse(text, variable, parameters)
    return Formula(text=text, variable=variable, parameters=MappingProxyType(params), expr=expr)


@dataclass(frozen=True)
class Formula:
    """A validated formula: a sympy expression and numpy functions for it and its derivatives.

    Build it with :func:`compile_formula`, never directly from user text.

    Parameters
    ----------
    text
        The formula as given.
    variable
        The coordinate, ``"x"`` (1D, real) or ``"r"`` (radial, positive).
    parameters
        Read-only mapping of parameter names to values.
    expr
        The sympy expression, with the parameters still as symbols.

    Notes
    -----
    Numerical evaluation follows numpy with its floating-point warnings silenced: the square
    root or logarithm of a negative number, and fractional powers of negative numbers, give
    ``nan``; division by zero and ``log(0)`` give ``±inf``; overflow gives ``inf``. Nothing
    raises and no warning is issued. ``r`` is declared positive, so sympy simplifies
    ``sqrt(r**2)`` to ``r`` and ``abs(r)`` to ``r``; radial formulas are meant for ``r >= 0``.
    At the kink of ``abs`` the second derivative is taken as 0 (the delta function of the
    distributional derivative is dropped).
    """

    text: str
    variable: str
    parameters: Mapping[str, float]
    expr: sp.Expr
    _numeric: sp.Expr = field(init=False, repr=False, compare=False)
    _functions: tuple[Callable[..., Any], ...] = field(init=False, repr=False, compare=False)
    _cache: dict = field(init=False, repr=False, compare=False, default_factory=dict)

    def __post_init__(self) -> None:
        symbol = coordinate_symbol(self.variable)
        values = {parameter_symbol(k): exact_rational(v) for k, v in self.parameters.items()}
        unknown = self.expr.free_symbols - {symbol, *values}
        if unknown:
            raise FormulaError(
                f"formula {self.text!r}: expression has symbols {sorted(map(str, unknown))} "
                "that are neither the variable nor a parameter",
                text=self.text,
            )
        check_constant_parts(self.expr, self.text, self.parameters)
        numeric = self.expr.xreplace(values) if values else self.expr
        check_parameter_values(numeric, self.text, self.parameters)
        ok, functions = within_budget(lambda: _functions_of(numeric, symbol))
        if not ok:  # the product rule on (x+1)*(x+2)*...*(x+60) makes 3540 terms of 58 factors
            raise FormulaError(
                f"formula {_short(self.text)!r} is too complex: its second derivative takes "
                f"more than {SYMPY_CALL_BUDGET} steps to build; simplify it (multiply out "
                "long products, nest fewer functions)",
                text=self.text,
            )
        object.__setattr__(self, "_numeric", numeric)
        object.__setattr__(self, "_functions", functions)

    def __reduce__(self) -> tuple[Any, ...]:
        # Pickle by recompiling: lambdified functions and mapping proxies do not pickle.
        return (compile_formula, (self.text, self.variable, dict(self.parameters)))

    def __hash__(self) -> int:
        return hash((self.text, self.variable, tuple(sorted(self.parameters.items()))))

    @property
    def uses_variable(self) -> bool:
        """Whether the coordinate appears in the formula (``False`` for a constant)."""
        return coordinate_symbol(self.variable) in self.expr.free_symbols

    # -- numbers ----------------------------------------------------------------------------
    @property
    def numeric_expr(self) -> sp.Expr:
        """The expression with the parameter values substituted (exact rationals)."""
        return self._numeric

    def value(self, x: Any) -> np.ndarray:
        """Values of the formula at ``x`` (array of float, the shape of ``x``)."""
        return _evaluate(self._functions[0], x)

    def d1(self, x: Any) -> np.ndarray:
        """First derivative with respect to the variable, at ``x``."""
        return _evaluate(self._functions[1], x)

    def d2(self, x: Any) -> np.ndarray:
        """Second derivative with respect to the variable, at ``x``."""
        return _evaluate(self._functions[2], x)

    def parameter_derivative(self, name: str, x: Any) -> np.ndarray:
        """Derivative with respect to parameter ``name`` at ``x`` (for Hellmann–Feynman checks).

        Raises
        ------
        FormulaError
            If ``name`` is not a parameter of the formula.
        """
        if name not in self.parameters:
            raise FormulaError(
                f"parameter_derivative: name must be a parameter of the formula "
                f"{sorted(self.parameters)}; got {name!r}",
                text=self.text,
            )
        key = ("dparam", name)
        if key not in self._cache:
            values = {parameter_symbol(k): exact_rational(v) for k, v in self.parameters.items()}
            de = _drop_deltas(sp.diff(self.expr, parameter_symbol(name)).xreplace(values))
            self._cache[key] = sp.lambdify(coordinate_symbol(self.variable), _for_numpy(de),
                                           modules=_MODULES)
        return _evaluate(self._cache[key], x)

    # -- structure --------------------------------------------------------------------------
    def polynomial(self) -> dict[int, float] | None:
        """Coefficients ``{power: value}`` when the formula is a polynomial in the variable.

        Returns
        -------
        dict or None
            ``{0: 0.0}`` for the zero polynomial; ``None`` when the formula is not a
            polynomial, or when its degree exceeds :data:`MAX_POLYNOMIAL_DEGREE` (then a
            caller should treat it as a general function).
        """
        if "polynomial" not in self._cache:
            self._cache["polynomial"] = self._polynomial()
        result = self._cache["polynomial"]
        return None if result is None else dict(result)

    def _polynomial(self) -> dict[int, float] | None:
        symbol = coordinate_symbol(self.variable)
        expr = self._numeric
        if not expr.is_polynomial(symbol):
            return None
        degree = _degree_bound(expr, symbol)
        if degree is None or degree > MAX_POLYNOMIAL_DEGREE:
            return None
        poly = sp.Poly(sp.expand(expr), symbol)
        out = {}
        for (k,), c in poly.as_dict().items():
            value = float(c)
            if value != 0.0:
                out[int(k)] = value
        return out or {0: 0.0}

    def threshold(self, side: int = +1) -> float:
        """Limit of the formula as the variable goes to ``side·∞``.

        Parameters
        ----------
        side
            ``+1`` for ``+∞``, ``-1`` for ``-∞``. A radial formula has one infinity: for
            ``r`` both sides give the limit ``r → +∞``.

        Returns
        -------
        float
            The limit; ``±inf`` where the formula diverges. Where it oscillates without a
            limit but sympy finds the range it keeps (``sin(x)`` → ``[-1, 1]``), the lower end
            (the lim inf) is returned, the level below which states stay confined.

        Raises
        ------
        FormulaError
            If neither :func:`sympy.limit` nor the numeric fallback can decide.

        Notes
        -----
        :func:`sympy.limit` (Gruntz algorithm) on the expression with the parameter values
        substituted, under a work budget (:mod:`anharmony.formula.bounded`) and only for
        towers of exponentials at most :data:`~anharmony.formula.bounded.MAX_TOWER_FOR_SYMPY`
        high (``exp(exp(x))`` and ``x**x**x`` are 2 high); if it fails, runs out of budget or
        returns something that is not a real number, a numeric fallback samples the formula at
        ``|x| = 10^2 … 10^300`` and accepts a limit when the last tenth of the samples agree to
        1e-9 relative, or ``±inf`` when they all exceed 1e100 in size with one sign; samples
        in floats first, then (if undecided) guarded mpmath values, which do not overflow.
        """
        if side not in (1, -1):
            raise FormulaError(f"threshold: side must be +1 or -1; got {side!r}", text=self.text)
        if self.variable == "r":
            side = 1
        key = ("threshold", side)
        if key not in self._cache:
            self._cache[key] = self._threshold(side)
        return self._cache[key]

    def threshold_both(self) -> tuple[float, float]:
        """``(limit at -∞, limit at +∞)``; see :meth:`threshold`."""
        return (self.threshold(-1), self.threshold(+1))

    def _threshold(self, side: int) -> float:
        symbol = coordinate_symbol(self.variable)
        point = sp.oo if side > 0 else -sp.oo
        lim = None
        # Bounded: towers of exponentials (x**x**x, exp(exp(exp(x)))) go straight to the numeric
        # fallback; otherwise past SYMPY_CALL_BUDGET Python calls the numeric fallback decides.
        if tower_height(self._numeric, symbol) <= MAX_TOWER_FOR_SYMPY:
            try:
                _, lim = within_budget(lambda: sp.limit(self._numeric, symbol, point))
            except (NotImplementedError, ValueError, TypeError, RecursionError, AttributeError,
                    ArithmeticError, MemoryError):
                lim = None
        value = _limit_to_float(lim)
        if not self._real_somewhere_far(side):
            where = "+inf" if side > 0 else "-inf"
            raise FormulaError(
                f"formula {self.text!r} has no real values as {self.variable} -> {where}",
                text=self.text,
            )
        if value is not None:
            return value
        return self._numeric_limit(side)

    def _real_somewhere_far(self, side: int) -> bool:
        """Whether the formula is real at one of |x| = 1e2, 1e6, 1e12 (guarded mpmath values,
        no overflow and no exact folding of towers such as x**x**x). Guards against sympy's
        complex limits, e.g. log(x) -> oo as x -> -oo."""
        symbol = coordinate_symbol(self.variable)
        for far in (10**2, 10**6, 10**12):
            value = mp_value(self._numeric, {symbol: side * far})
            if value is None or not mpmath.isfinite(value):
                return True  # cannot tell: do not block the limit
            re, im = mpmath.re(value), mpmath.im(value)
            if im == 0 or abs(im) <= 1e-20 * abs(re):
                return True
        return False

    def _numeric_limit(self, side: int) -> float:
        xs = side * np.logspace(2.0, 300.0, 2385)
        tail = self.value(xs)[-len(xs) // 10 :]
        decided = _settled(tail)
        if decided is None:
            # floats can fail where the terms overflow separately (x**2*exp(-exp(exp(x))) is
            # inf*0 at x = 1e300): guarded mpmath values of the same samples have no overflow
            decided = _settled(np.array([self._mp_float(x) for x in xs[-len(xs) // 10 :]]))
        if decided is not None:
            return decided
        where = "+inf" if side > 0 else "-inf"
        raise FormulaError(
            f"formula {self.text!r}: cannot determine its limit as {self.variable} -> {where} "
            "(sympy.limit failed and the values do not settle)",
            text=self.text,
        )

    def _mp_float(self, x: float) -> float:
        """The formula at ``x`` from guarded mpmath values: a float, ±inf, or nan (no value)."""
        v = mp_value(self._numeric, {coordinate_symbol(self.variable): x})
        if v is None or not mpmath.isfinite(v):
            if v is None or mpmath.isnan(v):
                return math.nan
            return math.copysign(math.inf, float(mpmath.re(v)))
        re, im = mpmath.re(v), mpmath.im(v)
        if im != 0 and abs(im) > 1e-20 * abs(re):
            return math.nan
        return float(re)  # beyond the float range: ±inf


# ------------------------------------------------------------------------------ helpers
def _degree_bound(expr: sp.Expr, symbol: sp.Symbol) -> int | None:
    """Upper bound of the degree of a polynomial expression without expanding it."""
    if not expr.has(symbol):
        return 0
    if expr == symbol:
        return 1
    if expr.is_Add:
        parts = [_degree_bound(a, symbol) for a in expr.args]
        return None if None in parts else max(parts)
    if expr.is_Mul:
        parts = [_degree_bound(a, symbol) for a in expr.args]
        return None if None in parts else sum(parts)
    if expr.is_Pow and expr.exp.is_Integer and expr.exp >= 0:
        base = _degree_bound(expr.base, symbol)
        return None if base is None else base * int(expr.exp)
    return None


def _functions_of(numeric: sp.Expr, symbol: sp.Symbol) -> tuple[Callable[..., Any], ...]:
    """numpy functions of the formula and its first two derivatives in ``symbol``."""
    d1 = _drop_deltas(sp.diff(numeric, symbol))
    d2 = _drop_deltas(sp.diff(d1, symbol))
    return tuple(sp.lambdify(symbol, _for_numpy(e), modules=_MODULES) for e in (numeric, d1, d2))


def _for_numpy(expr: sp.Expr) -> sp.Expr:
    """Integers beyond 2**53 as floats: printed as Python ints they would reach numpy ufuncs as
    objects (``exp(-10**20)`` fails with a TypeError); smaller ones are exact as floats anyway."""
    big = {n: sp.Float(n) for n in expr.atoms(sp.Integer) if abs(int(n)) > 2**53}
    return expr.xreplace(big) if big else expr


def _drop_deltas(expr: sp.Expr) -> sp.Expr:
    if expr.has(sp.DiracDelta):
        expr = expr.replace(sp.DiracDelta, lambda *args: sp.S.Zero)
    return expr


def _settled(tail: np.ndarray) -> float | None:
    """The limit the samples of the far tail settle to, ``±inf``, or ``None`` (undecided)."""
    if np.all(np.isfinite(tail)):
        spread = float(np.max(tail) - np.min(tail))
        if spread <= 1e-9 * max(1.0, float(np.max(np.abs(tail)))) and abs(tail[-1]) < 1e100:
            return float(tail[-1])
    big = np.abs(np.nan_to_num(tail, nan=0.0, posinf=np.inf, neginf=-np.inf)) > 1e100
    if np.all(big) and (np.all(tail > 0) or np.all(tail < 0)):
        return math.inf if tail[-1] > 0 else -math.inf
    return None


def _limit_to_float(lim: Any) -> float | None:
    if lim is None:
        return None
    if lim == sp.oo:
        return math.inf
    if lim == -sp.oo:
        return -math.inf
    if isinstance(lim, sp.AccumBounds):
        lo = lim.min
        if lo == -sp.oo:
            return -math.inf
        return float(lo) if lo.is_extended_real and lo.is_finite else None
    if isinstance(lim, sp.Expr) and lim.is_number and lim.is_extended_real and lim.is_finite:
        try:
            return float(lim)
        except (TypeError, ValueError):
            return None
    return None


def _evaluate(function: Callable[..., Any], x: Any) -> np.ndarray:
    xs = np.asarray(x, dtype=float)
    with np.errstate(all="ignore"):
        out = function(xs)
    out = np.asarray(out)
    if np.iscomplexobj(out):
        out = np.where(np.imag(out) == 0, np.real(out), np.nan)
    return np.array(np.broadcast_to(out.astype(float, copy=False), xs.shape), dtype=float)


def compile_field(text: str, coordinates: tuple[str, ...],
                  parameters: Mapping[str, float] | None = None) -> FieldFormula:
    """A formula of a well off the line, in ``("x", "y"[, "z"])`` or ``("rho", "z")``.

    The grammar, the parameters and the checks are those of :func:`compile_formula`; a field
    formula has values only (the geometries integrate it by quadrature and find its threshold
    by probing far out).
    """
    expr, params = parse(text, coordinates[0], parameters, tuple(coordinates))
    return FieldFormula(text=text, coordinates=tuple(coordinates),
                        parameters=MappingProxyType(params), expr=expr)


@dataclass(frozen=True)
class FieldFormula:
    """A validated formula in several coordinates (build it with :func:`compile_field`)."""

    text: str
    coordinates: tuple[str, ...]
    parameters: Mapping[str, float]
    expr: sp.Expr
    _function: Callable[..., Any] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        symbols = [coordinate_symbol(c) for c in self.coordinates]
        values = {parameter_symbol(k): exact_rational(v) for k, v in self.parameters.items()}
        unknown = self.expr.free_symbols - {*symbols, *values}
        if unknown:
            raise FormulaError(f"formula {self.text!r}: expression has symbols "
                               f"{sorted(map(str, unknown))} that are neither coordinates nor "
                               "parameters", text=self.text)
        check_constant_parts(self.expr, self.text, self.parameters)
        numeric = self.expr.xreplace(values) if values else self.expr
        check_parameter_values(numeric, self.text, self.parameters)
        ok, fn = within_budget(lambda: sp.lambdify(symbols, numeric, modules=_MODULES))
        if not ok:
            raise FormulaError(f"formula {_short(self.text)!r} is too complex to evaluate; "
                               "simplify it", text=self.text)
        object.__setattr__(self, "_function", fn)

    def value(self, *coords: Any) -> np.ndarray:
        """The formula at points (arrays that broadcast against each other); numpy's rules for
        NaN and inf, no warnings."""
        arrays = [np.asarray(c, dtype=float) for c in coords]
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
        with np.errstate(all="ignore"):
            out = np.asarray(self._function(*arrays), dtype=float)
        return np.broadcast_to(out, shape).copy()
