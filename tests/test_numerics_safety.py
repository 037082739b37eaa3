"""Hostile or runaway units end within the per-unit budget as not-measured; nothing is executed."""
from __future__ import annotations

import ast
import time

import pytest

from auditor.model import Verdict
from tests.numerics_helpers import measure_code

BUDGET_S = 2.0  # the per-unit budget (auditor.numerics.budget.Budget default)


def _measure(code: str, kind: type[ast.AST] = ast.Return) -> tuple[str, float]:
    started = time.monotonic()
    if kind is ast.Return:
        got = measure_code(code, "subtractive-cancellation", ast.Return)
    else:
        got = measure_code(code, "naive-accumulation", kind)
    elapsed = time.monotonic() - started
    assert got.measurement.verdict is Verdict.NOT_MEASURED, got.measurement
    return got.measurement.reason, elapsed


def _return_expr_code(body: str) -> str:
    return f"import math\ndef f(x):\n    return {body}\n"


@pytest.mark.parametrize(("body", "words"), [
    ("__import__('os').system('echo hacked') + x", "__import__"),
    ("x.__class__.__mro__[1] + x", "dunder"),
    ("getattr(x, 'real') + x", "getattr"),
    ("eval('1') + x", "eval"),
    ("open('/etc/passwd') + x", "open"),
])
def test_forbidden_names_are_refused_before_running(body, words):
    # The unit is the expression after `return`; a Return's value is an expression finding.
    code = _return_expr_code(body)
    got = measure_code(code, "subtractive-cancellation", ast.BinOp)
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert words in got.measurement.reason


def test_huge_integer_power_is_refused():
    got = measure_code(_return_expr_code("10**10**10 - x"), "subtractive-cancellation", ast.BinOp)
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert "too large" in got.measurement.reason


def test_huge_factorial_is_refused_quickly():
    started = time.monotonic()
    got = measure_code(_return_expr_code("math.factorial(10**9) - x"), "subtractive-cancellation", ast.BinOp)
    assert time.monotonic() - started < BUDGET_S
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert "factorial" in got.measurement.reason


def test_endless_while_ends_within_budget():
    code = "def f(x):\n    s = 0.0\n    while True:\n        s += x\n    return s\n"
    reason, elapsed = _measure(code, ast.While)
    assert elapsed < BUDGET_S + 1.0
    assert "runaway" in reason or "budget" in reason


def test_slow_endless_loop_hits_the_time_budget():
    # Each pass is costly (big-number arithmetic), so the clock, not the step count, stops it.
    code = "import math\ndef f(x):\n    s = x\n    while s == s:\n        s = math.exp(math.log(abs(s) + 1.0))\n    return s\n"
    reason, elapsed = _measure(code, ast.While)
    assert elapsed < 3 * BUDGET_S
    assert "runaway" in reason or "budget" in reason


def test_huge_list_is_refused():
    got = measure_code(_return_expr_code("len([0] * 10**9) + x"), "subtractive-cancellation", ast.BinOp)
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert "too long" in got.measurement.reason


def test_unbounded_recursion_is_refused():
    code = "def g(x):\n    return g(x) + 1.0\ndef f(x):\n    s = 0.0\n    for k in range(3):\n        s += g(x)\n    return s\n"
    reason, elapsed = _measure(code, ast.For)
    assert "nested too deeply" in reason
    assert elapsed < BUDGET_S


def test_method_of_unknown_object_is_named():
    code = "class M:\n    def f(self, x):\n        return self.model.predict(x) - 1.0\n"
    got = measure_code(code, "subtractive-cancellation", ast.BinOp)
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert "calls self.model.predict" in got.measurement.reason


def test_no_side_effect_happens(tmp_path):
    marker = tmp_path / "touched"
    code = f"import os\ndef f(x):\n    return os.system('touch {marker}') - x\n"
    got = measure_code(code, "subtractive-cancellation", ast.BinOp)
    assert got.measurement.verdict is Verdict.NOT_MEASURED
    assert not marker.exists()
