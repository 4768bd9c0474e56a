"""Parsing of formula text: an allow-list walk of the syntax tree that builds sympy (PITFALLS §5).

The text is parsed with :func:`ast.parse` in ``eval`` mode and the syntax tree is walked by an
allow-list; the sympy expression is built node by node (``sp.Add``, ``sp.Mul``, ``sp.Pow``,
``sp.exp``, ...). User text never reaches ``eval``, ``exec``, ``compile``,
:func:`sympy.sympify` or :func:`sympy.parsing.sympy_parser.parse_expr`. Sizes are bounded
before anything is built (length, bracket nesting, node count, tree depth, exponents, bits of
folded constants), so hostile text cannot hang or crash the interpreter.

Grammar (anything else is rejected with a :class:`FormulaError` that quotes the piece):

- numbers: ``int`` and ``float`` literals (not ``True``, ``1j``, strings or ``None``);
- names: the coordinate, the declared parameters, the constants ``pi`` and ``e``;
- operators: binary ``+ - * / **`` and unary ``-`` and ``+`` (Python precedence, so
  ``-x**2`` is ``-(x**2)``);
- calls with exactly one positional argument to ``exp, log, sqrt, sin, cos, tanh, cosh, sinh,
  erf, abs`` (``log`` is the natural logarithm).
"""

from __future__ import annotations

import ast
import difflib
import keyword
import math
import re
from collections.abc import Callable, Mapping
from fractions import Fraction
from types import MappingProxyType

import numpy as np
import sympy as sp

from ..errors import FormulaError
from .bounded import is_finite_float, mp_call, mp_power, mp_value

__all__ = [
    "CONSTANTS",
    "FIELD_COORDINATES",
    "FUNCTIONS",
    "MAX_DEPTH",
    "MAX_EXPONENT",
    "MAX_LENGTH",
    "MAX_NESTING",
    "MAX_NODES",
    "MAX_NUMBER_BITS",
    "VARIABLES",
    "check_constant_parts",
    "check_parameter_values",
    "coordinate_symbol",
    "exact_rational",
    "parameter_symbol",
    "parse",
]

# ---------------------------------------------------------------- limits (denial-of-service)
MAX_LENGTH = 1000  # characters of formula text
MAX_NODES = 500  # syntax-tree nodes
MAX_DEPTH = 100  # depth of the syntax tree (a sum of n terms is n deep)
MAX_NESTING = 50  # nesting of brackets in the text
MAX_EXPONENT = 100  # |p| for a numeric exponent p in a ** p (so 9**9**9 is rejected)
MAX_NUMBER_BITS = 20000  # size of exact rationals built while folding constants

VARIABLES = ("x", "r")
#: The coordinate sets of formulas off the line: Cartesian (2D, 3D) and axial (ρ, z).
FIELD_COORDINATES = (("x", "y"), ("x", "y", "z"), ("rho", "z"))

FUNCTIONS: Mapping[str, Callable[[sp.Expr], sp.Expr]] = MappingProxyType(
    {
        "exp": sp.exp,
        "log": sp.log,
        "sqrt": sp.sqrt,
        "sin": sp.sin,
        "cos": sp.cos,
        "tanh": sp.tanh,
        "cosh": sp.cosh,
        "sinh": sp.sinh,
        "erf": sp.erf,
        "abs": sp.Abs,
    }
)
CONSTANTS: Mapping[str, sp.Expr] = MappingProxyType({"pi": sp.pi, "e": sp.E})

_IDENTIFIER = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
_BINARY = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_BINARY_HINTS = {
    ast.BitXor: "; write powers as a**b, not a^b",
    ast.FloorDiv: "; write a/b",
    ast.Mod: "",
    ast.MatMult: "",
}
_OPERATOR_TEXT = {ast.BitXor: "^", ast.FloorDiv: "//", ast.Mod: "%", ast.MatMult: "@",
                  ast.BitAnd: "&", ast.BitOr: "|", ast.LShift: "<<", ast.RShift: ">>"}
