"""Hostile formulas: each one either works or fails with one clear FormulaError, and none hangs.

Reference: the documented contract (DESIGN §7: bad input is refused with one clear line, exit
2, no traceback; the work of formula analysis is bounded). Numbers are checked against mpmath
(arbitrary precision) and IEEE 754 double precision (largest float 1.797e308).

A hang must fail the suite, not stall it: every formula is analysed in one child process with a
hard timeout (no timed assertions: the timeout only turns a hang into a failure).
"""

from __future__ import annotations

import json
import math
import os
import re
import subprocess
import sys
import textwrap
from pathlib import Path

import mpmath
import numpy as np
import pytest

import anharmony as ah

SRC = str(Path(__file__).resolve().parents[1] / "src")
HARD_TIMEOUT = 120  # seconds for all formulas together; the bounded work takes a few seconds

# (formula, parameters). Each is compiled, and where it compiles its limits at -inf and +inf
# are taken and it is evaluated on a grid.
HOSTILE = {
    "tower of powers": ("x**x**x**x**x", {}),
    "tower of exponentials": ("exp(exp(exp(exp(exp(x)))))", {}),
    "constant tower": ("exp(exp(exp(exp(100))))*x**2", {}),
    "constant overflow": ("exp(1000)*x**2", {}),
    "constant overflow by product": ("exp(700)*exp(700)*x**2", {}),
    "cosh overflow": ("x**2*cosh(1e6)", {}),
    "parameter overflow": ("x**2*exp(b)", {"b": 1000.0}),
    "parameter exponent": ("x**a", {"a": 1000000.0}),
    "parameter tower": ("a*x**2*exp(exp(exp(exp(b))))", {"a": 1.0, "b": 100.0}),
    "harmless underflow": ("x**2 + exp(-1e20)", {}),
    "sine of a huge integer": ("x**2 + sin(1e30)", {}),
    "double exponential well": ("x**2*exp(-exp(exp(x)))", {}),
    "power of a power": ("x**(x**x)", {}),
    "oscillating tower": ("x**2*sin(exp(exp(x)))", {}),
    "essential growth": ("x**2 + (1+1/x)**(x**3)", {}),
    "huge exponent": ("x**1000000", {}),
    "power tower of numbers": ("x**2*10**10**10", {}),
    "float literal overflow": ("1e400*x**2", {}),
    "float product overflow": ("1e308*1e308*x**2", {}),
    "division by zero": ("x**2 + 1/0", {}),
    "nan name": ("x**2*nan", {}),
    "inf name": ("x**2 + inf", {}),
    "gamma": ("x**2*gamma(200)", {}),
    "factorial": ("x**2*factorial(200)", {}),
    "deep brackets": ("(" * 200 + "x" + ")" * 200, {}),
    "deep unary minus": ("-" * 900 + "x", {}),
    "long tower text": ("x" + "**x" * 300, {}),
    "100 kB": ("+".join(["x**2"] * 25000), {}),
    # the product rule makes 60*59 terms of 58 factors for the second derivative
    "long product": ("*".join(f"(x+{i})" for i in range(60)), {}),
    "many nodes": ("*".join(["(x+x+x+x+x+x+x+x+x+x)"] * 30), {}),
}

PROBE = textwrap.dedent(
    """
    import json, sys
    import numpy as np
    from anharmony.formula import FormulaError, compile_formula
    cases = json.loads(sys.stdin.read())
    for name, (text, params) in cases.items():
        out = {}
        try:
            f = compile_formula(text, parameters=params)
        except FormulaError as exc:
            out["compile"] = ["FormulaError", str(exc)]
        else:
            out["compile"] = ["ok", ""]
            for side in (-1, 1):
                try:
                    out[str(side)] = ["ok", repr(f.threshold(side))]
                except FormulaError as exc:
                    out[str(side)] = ["FormulaError", str(exc)]
            out["finite values"] = int(np.isfinite(f.value(np.linspace(-3, 3, 61))).sum())
            out["value at 0"] = repr(float(f.value(0.0)))
        print(json.dumps([name, out]), flush=True)
    """
)


