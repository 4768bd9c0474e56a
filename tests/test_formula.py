"""Tests of the safe formula parser (anharmony.formula).

References used here: numpy / scipy.special evaluations of the same functions written by hand;
mpmath's arbitrary-precision numerical differentiation (mpmath.diff); the binomial theorem for
polynomial coefficients; textbook limits; the Python language reference for operator
precedence (``-x**2 == -(x**2)``, ``**`` right-associative).
"""

from __future__ import annotations

import builtins
import pickle
import warnings

import mpmath
import numpy as np
import pytest
import scipy.special
import sympy
import sympy.parsing.sympy_parser

from anharmony.formula import (
    MAX_LENGTH,
    MAX_NESTING,
    Formula,
    FormulaError,
    compile_formula,
)

# Same function, evaluated by numpy with another operation order: rounding differences only.
RTOL_SAME_FUNCTION = 1e-13
# mpmath.diff at 30 digits is far more accurate than double precision; our sympy derivatives
# are evaluated in doubles, so agreement to ~1e-12 relative is what rounding allows.
RTOL_DERIVATIVE = 1e-11
ATOL_DERIVATIVE = 1e-12  # derivatives that vanish at some grid points
# Polynomial coefficients come from exact rationals converted to float: exact to rounding.
RTOL_COEFFICIENT = 1e-15

# The numeric limit is a sample at |x| = 1e300 of a function that has settled to rounding.
RTOL_FALLBACK = 1e-12

GRID = np.linspace(-2.5, 2.5, 41)
RGRID = np.linspace(0.05, 6.0, 40)


# ------------------------------------------------------------------------ values vs numpy
VALUE_CASES = [
    # (formula, variable, parameters, numpy reference, grid)
    ("0.5*x**2 + g*x**4", "x", {"g": 0.1}, lambda x: 0.5 * x**2 + 0.1 * x**4, GRID),
    (
        "-V0*exp(-x**2/a**2)",
        "x",
        {"V0": 3.0, "a": 1.3},
        lambda x: -3.0 * np.exp(-(x**2) / 1.3**2),
        GRID,
    ),
    (
        "D*(1 - exp(-alpha*x))**2",
        "x",
        {"D": 5.0, "alpha": 0.7},
        lambda x: 5.0 * (1 - np.exp(-0.7 * x)) ** 2,
        GRID,
    ),
    ("-V0/cosh(x/a)**2", "x", {"V0": 2.0, "a": 0.8}, lambda x: -2.0 / np.cosh(x / 0.8) ** 2, GRID),
    (
        "sqrt(1 + x**2) - log(2 + x**2) + sin(x)*cos(x)",
        "x",
        None,
        lambda x: np.sqrt(1 + x**2) - np.log(2 + x**2) + np.sin(x) * np.cos(x),
        GRID,
    ),
    (
        "tanh(x) + sinh(x/3) - cosh(x/4)",
        "x",
        None,
        lambda x: np.tanh(x) + np.sinh(x / 3) - np.cosh(x / 4),
        GRID,
    ),
    ("erf(x/2)*abs(x)", "x", None, lambda x: scipy.special.erf(x / 2) * np.abs(x), GRID),
    ("pi*x - e**x", "x", None, lambda x: np.pi * x - np.exp(x), GRID),
    # Python precedence: unary minus binds weaker than **, and ** is right-associative.
    ("-x**2 + 2**-1*x - 2**3**0.5", "x", None, lambda x: -(x**2) + 0.5 * x - 2 ** (3**0.5), GRID),
    ("x/3 - +x/7", "x", None, lambda x: x / 3 - x / 7, GRID),
    (
        "-V0/(1 + exp((r - R)/a))",
        "r",
        {"V0": 50.0, "R": 4.1, "a": 0.65},
        lambda r: -50.0 / (1 + np.exp((r - 4.1) / 0.65)),
        RGRID,
    ),
    ("k*r**2/2 + c/r**2", "r", {"k": 1.5, "c": 0.25}, lambda r: 0.75 * r**2 + 0.25 / r**2, RGRID),
    ("1.5e-3*x**6 - 2.5E2*x + 7", "x", None, lambda x: 1.5e-3 * x**6 - 250.0 * x + 7, GRID),
]