_NODE_NAMES = {
    ast.Attribute: "attribute access", ast.Subscript: "subscripts", ast.Lambda: "lambda",
    ast.ListComp: "comprehensions", ast.SetComp: "comprehensions",
    ast.DictComp: "comprehensions", ast.GeneratorExp: "generator expressions",
    ast.JoinedStr: "f-strings", ast.FormattedValue: "f-strings", ast.Compare: "comparisons",
    ast.BoolOp: "'and'/'or'", ast.IfExp: "conditional expressions", ast.List: "lists",
    ast.Tuple: "tuples", ast.Set: "sets", ast.Dict: "dicts",
    ast.NamedExpr: "assignment expressions", ast.Starred: "starred arguments",
    ast.Await: "await", ast.Yield: "yield", ast.YieldFrom: "yield", ast.Slice: "slices",
}


def parse(
    text: str, variable: str = "x", parameters: Mapping[str, float] | None = None,
    coordinates: tuple[str, ...] = (),
) -> tuple[sp.Expr, dict[str, float]]:
    """Parse ``text`` into a sympy expression (parameters as symbols) and checked parameters.

    The arguments and errors are those of :func:`anharmony.formula.compile_formula`; the
    grammar is in the module docstring. ``coordinates`` names more coordinates a formula of
    a well off the line may use (``("x", "y", "z")`` or ``("rho", "z")``, from
    :data:`FIELD_COORDINATES`); ``variable`` is then the first of them.
    """
    if not isinstance(text, str):
        raise TypeError(f"formula must be a string; got {type(text).__name__} {text!r}")
    if coordinates:
        if tuple(coordinates) not in FIELD_COORDINATES:
            raise FormulaError(f"coordinates must be one of {list(FIELD_COORDINATES)}; got "
                               f"{coordinates!r}")
    elif variable not in VARIABLES:
        raise FormulaError(f"variable must be one of {list(VARIABLES)}; got {variable!r}")
    params = _check_parameters(parameters, variable)
    for name in coordinates:
        if name in params:
            raise FormulaError(f"parameter name {name!r} is a coordinate of the formula")
    if len(text) > MAX_LENGTH:
        raise FormulaError(
            f"formula {_short(text)!r} is {len(text)} characters long; at most {MAX_LENGTH} "
            "are allowed",
            text=text,
            piece=_short(text),
        )
    source = text.strip()
    if not source:
        raise FormulaError(
            f"formula {text!r} is empty; {_allowed(variable, params)}", text=text, piece=text
        )
    _check_nesting(source, text)
    try:
        tree = ast.parse(source, mode="eval")
    except SyntaxError as exc:
        raise _syntax_error(exc, source, text, variable, params) from None
    except (RecursionError, MemoryError, ValueError) as exc:
        raise FormulaError(
            f"formula {_short(text)!r} cannot be parsed ({type(exc).__name__}); "
            f"{_allowed(variable, params)}",
            text=text,
        ) from None
    _check_size(tree, source, text)
    builder = _Builder(source, text, variable, params, coordinates)
    try:
        expr = builder.build(tree.body)
    except (RecursionError, MemoryError) as exc:
        raise FormulaError(
            f"formula {_short(text)!r} is too complex to build ({type(exc).__name__})",
            text=text,
        ) from None
    return expr, params