@pytest.fixture(scope="module")
def outcomes():
    env = dict(os.environ, PYTHONPATH=SRC + os.pathsep + os.environ.get("PYTHONPATH", ""))
    try:
        proc = subprocess.run([sys.executable, "-c", PROBE], input=json.dumps(HOSTILE), env=env,
                              capture_output=True, text=True, timeout=HARD_TIMEOUT)
    except subprocess.TimeoutExpired as exc:
        done = (exc.stdout or b"").decode() if isinstance(exc.stdout, bytes) else exc.stdout or ""
        pytest.fail(f"formula analysis hung; finished before the hang:\n{done}")
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr, proc.stderr
    return dict(json.loads(line) for line in proc.stdout.splitlines())


def _refused(outcomes, name, *words):
    kind, message = outcomes[name]["compile"]
    assert kind == "FormulaError", (name, outcomes[name])
    assert HOSTILE[name][0][:20] in message or "..." in message  # names the formula
    for w in words:
        assert w in message, (name, message)
    assert "\n" not in message  # one line


def test_every_hostile_formula_returns(outcomes):
    assert set(outcomes) == set(HOSTILE)


@pytest.mark.parametrize("name, piece", [
    # mpmath: exp(100) = 2.7e43, so exp(exp(100)) is far beyond the largest double 1.797e308
    ("constant tower", "'exp(exp(100))'"),
    ("constant overflow", "'exp(1000)'"),  # exp(1000) = 1.97e434 (mpmath)
    ("constant overflow by product", "'exp(700)*exp(700)'"),  # exp(1400) = 1.1e608
    ("cosh overflow", "'cosh(1e6)'"),
    ("parameter overflow", "'exp(b)'"),
    ("parameter tower", "exp(exp(exp(exp(b))))"),
])
def test_constants_that_overflow_a_float_are_refused_naming_the_piece(outcomes, name, piece):
    _refused(outcomes, name, piece, "overflows a float")


def test_refusals_of_other_hostile_text(outcomes):
    _refused(outcomes, "huge exponent", "exponent", "too large")
    # the same bound whether the exponent is written or comes from a parameter
    _refused(outcomes, "parameter exponent", "exponent of 'x**a' is too large", "1000000.0")
    _refused(outcomes, "power tower of numbers", "exponent", "too large")
    _refused(outcomes, "float literal overflow", "floating-point range")
    _refused(outcomes, "float product overflow", "floating-point range")
    _refused(outcomes, "division by zero", "divides by zero")
    _refused(outcomes, "nan name", "unknown name 'nan'")
    _refused(outcomes, "inf name", "unknown name 'inf'")
    _refused(outcomes, "gamma", "unknown function 'gamma'")
    _refused(outcomes, "factorial", "unknown function 'factorial'")
    _refused(outcomes, "deep brackets", "nested more than")
    _refused(outcomes, "deep unary minus", "nested more than")
    _refused(outcomes, "long tower text", "nested more than")
    _refused(outcomes, "100 kB", "characters long")
    _refused(outcomes, "many nodes", "syntax nodes")
    _refused(outcomes, "long product", "too complex", "second derivative")


def test_an_underflowing_constant_is_harmless(outcomes):
    # exp(-1e20) is far below the smallest double: the formula is x**2 for every float
    out = outcomes["harmless underflow"]
    assert out["compile"][0] == "ok"
    assert out["1"] == ["ok", "inf"] and out["-1"] == ["ok", "inf"]
    assert out["finite values"] == 61 and out["value at 0"] == "0.0"


def test_functions_of_integers_beyond_int64_evaluate(outcomes):
    # 1e30 is read as the exact integer 10**30 (shortest round-trip decimal): its sine from
    # mpmath at 30 digits; a double carries it to rounding
    out = outcomes["sine of a huge integer"]
    assert out["finite values"] == 61
    with mpmath.workdps(30):
        expected = float(mpmath.sin(mpmath.mpf(10) ** 30))
    assert float(out["value at 0"]) == pytest.approx(expected, rel=1e-14)