@pytest.mark.parametrize(("text", "variable", "params", "reference", "grid"), VALUE_CASES)
def test_values_match_numpy_evaluation_of_the_same_function(
    text, variable, params, reference, grid
):
    f = compile_formula(text, variable=variable, parameters=params)
    got = f.value(grid)
    assert got.dtype == np.float64
    assert got.shape == grid.shape
    # atol 1e-14 where a value is zero or cancels: rounding of O(1) terms
    np.testing.assert_allclose(got, reference(grid), rtol=RTOL_SAME_FUNCTION, atol=1e-14)


# --------------------------------------------------------------- derivatives vs mpmath.diff
DERIVATIVE_CASES = [
    # (formula, variable, parameters, the same function in mpmath, points)
    ("0.5*x**2 + g*x**4", "x", {"g": 0.1}, lambda x: x**2 / 2 + mpmath.mpf("0.1") * x**4, GRID),
    (
        "-V0*exp(-x**2/a**2)",
        "x",
        {"V0": 3.0, "a": 1.3},
        lambda x: -3 * mpmath.exp(-(x**2) / mpmath.mpf("1.3") ** 2),
        GRID,
    ),
    (
        "D*(1 - exp(-alpha*x))**2",
        "x",
        {"D": 5.0, "alpha": 0.7},
        lambda x: 5 * (1 - mpmath.exp(-mpmath.mpf("0.7") * x)) ** 2,
        GRID,
    ),
    (
        "-1/cosh(x)**2 + erf(x)*sin(2*x)",
        "x",
        None,
        lambda x: -1 / mpmath.cosh(x) ** 2 + mpmath.erf(x) * mpmath.sin(2 * x),
        GRID,
    ),
    (
        "sqrt(1 + x**2)*tanh(x) + log(3 + x)",
        "x",
        None,
        lambda x: mpmath.sqrt(1 + x**2) * mpmath.tanh(x) + mpmath.log(3 + x),
        GRID,
    ),
    (
        "-V0/(1 + exp((r - R)/a))",
        "r",
        {"V0": 50.0, "R": 4.1, "a": 0.65},
        lambda r: -50 / (1 + mpmath.exp((r - mpmath.mpf("4.1")) / mpmath.mpf("0.65"))),
        RGRID,
    ),
    (
        "r**1.5*exp(-r) - 1/r",
        "r",
        None,
        lambda r: r ** mpmath.mpf("1.5") * mpmath.exp(-r) - 1 / r,
        RGRID,
    ),
]


@pytest.mark.parametrize(("text", "variable", "params", "mpfunc", "grid"), DERIVATIVE_CASES)
def test_derivatives_match_mpmath_numerical_differentiation(text, variable, params, mpfunc, grid):
    f = compile_formula(text, variable=variable, parameters=params)
    with mpmath.workdps(30):
        ref1 = np.array([float(mpmath.diff(mpfunc, mpmath.mpf(float(p)), 1)) for p in grid])
        ref2 = np.array([float(mpmath.diff(mpfunc, mpmath.mpf(float(p)), 2)) for p in grid])
    np.testing.assert_allclose(f.d1(grid), ref1, rtol=RTOL_DERIVATIVE, atol=ATOL_DERIVATIVE)
    np.testing.assert_allclose(f.d2(grid), ref2, rtol=RTOL_DERIVATIVE, atol=ATOL_DERIVATIVE)


def test_derivatives_match_central_finite_differences():
    # Central differences have error h^2 f'''/6; with h = 1e-4 and |f'''| < 50 that is < 1e-7,
    # plus rounding eps*|f|/h ~ 1e-11.
    fd_tol = 1e-6
    f = compile_formula("exp(-x**2)*cos(3*x) + x**3/10")
    h = 1e-4
    x = np.linspace(-2.0, 2.0, 17)
    np.testing.assert_allclose(f.d1(x), (f.value(x + h) - f.value(x - h)) / (2 * h), atol=fd_tol)
    np.testing.assert_allclose(f.d2(x), (f.d1(x + h) - f.d1(x - h)) / (2 * h), atol=fd_tol)