class _Builder:
    """Turns an allow-listed syntax tree into a sympy expression, node by node."""

    def __init__(self, source: str, text: str, variable: str, params: dict[str, float],
                 coordinates: tuple[str, ...] = ()):
        self.source = source
        self.text = text
        self.lead = len(text) - len(text.lstrip())
        self.variable = variable
        self.params = params
        self.names: dict[str, sp.Expr] = {variable: coordinate_symbol(variable), **CONSTANTS}
        self.names.update({c: coordinate_symbol(c) for c in coordinates})
        self.names.update({k: parameter_symbol(k) for k in params})

    # -- helpers ----------------------------------------------------------------------------
    def piece(self, node: ast.AST) -> str:
        seg = ast.get_source_segment(self.source, node)
        if seg is None:
            col = getattr(node, "col_offset", 0)
            seg = self.source[col : col + 40]
        return seg

    def fail(self, node: ast.AST, what: str, hint: str = "") -> FormulaError:
        piece = self.piece(node)
        col = getattr(node, "col_offset", None)
        where = f" at column {col + 1 + self.lead}" if col is not None else ""
        msg = f"formula {self.text!r}: {what} {piece!r}{where} is not allowed{hint}"
        msg += f"; {_allowed(self.variable, self.params)}"
        return FormulaError(msg, text=self.text, piece=piece)

    def finite(self, node: ast.AST, value: object) -> None:
        """Refuse a constant part whose value (guarded mpmath, or None) does not fit a float."""
        if not is_finite_float(value):
            piece = self.piece(node)
            raise FormulaError(
                f"formula {_short(self.text)!r}: the constant {_short(piece)!r} overflows a float "
                "(its size exceeds 1.8e308)",
                text=self.text,
                piece=piece,
            )

    def checked(self, node: ast.AST, result: sp.Expr) -> sp.Expr:
        """Reject complex, infinite and oversized numbers the moment they appear."""
        piece = self.piece(node)
        if result.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise FormulaError(
                f"formula {self.text!r}: {piece!r} is infinite or undefined "
                "(division by zero or log(0))",
                text=self.text,
                piece=piece,
            )
        if result.has(sp.I) or (result.is_number and result.is_extended_real is False):
            raise FormulaError(
                f"formula {self.text!r}: {piece!r} takes complex values; a well must be real "
                "(sqrt and log of negative numbers, and fractional powers of negative "
                "numbers, are not allowed in constant or sympy-simplified parts)",
                text=self.text,
                piece=piece,
            )
        if result.is_number and not result.is_Rational:
            self.finite(node, mp_value(result))
        for atom in result.atoms(sp.Rational):
            if _bits(atom) > MAX_NUMBER_BITS or not math.isfinite(_float(atom)):
                raise FormulaError(
                    f"formula {self.text!r}: the number {piece!r} is outside the "
                    f"floating-point range (or needs more than {MAX_NUMBER_BITS} bits exactly)",
                    text=self.text,
                    piece=piece,
                )
        return result

    # -- the walk ---------------------------------------------------------------------------
    def build(self, node: ast.AST) -> sp.Expr:
        if isinstance(node, ast.Constant):
            return self.constant(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.UnaryOp):
            if isinstance(node.op, ast.USub):
                return self.checked(node, -self.build(node.operand))
            if isinstance(node.op, ast.UAdd):
                return self.build(node.operand)
            raise self.fail(node, "the unary operator in", "; only unary - and + are")
        if isinstance(node, ast.BinOp):
            return self.binop(node)
        if isinstance(node, ast.Call):
            return self.call(node)
        what = _NODE_NAMES.get(type(node), f"the construct ({type(node).__name__})")
        raise self.fail(node, what)

    def constant(self, node: ast.Constant) -> sp.Expr:
        value = node.value
        if type(value) is int:
            return self.checked(node, sp.Integer(value))
        if type(value) is float:
            if not math.isfinite(value):
                raise FormulaError(
                    f"formula {self.text!r}: the number {self.piece(node)!r} is outside the "
                    "floating-point range",
                    text=self.text,
                    piece=self.piece(node),
                )
            return self.checked(node, exact_rational(value))
        kind = {bool: "the boolean", complex: "the complex number", str: "the string"}.get(
            type(value), "the constant"
        )
        raise self.fail(node, kind, "; only real int and float numbers are")

    def name(self, node: ast.Name) -> sp.Expr:
        if node.id in self.names:
            return self.names[node.id]
        if node.id in FUNCTIONS:
            raise self.fail(node, "the bare function name", f"; call it as {node.id}(...)")
        hint = _suggest(node.id, [*self.names, *FUNCTIONS])
        other = [v for v in VARIABLES if v != self.variable]
        if node.id in other:
            hint = f"; the variable of this formula is {self.variable!r}"
        elif node.id in ("y", "z"):
            hint = (f"; {node.id!r} is not a coordinate of a well: write the formula in 'x' "
                    "for a 1D well, or in the radius 'r' for a central well in 2D or 3D")
        raise self.fail(node, "the unknown name", hint)

    def binop(self, node: ast.BinOp) -> sp.Expr:
        op = type(node.op)
        if op not in _BINARY:
            hint = _BINARY_HINTS.get(op, "")
            text = _OPERATOR_TEXT.get(op, op.__name__)
            raise self.fail(node, f"the operator {text!r} in", hint)
        a = self.build(node.left)
        b = self.build(node.right)
        if op is ast.Add:
            return self.checked(node, sp.Add(a, b))
        if op is ast.Sub:
            return self.checked(node, sp.Add(a, sp.Mul(sp.Integer(-1), b)))
        if op is ast.Mult:
            return self.checked(node, sp.Mul(a, b))
        if op is ast.Div:
            if b == 0:
                raise FormulaError(
                    f"formula {self.text!r}: {self.piece(node)!r} divides by zero",
                    text=self.text,
                    piece=self.piece(node),
                )
            return self.checked(node, sp.Mul(a, sp.Pow(b, sp.Integer(-1))))
        # power: bound numeric exponents before sympy folds anything
        if b.is_number:
            size = _number_size(b)
            if size is None or size > MAX_EXPONENT:
                raise FormulaError(
                    f"formula {self.text!r}: the exponent in {self.piece(node)!r} is too "
                    f"large; numeric exponents must lie within ±{MAX_EXPONENT}",
                    text=self.text,
                    piece=self.piece(node),
                )
            if a.is_Rational and b.is_Rational and _bits(a) * size > MAX_NUMBER_BITS:
                raise FormulaError(
                    f"formula {self.text!r}: the constant {self.piece(node)!r} needs more than "
                    f"{MAX_NUMBER_BITS} bits to be folded exactly; simplify it",
                    text=self.text,
                    piece=self.piece(node),
                )
            if a == 0 and b.is_extended_negative:
                raise FormulaError(
                    f"formula {self.text!r}: {self.piece(node)!r} divides by zero",
                    text=self.text,
                    piece=self.piece(node),
                )
        if a.is_number and b.is_number:
            self.finite(node, mp_power(mp_value(a), mp_value(b)))
        return self.checked(node, sp.Pow(a, b))

    def call(self, node: ast.Call) -> sp.Expr:
        if not isinstance(node.func, ast.Name):
            raise self.fail(node, "the call", f"; only calls to {', '.join(FUNCTIONS)} are")
        name = node.func.id
        if name in self.names:
            raise self.fail(node, f"the call of {name!r} in", f"; {name!r} is not a function")
        if name not in FUNCTIONS:
            hint = _suggest(name, list(FUNCTIONS))
            raise self.fail(node, f"the unknown function {name!r} in", hint)
        if node.keywords:
            raise self.fail(node, "keyword arguments in", f"; {name} takes one argument")
        if any(isinstance(a, ast.Starred) for a in node.args):
            raise self.fail(node, "starred arguments in", f"; {name} takes one argument")
        if len(node.args) != 1:
            raise self.fail(
                node, f"{len(node.args)} arguments in", f"; {name} takes exactly one argument"
            )
        arg = self.build(node.args[0])
        if name == "log" and arg == 0:
            raise FormulaError(
                f"formula {self.text!r}: {self.piece(node)!r} is infinite (log(0))",
                text=self.text,
                piece=self.piece(node),
            )
        if arg.is_number:  # before sympy folds it: exp(exp(exp(100))) would never finish
            self.finite(node, mp_call(name, mp_value(arg)))
        return self.checked(node, FUNCTIONS[name](arg))


