"""Safe formulas for the ``expression`` term of a well (DESIGN §3, PITFALLS §5).

A formula is text such as ``"0.5*x**2 + g*x**4"`` in one coordinate (``x`` in 1D, ``r`` for a
radial well) and named parameters. :mod:`.parse` turns the text into a sympy expression by an
allow-list walk of its syntax tree (user text never reaches ``eval``, ``exec``, ``compile``,
:func:`sympy.sympify` or :func:`sympy.parsing.sympy_parser.parse_expr`); :mod:`.analysis`
holds the resulting :class:`Formula` (values, derivatives, polynomial form, limits).
"""

from ..errors import FormulaError
from .analysis import MAX_POLYNOMIAL_DEGREE, FieldFormula, Formula, compile_field, compile_formula
from .parse import (
    CONSTANTS,
    FUNCTIONS,
    MAX_DEPTH,
    MAX_EXPONENT,
    MAX_LENGTH,
    MAX_NESTING,
    MAX_NODES,
    MAX_NUMBER_BITS,
    VARIABLES,
)

__all__ = ["CONSTANTS", "FUNCTIONS", "MAX_DEPTH", "MAX_EXPONENT", "MAX_LENGTH", "MAX_NESTING",
           "MAX_NODES", "MAX_NUMBER_BITS", "MAX_POLYNOMIAL_DEGREE", "VARIABLES", "FieldFormula",
           "Formula", "FormulaError", "compile_field", "compile_formula"]