def test_abs_has_sign_derivative_and_zero_second_derivative():
    # d|x|/dx = sign(x); the delta function at the kink is dropped (documented).
    f = compile_formula("abs(x)")
    x = np.array([-2.0, -0.5, 0.5, 3.0])
    np.testing.assert_array_equal(f.d1(x), np.sign(x))
    np.testing.assert_array_equal(f.d2(x), np.zeros(4))


def test_parameter_derivative_is_the_hellmann_feynman_integrand():
    # d/dg (x^2/2 + g x^4) = x^4 (calculus).
    f = compile_formula("0.5*x**2 + g*x**4", parameters={"g": 0.3})
    np.testing.assert_allclose(f.parameter_derivative("g", GRID), GRID**4, rtol=RTOL_SAME_FUNCTION)
    with pytest.raises(FormulaError, match="'h'"):
        f.parameter_derivative("h", GRID)


# ------------------------------------------------------------------------------ polynomials
POLYNOMIAL_CASES = [
    ("0.5*x**2 + g*x**4", "x", {"g": 0.1}, {2: 0.5, 4: 0.1}),
    # binomial theorem: (x - 1)^3 = x^3 - 3x^2 + 3x - 1
    ("(x - 1)**3", "x", None, {0: -1.0, 1: 3.0, 2: -3.0, 3: 1.0}),
    ("x*(x + 2) - x**2", "x", None, {1: 2.0}),
    ("c3*x**3 + c4*x**4 - 7", "x", {"c3": -0.25, "c4": 0.0625}, {0: -7.0, 3: -0.25, 4: 0.0625}),
    ("abs(x)**2/2", "x", None, {2: 0.5}),
    ("sqrt(r**2)", "r", None, {1: 1.0}),  # r > 0
    ("pi*x**2", "x", None, {2: np.pi}),
    ("x - x", "x", None, {0: 0.0}),
    ("(1 + x)**2*(1 - x)**2", "x", None, {0: 1.0, 2: -2.0, 4: 1.0}),  # (1 - x^2)^2
    ("exp(x)", "x", None, None),
    ("x**0.5", "x", None, None),
    ("1/x + x", "x", None, None),
    ("sqrt(x**2)", "x", None, None),  # |x| on the real line
    ("cosh(x)", "x", None, None),
    ("((1 + x)**50)**3", "x", None, None),  # degree 150 > MAX_POLYNOMIAL_DEGREE
]


@pytest.mark.parametrize(("text", "variable", "params", "expected"), POLYNOMIAL_CASES)
def test_polynomial_detection_and_coefficients(text, variable, params, expected):
    got = compile_formula(text, variable=variable, parameters=params).polynomial()
    if expected is None:
        assert got is None
    else:
        assert got is not None
        assert set(got) == set(expected)
        for k, v in expected.items():
            assert got[k] == pytest.approx(v, rel=RTOL_COEFFICIENT)


def test_polynomial_of_many_terms_within_limits_is_accepted():
    coeffs = {k: (-1) ** k * (k + 1) / 4 for k in range(40)}
    text = " + ".join(f"({c!r})*x**{k}" for k, c in coeffs.items())
    got = compile_formula(text).polynomial()
    assert set(got) == set(coeffs)
    for k, c in coeffs.items():
        assert got[k] == pytest.approx(c, rel=RTOL_COEFFICIENT)


# ------------------------------------------------------------------------------- thresholds
THRESHOLD_CASES = [
    # (formula, variable, parameters, limit at -inf, limit at +inf) -- textbook limits
    ("-V0/(1 + exp((r - R)/a))", "r", {"V0": 50.0, "R": 4.0, "a": 0.6}, 0.0, 0.0),
    ("-V0*exp(-x**2/a**2)", "x", {"V0": 2.0, "a": 1.0}, 0.0, 0.0),
    # Morse well: D at large separation, +inf on the wall side (Morse, Phys. Rev. 34, 57, 1929)
    ("D*(1 - exp(-alpha*x))**2", "x", {"D": 5.0, "alpha": 0.7}, np.inf, 5.0),
    ("erf(x)", "x", None, -1.0, 1.0),
    ("tanh(x)**3 + 2", "x", None, 1.0, 3.0),
    ("x**2", "x", None, np.inf, np.inf),
    ("-x**3", "x", None, np.inf, -np.inf),
    ("sin(x)", "x", None, -1.0, -1.0),  # no limit: lim inf = -1 (documented)
    # numpy overflows (inf/inf) far out; the limit must still come from sympy
    ("exp(x/0.001)/(1 + exp(x/0.001))", "x", None, 0.0, 1.0),
    (
        "-V0/(1 + exp((r - R)/a)) + W/r*exp((r - R)/a)/(a*(1 + exp((r - R)/a))**2)",
        "r",
        {"V0": 50.0, "R": 4.1, "a": 0.65, "W": 20.0},
        0.0,
        0.0,
    ),
    ("0.5*r**2 + g/r**2", "r", {"g": 0.3}, np.inf, np.inf),
]