# ---------------------------------------------------------------------------- checks
def _check_parameters(parameters: Mapping[str, float] | None, variable: str) -> dict[str, float]:
    if parameters is None:
        return {}
    if not isinstance(parameters, Mapping):
        raise TypeError(
            f"parameters must be a mapping of names to numbers; got "
            f"{type(parameters).__name__} {parameters!r}"
        )
    out: dict[str, float] = {}
    for name, value in parameters.items():
        if not isinstance(name, str) or not _IDENTIFIER.match(name):
            raise FormulaError(
                f"parameter name {name!r} is not a plain identifier (a letter, then letters, "
                "digits or '_')"
            )
        if keyword.iskeyword(name) or keyword.issoftkeyword(name):
            raise FormulaError(f"parameter name {name!r} is a Python keyword")
        if name in FUNCTIONS or name in CONSTANTS or name == variable:
            what = (
                "a function"
                if name in FUNCTIONS
                else "a constant"
                if name in CONSTANTS
                else "the variable"
            )
            raise FormulaError(f"parameter name {name!r} clashes with {what} of the formula")
        if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
            raise FormulaError(
                f"parameter {name!r} must be a real number; got {type(value).__name__} {value!r}"
            )
        value = float(value)
        if not math.isfinite(value):
            raise FormulaError(f"parameter {name!r} must be finite; got {value!r}")
        out[name] = value
    return out