@pytest.mark.parametrize("name, lo, hi", [
    # x**x**x grows without bound as x -> +inf; at -inf sympy's limit is taken (the values at
    # negative integers are real)
    ("tower of powers", None, math.inf),
    # exp(x) -> 0 as x -> -inf, so the tower tends to exp(exp(exp(exp(0)))) = exp(exp(e))
    ("tower of exponentials", float(mpmath.exp(mpmath.exp(mpmath.e))), math.inf),
    # exp(-exp(exp(x))) dies faster than any power as x -> +inf; tends to exp(-1) as x -> -inf
    ("double exponential well", math.inf, 0.0),
    ("power of a power", None, math.inf),
    # (1 + 1/x)**(x**3) = exp(x**2 - x/2 + ...) -> inf on both sides (Taylor series of log)
    ("essential growth", math.inf, math.inf),
])
def test_limits_of_towers_are_found_within_the_bound(outcomes, name, lo, hi):
    out = outcomes[name]
    assert out["compile"][0] == "ok"
    assert out["1"] == ["ok", repr(hi)]
    if lo is not None:
        kind, value = out["-1"]
        assert kind == "ok"
        # the limit is exact (sympy) or a sample at 1e300 (numeric fallback): rounding only
        assert float(value) == pytest.approx(lo, rel=1e-12)


def test_an_oscillating_tower_fails_with_a_clear_error_not_a_hang(outcomes):
    # x**2*sin(exp(exp(x))) has no limit as x -> +inf (the amplitude grows)
    kind, message = outcomes["oscillating tower"]["1"]
    assert kind == "FormulaError" and "cannot determine its limit" in message


CASE = """\
schema: 1
title: hostile formula
units: atomic
particle: {{mass: 1.0}}
space: {{dimension: 1}}
well:
  - harmonic: {{frequency: 1.0}}
  - expression: {{formula: '{formula}'}}
basis: {{size: 20}}
levels: {{count: 3}}
output: out.nc
"""


@pytest.mark.parametrize("formula, expected", [
    # refused while the case is read: the line and column of the formula, and the field
    ("exp(exp(exp(exp(100))))*x**2",
     r"case\.yaml:8:\d+: well\[1\]\.formula: .*the constant 'exp\(exp\(100\)\)' overflows"),
    # x**x is not real for negative non-integer x (x = -0.001 is the first probe point)
    ("x**x**x**x**x", r"case\.yaml:8:\d+: well\[1\]\.formula: 'x\*\*x\*\*x\*\*x\*\*x' has no "
                      r"real value at x = -0\.001"),
])
def test_check_refuses_a_hostile_formula_with_exit_2_and_one_line(tmp_path, formula, expected):
    path = tmp_path / "case.yaml"
    path.write_text(CASE.format(formula=formula), encoding="utf-8")
    env = dict(os.environ, PYTHONPATH=SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
               MPLBACKEND="Agg")
    proc = subprocess.run([sys.executable, "-m", "anharmony", "check", str(path)], env=env,
                          capture_output=True, text=True, timeout=HARD_TIMEOUT, cwd=tmp_path)
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, lines

    assert re.search(expected, lines[0]), lines[0]


@pytest.mark.parametrize("formula", [
    "sin(x)**x",  # (-sin(0.5))**(-0.5) is not real
    "log(log(log(log(log(x)))))",  # log of a negative number for 0 < x < 1 and x < 0
    "x**2 + (1+1/x)**(x**3)",  # 1 + 1/x < 0 for -1 < x < 0, raised to a fractional power
    "sqrt(x)",  # a 1D well lives on the whole line
])
def test_a_formula_not_real_on_the_line_is_refused_when_the_well_is_built(formula):
    with pytest.raises(ah.TermError, match=r"expression\.formula: .*has no real value at x = "):
        ah.Well.from_terms([{"expression": {"formula": formula}}])


@pytest.mark.parametrize("formula, x, expected", [
    # NaN in floats from overflow, not from complex values: cosh(x) - sinh(x) = exp(-x)
    ("cosh(x) - sinh(x) + x**2", 2.0, math.exp(-2.0) + 4.0),
    # 0/0 at x = 0 only, which the probe avoids; sin(x)/x at 2 from math.sin
    ("sin(x)/x + x**2", 2.0, math.sin(2.0) / 2.0 + 4.0),
])
def test_nan_from_overflow_or_at_one_point_is_not_refused(formula, x, expected):
    well = ah.Well.from_terms([{"expression": {"formula": formula}}])
    # same function by another operation order: rounding only
    assert float(well.value(np.array([x]))[0]) == pytest.approx(expected, rel=1e-13)