@pytest.mark.parametrize(("text", "variable", "params", "lo", "hi"), THRESHOLD_CASES)
def test_threshold_is_the_limit_at_infinity(text, variable, params, lo, hi):
    f = compile_formula(text, variable=variable, parameters=params)
    if variable == "r":
        assert f.threshold() == hi
        assert f.threshold_both() == (hi, hi)  # one infinity for a radial coordinate
    else:
        assert f.threshold_both() == (lo, hi)
        assert f.threshold(side=-1) == lo
        assert f.threshold(side=+1) == hi


def _no_limit(*args, **kwargs):
    raise NotImplementedError("sympy.limit disabled by the test")


@pytest.mark.parametrize(
    ("text", "lo", "hi"),
    [
        ("-1/(1 + exp(x - 3))", -1.0, 0.0),
        ("x**2 - 5", np.inf, np.inf),
        ("3 - exp(x)", 3.0, -np.inf),
    ],
)
def test_threshold_numeric_fallback_when_sympy_limit_fails(monkeypatch, text, lo, hi):
    monkeypatch.setattr(sympy, "limit", _no_limit)
    f = compile_formula(text)
    assert f.threshold(-1) == pytest.approx(lo, rel=RTOL_FALLBACK, abs=RTOL_FALLBACK)
    assert f.threshold(+1) == pytest.approx(hi, rel=RTOL_FALLBACK, abs=RTOL_FALLBACK)


def test_threshold_raises_when_no_limit_can_be_found(monkeypatch):
    monkeypatch.setattr(sympy, "limit", _no_limit)
    with pytest.raises(FormulaError, match="limit"):
        compile_formula("sin(x)").threshold()
    with pytest.raises(FormulaError, match="no real values"):
        compile_formula("sqrt(x)").threshold(side=-1)


def test_threshold_rejects_limits_sympy_takes_in_the_complex_plane():
    # log(x) -> oo as x -> -oo for sympy (|log|); on the real line there are no values there.
    f = compile_formula("log(x)")
    assert f.threshold(+1) == np.inf
    with pytest.raises(FormulaError, match="no real values"):
        f.threshold(-1)
    with pytest.raises(FormulaError, match="side"):
        compile_formula("x").threshold(side=2)


# ------------------------------------------------------------------- shapes and numerics
def test_results_are_float_arrays_broadcast_to_the_input_shape():
    f = compile_formula("3")  # constant: lambdify alone would return a scalar
    x = np.zeros((2, 3))
    for method in (f.value, f.d1, f.d2):
        out = method(x)
        assert out.shape == (2, 3)
        assert out.dtype == np.float64
    np.testing.assert_array_equal(f.value(x), np.full((2, 3), 3.0))
    np.testing.assert_array_equal(f.d1(x), np.zeros((2, 3)))
    scalar = compile_formula("x**2").value(3)
    assert scalar.shape == ()
    assert scalar == 9.0
    assert compile_formula("x + 1").value([1, 2]).tolist() == [2.0, 3.0]


def test_invalid_arithmetic_gives_nan_or_inf_without_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = compile_formula("sqrt(x) + log(x + 2)").value([-1.0, -3.0, 4.0])
        assert np.isnan(out[0])
        assert np.isnan(out[1])
        assert out[2] == pytest.approx(2.0 + np.log(6.0), rel=RTOL_SAME_FUNCTION)
        assert compile_formula("log(x)").value(0.0) == -np.inf
        assert compile_formula("1/r", variable="r").value(0.0) == np.inf
        assert np.isnan(compile_formula("x**(1/3)").value(-8.0))


