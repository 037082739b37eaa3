"""The shadow evaluator: the float run does exactly what Python does; the reference is mpmath."""
from __future__ import annotations

import ast
import math

import mpmath
import numpy as np
import pytest

from auditor.numerics.backends import FLOAT, REFERENCE
from auditor.numerics.budget import Budget, NotEvaluable
from auditor.numerics.statements import UnitCompiler, compile_expression
from auditor.numerics.unit import source_module


def compile_fn(code: str, name: str, reference: bool = False):
    tree = ast.parse(code)
    module = source_module(tree)
    compiler = UnitCompiler(REFERENCE if reference else FLOAT, module, Budget())
    return compiler.compile_function(module.functions[name])


def compile_expr(text: str, names: list[str], reference: bool = False, prelude: str = "import math\nimport numpy as np\n"):
    module = source_module(ast.parse(prelude))
    compiler = UnitCompiler(REFERENCE if reference else FLOAT, module, Budget())
    return compile_expression(compiler, ast.parse(text, mode="eval").body, names)


@pytest.mark.parametrize(("text", "x"), [
    ("(x + 0.2) - 0.3", 0.1),
    ("x * x - 2.0 * x + 1.0", 1.0000001),
    ("math.exp(x) - 1", 1e-10),
    ("math.sqrt(x + 1) - math.sqrt(x)", 1e12),
    ("1.0 / 3.0 * x - x / 3.0", 7.0),
    ("x ** 0.5 - math.pow(x, 0.5)", 2.0),
    ("abs(-x) % 0.7 + x // 0.3", 5.1),
])
def test_float_run_matches_python_bit_for_bit(text, x):
    # The same operations in the same order: Python's own result is the reference here.
    expected = {"(x + 0.2) - 0.3": lambda: (x + 0.2) - 0.3, "x * x - 2.0 * x + 1.0": lambda: x * x - 2.0 * x + 1.0,
                "math.exp(x) - 1": lambda: math.exp(x) - 1,
                "math.sqrt(x + 1) - math.sqrt(x)": lambda: math.sqrt(x + 1) - math.sqrt(x),
                "1.0 / 3.0 * x - x / 3.0": lambda: 1.0 / 3.0 * x - x / 3.0,
                "x ** 0.5 - math.pow(x, 0.5)": lambda: x ** 0.5 - math.pow(x, 0.5),
                "abs(-x) % 0.7 + x // 0.3": lambda: abs(-x) % 0.7 + x // 0.3}[text]()
    assert compile_expr(text, ["x"])(x=x) == expected


def test_float32_stays_float32():
    fn = compile_expr("np.float32(x) * np.float32(3.0) + np.float32(1e-3)", ["x"])
    got = fn(x=0.1)
    assert isinstance(got, np.float32)
    assert got == np.float32(0.1) * np.float32(3.0) + np.float32(1e-3)


def test_reference_uses_exact_binary_inputs_and_literals():
    fn = compile_expr("x - 0.1", ["x"], reference=True)
    with mpmath.workprec(200):
        got = fn(x=mpmath.mpf(0.1))
    assert got == 0  # both are the same binary value 0.1000000000000000055511151231257827


def test_statements_loops_and_sibling_calls():
    code = """
def helper(t):
    return t * t

def f(x, n=5):
    total = 0.0
    k = 0
    while k < n:
        if k % 2 == 0:
            total += helper(x) / (k + 1)
        else:
            total -= x
        k += 1
    for j in range(3):
        if j == 2:
            break
        total = total + j
    else:
        total = -1.0
    a, b = total, 2.0
    return a * b
"""
    def f(x, n=5):  # the same code, run by Python to give the expected value
        total, k = 0.0, 0
        while k < n:
            if k % 2 == 0:
                total += x * x / (k + 1)
            else:
                total -= x
            k += 1
        for j in range(3):
            if j == 2:
                break
            total = total + j
        return total * 2.0

    assert compile_fn(code, "f")(1.7) == f(1.7)
    with mpmath.workprec(200):
        ref = compile_fn(code, "f", reference=True)(mpmath.mpf(1.7))
    assert float(ref) == pytest.approx(f(1.7), rel=1e-15)


def test_numpy_arrays_element_by_element():
    text = "np.sum((-x) ** np.arange(12) / (np.arange(12) + 1))"
    got = compile_expr(text, ["x"])(x=0.5)
    assert got == np.sum((-0.5) ** np.arange(12) / (np.arange(12) + 1))
    with mpmath.workprec(200):
        ref = compile_expr(text, ["x"], reference=True)(x=mpmath.mpf(0.5))
        exact = mpmath.fsum((-mpmath.mpf(0.5)) ** k / (k + 1) for k in range(12))
        assert abs(ref - exact) < mpmath.mpf(10) ** -50


def test_generator_sum_and_scipy_special():
    text = "sum((-1) ** k * x ** (2 * k + 1) / math.factorial(2 * k + 1) for k in range(10)) - special.erf(x)"
    fn = compile_expr(text, ["x"], prelude="import math\nfrom scipy import special\n")
    from scipy import special

    assert fn(x=0.3) == sum((-1) ** k * 0.3 ** (2 * k + 1) / math.factorial(2 * k + 1) for k in range(10)) - special.erf(0.3)
    with mpmath.workprec(200):
        ref = compile_expr(text, ["x"], reference=True, prelude="import math\nfrom scipy import special\n")(x=mpmath.mpf(0.3))
        # the 10-term sine series is off by about 0.3^21/21! ~ 1e-30 (mpmath.sin, mpmath.erf)
        assert abs(ref - (mpmath.sin(mpmath.mpf(0.3)) - mpmath.erf(mpmath.mpf(0.3)))) < mpmath.mpf(10) ** -29


@pytest.mark.parametrize(("text", "named"), [
    ("foo(x)", "calls foo"),
    ("x.__class__", "dunder"),
    ("'a' + x", "non-numeric constant"),
    ("lambda: x", "Lambda"),
    ("np.linalg.eig(x)", "numpy.linalg.eig"),
    ("x.tofile(0)", "calls x.tofile"),
    ("y + x", "'y'"),
])
def test_unknown_things_are_named(text, named):
    with pytest.raises(NotEvaluable, match=named.replace(".", r"\.")):
        compile_expr(text, ["x"])


def test_star_import_shadows_the_builtin():
    # Python semantics: `from numpy import *` binds sum to numpy.sum, which accepts a scalar.
    fn = compile_expr("sum(x) + 1.0", ["x"], prelude="from numpy import *\n")
    assert fn(x=np.float64(2.5)) == np.sum(np.float64(2.5)) + 1.0
    assert compile_expr("sum(v)", ["v"])(v=[0.5, 0.25]) == 0.75  # no import: the builtin