def check_constant_parts(expr: sp.Expr, text: str, parameters: Mapping[str, float]) -> None:
    """Refuse a part free of the coordinate whose value with the parameters does not fit a
    float (``exp(a)`` with ``a = 1000``); run before the values are substituted, so that sympy
    never folds a tower of huge constants."""
    if not parameters:
        return
    values = {parameter_symbol(k): v for k, v in parameters.items()}
    coordinates = {coordinate_symbol(v) for v in (*VARIABLES, "y", "z", "rho")}
    for sub in sp.preorder_traversal(expr):
        if sub.is_Pow and not sub.exp.free_symbols & coordinates and sub.exp.free_symbols:
            size = mp_value(sub.exp, values)  # the rule for written exponents (MAX_EXPONENT)
            if size is not None and not abs(size) <= MAX_EXPONENT:
                raise FormulaError(
                    f"formula {_short(text)!r}: the exponent of {_short(str(sub))!r} is too "
                    f"large with the parameters {dict(parameters)}; numeric exponents must lie "
                    f"within ±{MAX_EXPONENT}",
                    text=text,
                    piece=str(sub),
                )
        if sub.is_Atom or sub.free_symbols & coordinates:
            continue
        if not is_finite_float(mp_value(sub, values)):
            raise FormulaError(
                f"formula {_short(text)!r}: {_short(str(sub))!r} overflows a float with the "
                f"parameters {dict(parameters)} (its size exceeds 1.8e308)",
                text=text,
                piece=str(sub),
            )


def check_parameter_values(numeric: sp.Expr, text: str, parameters: Mapping[str, float]) -> None:
    if not parameters:
        return
    shown = dict(parameters)
    if numeric.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise FormulaError(
            f"formula {text!r} is infinite or undefined with the parameters {shown}",
            text=text,
        )
    if numeric.has(sp.I):
        raise FormulaError(
            f"formula {text!r} takes complex values with the parameters {shown}", text=text
        )
    for atom in numeric.atoms(sp.Rational):
        if _bits(atom) > MAX_NUMBER_BITS or not math.isfinite(_float(atom)):
            raise FormulaError(
                f"formula {text!r} has a number outside the floating-point range with the "
                f"parameters {shown}",
                text=text,
            )