def test_formula_pickles_and_compares_by_text_variable_parameters():
    f = compile_formula("g*x**2", parameters={"g": 2.0})
    g = pickle.loads(pickle.dumps(f))
    assert isinstance(g, Formula)
    assert g == f
    assert hash(g) == hash(f)
    assert g.value(3.0) == 18.0
    assert f != compile_formula("g*x**2", parameters={"g": 3.0})
    with pytest.raises(TypeError):
        f.parameters["g"] = 5.0  # read-only mapping


# ----------------------------------------------------------------- unsafe and invalid text
UNSAFE = [
    # (text, piece that the message must quote)
    ("__import__('os')", "__import__('os')"),
    ("__import__('os').system('true')", "__import__('os').system('true')"),
    ("x.__class__", "x.__class__"),
    ("().__class__.__bases__[0].__subclasses__()", "().__class__.__bases__[0].__subclasses__()"),
    ("lambda: 1", "lambda: 1"),
    ("[x for x in y]", "[x for x in y]"),
    ('f"{x}"', 'f"{x}"'),
    ("open('f')", "open('f')"),
    ("exp(x, 2)", "exp(x, 2)"),
    ("exp(x=1)", "exp(x=1)"),
    ("exp(*[x])", "exp(*[x])"),
    ("True*x", "True"),
    ("1j*x", "1j"),
    ("'a'*x", "'a'"),
    ("x + None", "None"),
    ("9**9**9", "9**9**9"),
    ("x**1000", "x**1000"),
    ("gg*x", "gg"),
    ("x^2", "x^2"),
    ("x // 2", "x // 2"),
    ("x if x > 0 else 0", "x if x > 0 else 0"),
    ("x < 1", "x < 1"),
    ("x[0]", "x[0]"),
    ("(x := 2)", "x := 2"),
    ("~x", "~x"),
    ("exp", "exp"),
    ("(x)(2)", "(x)(2)"),
    ("sqrt(-1)*x", "sqrt(-1)"),
    ("1/0 + x", "1/0"),
    ("log(0)*x", "log(0)"),
    ("1e999*x", "1e999"),
    ("r**2", "r"),  # wrong coordinate for a 1D formula
    ("__builtins__", "__builtins__"),
]


@pytest.mark.parametrize(("text", "piece"), UNSAFE)
def test_unsafe_or_invalid_formula_is_rejected_quoting_the_piece(text, piece):
    with pytest.raises(FormulaError) as info:
        compile_formula(text, parameters={"g": 1.0})
    assert info.value.piece == piece
    assert repr(piece) in str(info.value) or piece in str(info.value)
    assert isinstance(info.value, ValueError)


@pytest.mark.parametrize("text", ["x.__class__", "lambda: 1", "open('f')", "x // 2", "True*x"])
def test_rejection_message_says_what_is_allowed(text):
    with pytest.raises(FormulaError, match=r"allowed are numbers.*exp, log, sqrt"):
        compile_formula(text)


def test_unknown_name_gets_a_near_miss_suggestion():
    with pytest.raises(FormulaError, match=r"did you mean 'g'\?"):
        compile_formula("0.5*x**2 + gg*x**4", parameters={"g": 0.1})
    with pytest.raises(FormulaError, match=r"did you mean 'sqrt'\?"):
        compile_formula("sqtr(x)")
    with pytest.raises(FormulaError, match=r"did you mean 'x'\?"):
        compile_formula("X**2")
    with pytest.raises(FormulaError, match="variable of this formula is 'r'"):
        compile_formula("x**2", variable="r")


def test_too_long_text_is_rejected():
    text = "x+" * 2500  # 5000 characters
    with pytest.raises(FormulaError, match="5000 characters long; at most 1000") as info:
        compile_formula(text)
    assert info.value.piece.startswith("x+x+x+")
    compile_formula("x" + " " * (MAX_LENGTH - 1))  # the limit itself is allowed


