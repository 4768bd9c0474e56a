"""Bounded work for formula analysis: guarded mpmath values and a call budget for sympy.

Two hazards make hostile formulas hang (issue: ``x**x**x**x**x``, ``exp(exp(exp(exp(100))))``):

- exact folding of towers: substituting an integer into ``x**x**x`` makes sympy compute
  ``100**(100**100)`` as a Python integer, and ``evalf`` of ``exp(exp(exp(1e12)))`` needs a
  precision of ``e**1e12`` bits. Both run in C, where nothing can interrupt them;
- long symbolic work (:func:`sympy.limit`, which has no timeout).

:func:`mp_value` evaluates an expression with mpmath at a fixed precision and refuses (returns
``None``) before any step whose size would explode: an exponent beyond :data:`MAX_LOG2` in size,
the sine of a number too large to reduce, a function it does not know. Each node costs a few
mpmath operations, so a formula of at most ``MAX_NODES`` nodes is evaluated in milliseconds.

:func:`within_budget` runs a sympy call under a budget of Python function calls counted by a
profile hook (:func:`sys.setprofile`; no signals, no threads). Counting calls, not seconds, keeps
the bound independent of the machine; past the budget a :class:`_OverBudget` (a
``BaseException``, so that sympy's ``except Exception`` cannot swallow it) unwinds the call and
the caller falls back to a numeric answer or a clear error.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Mapping
from typing import Any, TypeVar

import mpmath
import sympy as sp

__all__ = ["MAX_LOG2", "MAX_TOWER_FOR_SYMPY", "SYMPY_CALL_BUDGET", "is_finite_float", "mp_call",
           "mp_power", "mp_value", "tower_height", "within_budget"]

# exp(z) and a**b are refused when |Re z| (|b log a|) exceeds this: the result's binary exponent
# would exceed ~2**50, beyond which mpmath's exact exponents and later reductions get expensive.
MAX_LOG2 = float(2**50)
_MAX_TRIG_ARG = 2**1100  # sin/cos beyond: reduction mod 2*pi needs as many bits as the exponent
_PREC = 113  # bits (quad precision): enough to tell a real value from a complex one

# Python calls allowed to one sympy.limit: ordinary formulas (the tests and cases/) need at most a
# few hundred thousand; 1.5 million is one to two seconds of sympy at worst.
SYMPY_CALL_BUDGET = 1_500_000

# sympy.limit is tried only on towers of exponentials at most this high (tower_height); higher
# ones (exp(exp(exp(x))), x**x**x**x) can exhaust any budget, and floats decide them at once.
MAX_TOWER_FOR_SYMPY = 2

T = TypeVar("T")


def tower_height(expr: sp.Expr, symbol: sp.Symbol) -> int:
    """How many exponentials of the variable are stacked in ``expr``.

    ``exp``, ``cosh`` and ``sinh`` of something that depends on ``symbol``, and a power whose
    exponent depends on it (``a**b = exp(b log a)``), add one level; every other operation
    keeps the highest level of its arguments. ``x**2`` is 0, ``exp(x)`` and ``x**x`` 1,
    ``exp(exp(x))`` and ``x**x**x`` 2.
    """
    if not expr.has(symbol):
        return 0
    if expr.is_Pow:
        if expr.exp.has(symbol):
            return max(tower_height(expr.base, symbol), tower_height(expr.exp, symbol)) + 1
        return tower_height(expr.base, symbol)
    inner = max((tower_height(a, symbol) for a in expr.args), default=0)
    if isinstance(expr, (sp.exp, sp.cosh, sp.sinh)):
        return inner + 1
    return inner


class _OverBudget(BaseException):
    """Raised by the profile hook when a sympy call exceeds its budget (never escapes)."""


def within_budget(call: Callable[[], T], budget: int = SYMPY_CALL_BUDGET) -> tuple[bool, T | None]:
    """Run ``call()`` with at most ``budget`` Python function calls.

    Returns ``(True, result)``, or ``(False, None)`` when the budget ran out. Exceptions of the
    call propagate. A profile hook already installed (a profiler) is restored afterwards.
    """
    count = 0

    def hook(frame: Any, event: str, arg: Any) -> None:
        nonlocal count
        if event == "call":
            count += 1
            if count > budget:
                sys.setprofile(None)  # once: generators closed while unwinding must not raise
                raise _OverBudget

    previous = sys.getprofile()
    sys.setprofile(hook)
    try:
        return True, call()
    except _OverBudget:
        return False, None
    finally:
        sys.setprofile(previous)


def _exp(z: Any) -> Any:
    if mpmath.re(z) < -MAX_LOG2:
        return mpmath.mpf(0)  # underflow is harmless: far below any float
    if mpmath.re(z) > MAX_LOG2:
        return mpmath.inf  # overflow, far beyond any float (inf propagates: inf*0 is nan)
    return mpmath.exp(z)


def _trig(f: Callable[[Any], Any]) -> Callable[[Any], Any]:
    def g(z: Any) -> Any:
        if abs(mpmath.re(z)) > _MAX_TRIG_ARG or abs(mpmath.im(z)) > MAX_LOG2:
            return None
        return f(z)

    return g


def _hyper(f: Callable[[Any], Any]) -> Callable[[Any], Any]:
    def g(z: Any) -> Any:
        if abs(mpmath.re(z)) > MAX_LOG2:
            return mpmath.inf
        if abs(mpmath.im(z)) > _MAX_TRIG_ARG:
            return None
        return f(z)

    return g


def _tanh(z: Any) -> Any:
    if mpmath.im(z) == 0 and abs(z) > 1000:
        return mpmath.mpf(1 if z > 0 else -1)
    if abs(z) > _MAX_TRIG_ARG:
        return None
    return mpmath.tanh(z)


def _erf(z: Any) -> Any:
    if mpmath.im(z) == 0 and abs(z) > 100:
        return mpmath.mpf(1 if z > 0 else -1)
    if abs(z) > 1e6:
        return None
    return mpmath.erf(z)


def _log(z: Any) -> Any:
    return None if z == 0 else mpmath.log(z)


_FUNCTIONS: dict[type, Callable[[Any], Any]] = {
    sp.exp: _exp,
    sp.log: _log,
    sp.sin: _trig(mpmath.sin),
    sp.cos: _trig(mpmath.cos),
    sp.tanh: _tanh,
    sp.cosh: _hyper(mpmath.cosh),
    sp.sinh: _hyper(mpmath.sinh),
    sp.erf: _erf,
    sp.Abs: lambda z: mpmath.mpf(abs(z)),
}


def mp_power(a: Any, b: Any) -> Any:
    """``a**b`` in mpmath; ``inf`` when the result would be too large to represent."""
    if mpmath.im(b) == 0 and abs(b) <= 1000 and b == int(b):
        if a == 0 and b < 0:
            return None
        return mpmath.power(a, int(b))
    if a == 0:
        return mpmath.mpf(0) if mpmath.re(b) > 0 else None
    return _exp(b * mpmath.log(a))


_BY_NAME: dict[str, Callable[[Any], Any]] = {
    "exp": _exp, "log": _log, "sqrt": mpmath.sqrt, "sin": _FUNCTIONS[sp.sin],
    "cos": _FUNCTIONS[sp.cos], "tanh": _tanh, "cosh": _FUNCTIONS[sp.cosh],
    "sinh": _FUNCTIONS[sp.sinh], "erf": _erf, "abs": _FUNCTIONS[sp.Abs],
}


def mp_call(name: str, z: Any) -> Any:
    """The formula function ``name`` (as in :data:`~anharmony.formula.FUNCTIONS`) of ``z``."""
    if z is None:
        return None
    with mpmath.workprec(_PREC):
        try:
            return _BY_NAME[name](z)
        except (ValueError, ZeroDivisionError, OverflowError, TypeError, ArithmeticError):
            return None


def mp_apply(function: type, z: Any) -> Any:
    """One allowed function of an mpmath number, guarded; ``None`` if unknown or too large."""
    f = _FUNCTIONS.get(function)
    return None if f is None or z is None else f(z)


def mp_value(expr: sp.Expr, values: Mapping[sp.Symbol, Any] | None = None) -> Any:
    """The value of ``expr`` (mpmath ``mpf``/``mpc``) with symbols from ``values``, or ``None``.

    ``None`` means "cannot tell": an unknown node, a symbol without value, a division by zero,
    or a sine of a number too large to reduce; a result too large for mpmath's exponents (see
    the module notes) is ``mpmath.inf`` (or ``nan`` once combined with 0). Never raises for an
    expression built by :mod:`anharmony.formula.parse`.
    """
    with mpmath.workprec(_PREC):
        try:
            return _value(expr, values or {})
        except (ValueError, ZeroDivisionError, OverflowError, TypeError, ArithmeticError):
            return None


def _value(expr: sp.Expr, values: Mapping[sp.Symbol, Any]) -> Any:
    if expr.is_Rational:
        return mpmath.mpf(int(expr.p)) / int(expr.q)
    if expr.is_Float:
        return mpmath.mpf(expr._mpf_)
    if expr.is_Symbol:
        v = values.get(expr)
        return None if v is None else mpmath.mpmathify(v)
    if expr is sp.pi:
        return +mpmath.pi
    if expr is sp.E:
        return +mpmath.e
    if expr is sp.S.Half:  # pragma: no cover (a Rational)
        return mpmath.mpf(0.5)
    if expr.is_Add or expr.is_Mul:
        parts = [_value(a, values) for a in expr.args]
        if any(p is None for p in parts):
            return None
        out = parts[0]
        for p in parts[1:]:
            out = out + p if expr.is_Add else out * p
        return out
    if expr.is_Pow:
        a = _value(expr.base, values)
        b = _value(expr.exp, values)
        return None if a is None or b is None else mp_power(a, b)
    if isinstance(expr, sp.Function) and len(expr.args) == 1:
        return mp_apply(type(expr), _value(expr.args[0], values))
    return None


def is_finite_float(v: Any) -> bool:
    """Whether an mpmath number fits a float (|v| < 1.8e308); ``True`` for ``None`` (cannot
    tell: the other checks decide)."""
    if v is None:
        return True
    try:
        return mpmath.isfinite(v) and abs(v) < mpmath.mpf(sys.float_info.max)
    except (TypeError, ValueError):  # pragma: no cover
        return False
