"""The safe expression evaluator: arithmetic checked against Python's own
float arithmetic and the math module (the reference), limits and errors."""

import math

import pytest

from drc.netlist.expressions import ExpressionError, compile_expression, evaluate


def value(text, **scope):
    pairs = {k: (v, v) for k, v in scope.items()}
    return evaluate(compile_expression(text), pairs)[0]


@pytest.mark.parametrize("text, expected", [
    ("1+2*3", 7.0), ("(1+2)*3", 9.0), ("2^3^2", 2.0 ** 9), ("2**3", 8.0),
    ("-2^2", -4.0), ("10/4", 2.5), ("1k*2", 2000.0), ("4k7/2", 2350.0),
    ("min(3, 1, 2)", 1.0), ("max(1,5)", 5.0), ("abs(-3)", 3.0), ("sqrt(16)", 4.0),
    ("exp(1)", math.e), ("log(10)", math.log(10)), ("log10(1000)", 3.0), ("pow(2,10)", 1024.0),
    ("--3", 3.0), ("+3", 3.0), ("1e3k", 1e6),
])
def test_arithmetic(text, expected):
    assert value(text) == pytest.approx(expected)


def test_names_are_case_insensitive_and_both_readings_kept():
    expr = compile_expression("R*2 + r0")
    assert expr.names == {"r", "r0"}
    si, spice = evaluate(compile_expression("4k7 * n"), {"n": (2.0, 2.0)})
    assert (si, spice) == (9400.0, 8000.0)  # ngspice reads 4k7 as 4000 (spice-dialect.md)


@pytest.mark.parametrize("text", ["1+", "(1", "1)", "foo(1)", "1 2", "sqrt()", "pow(1)", "a b",
                                  "#", "1 +* 2"])
def test_syntax_errors(text):
    with pytest.raises(ExpressionError):
        value(text, a=1.0, b=1.0)


@pytest.mark.parametrize("text", ["1/0", "sqrt(-1)", "log(0)", "10**10**10", "exp(1e6)",
                                  "(-8)^(1/3)", "undefined_name"])
def test_evaluation_errors(text):
    with pytest.raises(ExpressionError):
        value(text)


def test_deep_nesting_fails_fast_with_the_limit_named():
    with pytest.raises(ExpressionError) as info:
        compile_expression("(" * 10_000 + "1" + ")" * 10_000)
    assert info.value.limit in ("max_expression_depth", "max_expression_work")
    with pytest.raises(ExpressionError) as info:
        compile_expression("(" * 3_000 + "1" + ")" * 3_000)
    assert info.value.limit == "max_expression_depth"
    with pytest.raises(ExpressionError) as info:
        compile_expression("-" * 5_000 + "1")
    assert info.value.limit == "max_expression_depth"
    with pytest.raises(ExpressionError) as info:
        compile_expression("+".join(["1"] * 20_000))
    assert info.value.limit == "max_expression_work"