def test_deep_nesting_is_rejected():
    deep_parens = "(" * 300 + "x" + ")" * 300  # beyond the parser's own limit too
    with pytest.raises(FormulaError, match="nested"):
        compile_formula(deep_parens)
    just_over = "(" * (MAX_NESTING + 1) + "x" + ")" * (MAX_NESTING + 1)
    with pytest.raises(FormulaError, match=f"more than {MAX_NESTING} deep") as info:
        compile_formula(just_over)
    assert info.value.piece in just_over
    compile_formula("(" * MAX_NESTING + "x" + ")" * MAX_NESTING)
    with pytest.raises(FormulaError, match="operations deep"):
        compile_formula("-" * 300 + "x")
    with pytest.raises(FormulaError, match="operations deep"):
        compile_formula("exp(" * 40 + "x" + ")" * 40 + "+x" * 80)


def test_syntax_errors_become_formula_errors_quoting_the_spot():
    for text in ["x +", "x; import os", "x\0", "2x", "import os"]:
        with pytest.raises(FormulaError, match="not a valid expression") as info:
            compile_formula(text)
        assert info.value.piece


@pytest.mark.parametrize(
    ("params", "needle"),
    [
        ({"__class__": 1.0}, "'__class__'"),
        ({"lambda": 1.0}, "keyword"),
        ({"match": 1.0}, "keyword"),
        ({"exp": 1.0}, "function"),
        ({"pi": 1.0}, "constant"),
        ({"x": 1.0}, "variable"),
        ({"1g": 1.0}, "identifier"),
        ({"g h": 1.0}, "identifier"),
        ({"g": True}, "real number"),
        ({"g": "1"}, "real number"),
        ({"g": float("nan")}, "finite"),
        ({"g": float("inf")}, "finite"),
    ],
)
def test_bad_parameters_are_rejected_naming_them(params, needle):
    with pytest.raises(FormulaError, match=needle):
        compile_formula("x", parameters=params)


def test_bad_argument_types_and_variable():
    with pytest.raises(TypeError, match="formula must be a string"):
        compile_formula(3.0)
    with pytest.raises(TypeError, match="parameters must be a mapping"):
        compile_formula("x", parameters=[("g", 1.0)])
    with pytest.raises(FormulaError, match="variable must be one of"):
        compile_formula("y", variable="y")
    with pytest.raises(FormulaError, match="empty"):
        compile_formula("   ")


def test_parameter_values_that_make_the_formula_complex_or_infinite_are_rejected():
    with pytest.raises(FormulaError, match="complex"):
        compile_formula("sqrt(g)*x", parameters={"g": -1.0})
    with pytest.raises(FormulaError, match="infinite"):
        compile_formula("x/g", parameters={"g": 0.0})


def test_formula_text_never_reaches_eval_sympify_or_parse_expr(monkeypatch):
    def forbidden(*args, **kwargs):
        raise AssertionError(f"called on {args[:1]!r}")

    # lambdify runs exec on code it generates from the validated tree (acceptable); nothing
    # may call eval, sympify or parse_expr. Patch after imports (namedtuple uses eval).
    monkeypatch.setattr(builtins, "eval", forbidden)
    monkeypatch.setattr(sympy, "sympify", forbidden)
    monkeypatch.setattr(sympy.parsing.sympy_parser, "parse_expr", forbidden)
    f = compile_formula(
        "-V0/(1 + exp((r - R)/a)) + erf(r)*sqrt(r) + abs(r - 1)",
        variable="r",
        parameters={"V0": 50.0, "R": 4.0, "a": 0.6},
    )
    assert np.all(np.isfinite(f.value(RGRID)))
    assert np.all(np.isfinite(f.d1(RGRID)))
    assert np.all(np.isfinite(f.d2(RGRID)))
    assert f.threshold() == np.inf
    assert f.polynomial() is None
    g = compile_formula("0.5*x**2 + g*x**4", parameters={"g": 0.1})
    assert g.polynomial() == {2: 0.5, 4: 0.1}
    assert g.threshold_both() == (np.inf, np.inf)
    np.testing.assert_allclose(g.parameter_derivative("g", GRID), GRID**4, rtol=RTOL_SAME_FUNCTION)


def test_only_the_variable_reaches_lambdify():
    # lambdify pastes symbol names into source code (PITFALLS §5): after substituting the
    # parameters, the only free symbol must be the validated coordinate.
    f = compile_formula("a*x + b*x**2", parameters={"a": 1.0, "b": 2.0})
    assert {s.name for s in f.numeric_expr.free_symbols} == {"x"}
    assert {s.name for s in f.expr.free_symbols} == {"a", "b", "x"}