def _check_nesting(source: str, text: str) -> None:
    depth = 0
    for i, ch in enumerate(source):
        if ch in "([{":
            depth += 1
            if depth > MAX_NESTING:
                piece = source[max(0, i - 10) : i + 10]
                raise FormulaError(
                    f"formula {_short(text)!r}: brackets nested more than {MAX_NESTING} deep "
                    f"near {piece!r} (column {i + 1})",
                    text=text,
                    piece=piece,
                )
        elif ch in ")]}":
            depth -= 1


def _check_size(tree: ast.AST, source: str, text: str) -> None:
    count = 0
    stack: list[tuple[ast.AST, int]] = [(tree, 0)]
    while stack:
        node, depth = stack.pop()
        count += 1
        if count > MAX_NODES:
            raise FormulaError(
                f"formula {_short(text)!r} has more than {MAX_NODES} syntax nodes",
                text=text,
                piece=_short(text),
            )
        if depth > MAX_DEPTH:
            piece = ast.get_source_segment(source, node) or source
            raise FormulaError(
                f"formula {_short(text)!r} is nested more than {MAX_DEPTH} operations deep "
                f"at {_short(piece)!r}",
                text=text,
                piece=_short(piece),
            )
        stack.extend((child, depth + 1) for child in ast.iter_child_nodes(node))


def _syntax_error(
    exc: SyntaxError, source: str, text: str, variable: str, params: dict[str, float]
) -> FormulaError:
    offset = (exc.offset or 1) - 1
    if exc.lineno and exc.lineno > 1:
        lines = source.splitlines()
        offset += sum(len(line) + 1 for line in lines[: exc.lineno - 1])
    piece = source[max(0, offset - 10) : offset + 10] or source
    return FormulaError(
        f"formula {_short(text)!r} is not a valid expression ({exc.msg}) near {piece!r}; "
        f"{_allowed(variable, params)}",
        text=text,
        piece=piece,
    )


# ------------------------------------------------------------------------------- small helpers
def _allowed(variable: str, params: Mapping[str, float]) -> str:
    names = [variable, *params, *CONSTANTS]
    return (
        f"allowed are numbers, the names {', '.join(names)}, the operators + - * / ** "
        f"(and unary -), and one-argument calls to {', '.join(FUNCTIONS)}"
    )


def _suggest(name: str, candidates: list[str]) -> str:
    """A near-miss hint for an unknown name (case-insensitive difflib match)."""
    lowered = {c.lower(): c for c in candidates}
    close = difflib.get_close_matches(name.lower(), list(lowered), n=1, cutoff=0.5)
    return f"; did you mean {lowered[close[0]]!r}?" if close else ""


def coordinate_symbol(variable: str) -> sp.Symbol:
    # r and rho are radial coordinates (positive); x, y, z real line coordinates.
    if variable in ("r", "rho"):
        return sp.Symbol(variable, positive=True)
    return sp.Symbol(variable, real=True)


def parameter_symbol(name: str) -> sp.Symbol:
    return sp.Symbol(name, real=True)


def exact_rational(value: float) -> sp.Rational:
    """The rational of the shortest decimal that round-trips to ``value`` (0.1 -> 1/10)."""
    frac = Fraction(repr(float(value)))
    return sp.Rational(frac.numerator, frac.denominator)


def _bits(q: sp.Rational) -> int:
    return max(int(q.p).bit_length(), int(q.q).bit_length())


def _float(q: sp.Rational) -> float:
    try:
        return int(q.p) / int(q.q)
    except OverflowError:
        return math.inf


def _number_size(b: sp.Expr) -> float | None:
    try:
        size = abs(float(b))
    except (TypeError, ValueError, OverflowError):
        return None
    return size if math.isfinite(size) else None


def _short(text: str, width: int = 60) -> str:
    return text if len(text) <= width else text[: width - 3] + "..."
