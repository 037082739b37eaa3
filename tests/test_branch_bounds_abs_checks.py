"""auditor.branch_bounds, auditor.abs_checks, auditor.solver_defs and log_space.log_space_only:
uses that keep a value from 0 or see only its absolute error."""
from __future__ import annotations

import ast
import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest

from auditor.abs_checks import absolute_check_only
from auditor.branch_bounds import guarded_away_from_zero
from auditor.log_space import log_space_only
from auditor.rule import Context
from auditor.solver_defs import solver_residual


def _ctx(source: str) -> tuple[Context, ast.Module]:
    tree = ast.parse(source)
    return Context(tree, "case.py", source), tree


def _log_and_x(tree: ast.Module) -> tuple[ast.Call, ast.expr]:
    log = next(n for n in ast.walk(tree) if isinstance(n, ast.Call) and ast.unparse(n.func) in ("np.log", "math.log"))
    arg = log.args[0]
    assert isinstance(arg, ast.BinOp)
    return log, arg.right


GUARDS = [
    ("def f(p):\n    if 0.975 < p:\n        return math.log(1 - p)\n", True),
    ("def f(p):\n    cut = 1 - 0.025\n    if p > cut and p < 2:\n        return math.log(1 - p)\n", True),
    ("def f(p):\n    if p < 0.5:\n        return 0\n    else:\n        return math.log(1 - p)\n", True),
    ("def f(p):\n    if p < 0.5:\n        return 0\n    return math.log(1 - p)\n", True),  # an early return
    ("def f(p):\n    if p < -0.2:\n        return math.log(1 - p)\n", True),
    ("def f(p):\n    if p < 0.975:\n        return math.log(1 - p)\n", False),  # p may be near 0
    ("def f(p):\n    if p > 0.01:\n        return math.log(1 - p)\n", False),  # 0.01 is small
    ("def f(p):\n    if p > 0.5 or p < 0.4:\n        return math.log(1 - p)\n", False),
    ("def f(p, q):\n    if p > 0.5:\n        p = q\n        return math.log(1 - p)\n", False),  # rebound after the test
    ("def f(p):\n    if not p < 0.5:\n        return math.log(1 - p)\n", True),
]


@pytest.mark.parametrize("body, expected", GUARDS)
def test_guarded_away_from_zero(body: str, expected: bool) -> None:
    ctx, tree = _ctx("import math\n" + body)
    log, x = _log_and_x(tree)
    assert guarded_away_from_zero(ctx, log, x, 0.1) is expected


def test_sterbenz_one_minus_p_exact_above_half() -> None:
    # Sterbenz's lemma (D. Goldberg, ACM Computing Surveys 23(1), 1991, Theorem 11; from memory): for
    # y/2 <= x <= 2y the difference x - y is exact, so 1 - p is exact for p in [0.5, 1] and log(1 - p)
    # is as good as log1p(-p) there; mpmath gives the reference log.
    for p in np.linspace(0.5, 1 - 2**-40, 997):
        assert Fraction(1) - Fraction(float(p)) == Fraction(1 - float(p))
        with mpmath.workdps(40):
            ref = float(mpmath.log(1 - mpmath.mpf(float(p))))
        assert abs(math.log(1 - p) - ref) <= 2 * abs(ref) * 2**-53


ABSOLUTE = [
    ("expected = 1.0 - np.exp(-t)\n    assert_almost_equal(y, expected)", True),
    ("assert_almost_equal(1.0 - np.exp(-t), y, decimal=10)", True),
    ("assert_array_almost_equal(y, -(1.0 - np.exp(-t)))", True),
    ("assert_allclose(y, 1.0 - np.exp(-t), rtol=0, atol=1e-10)", True),
    ("assert_almost_equal(y, 1.0 - np.exp(-t), decimal=14)", False),  # 1.5e-14 is within reach of the error
    ("assert_allclose(y, 1.0 - np.exp(-t))", False),  # rtol=1e-7 is relative
    ("expected = 1.0 - np.exp(-t)\n    assert_almost_equal(y, expected)\n    return expected / t", False),
]


@pytest.mark.parametrize("body, expected", ABSOLUTE)
def test_absolute_check_only(body: str, expected: bool) -> None:
    ctx, tree = _ctx(f"import numpy as np\ndef test_f(t, y):\n    {body}\n")
    sub = next(n for n in ast.walk(tree) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub))
    assert absolute_check_only(ctx, sub) is expected


def test_cancelling_form_error_is_below_default_tolerance() -> None:
    # numpy.testing.assert_almost_equal passes when abs(desired - actual) < 1.5 * 10**-decimal, decimal=7
    # by default (numpy documentation, from memory); 1 - exp(-t) against mpmath stays far below that
    # on a step-response grid, even where it has lost most of its relative digits.
    worst = 0.0
    for t in np.concatenate([np.linspace(0, 7, 100), np.geomspace(1e-15, 1e-3, 50)]):
        with mpmath.workdps(40):
            ref = float(-mpmath.expm1(-mpmath.mpf(float(t))))
        worst = max(worst, abs((1.0 - np.exp(-t)) - ref))
    assert worst < 1e-15 < 1.5e-7


SOLVERS = [
    ("def F(x):\n    g = np.zeros(2)\n    g[0] = np.exp(x[0]) - 1\n    return g\nsol = root(F, [1.0, 1.0])\n", True),
    ("def F(x):\n    return [np.exp(x[0]) - 1, x[1]]\nsol = fsolve(func=F, x0=[1.0, 1.0])\n", True),
    ("def F(x):\n    return np.exp(x) - 1\nsol = root(F, 1.0)\nv = F(1e-9)\n", False),  # also used for its value
    ("def F(x):\n    return np.exp(x) - 1\n", False),  # never handed to a solver
    ("def F(x):\n    s = np.exp(x) - 1\n    return 1 / s\nsol = root(F, 1.0)\n", False),  # the returned value divides
]


@pytest.mark.parametrize("source, expected", SOLVERS)
def test_solver_residual(source: str, expected: bool) -> None:
    ctx, tree = _ctx("import numpy as np\nfrom scipy.optimize import root, fsolve\n" + source)
    sub = next(n for n in ast.walk(tree) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub))
    assert solver_residual(ctx, sub) is expected


LOG_SPACE = [
    ("lq = np.log(1 - p)\n    t = c + lq * (n - k)\n    t[k == n] = 0\n    m = t.max()\n"
     "    return m + np.log(np.exp(t - m).sum())", True),
    ("return np.exp(np.log(1 - p) / 3.0)", True),
    ("return logsumexp(c + k * np.log(1 - p))", True),
    ("return np.exp(n * np.log(1 - p / n))", False),  # the compound limit: the factor grows as p/n shrinks
    ("r = rng.uniform()\n    w = np.exp(n * np.log(1 - p / n))\n    return r < w", True),
    ("return 1 - np.exp(k * np.log(1 - p))", False),  # set against 1
    ("lq = np.log(1 - p)\n    return np.exp(lq), lq", False),  # the log itself is returned
]


@pytest.mark.parametrize("body, expected", LOG_SPACE)
def test_log_space_only(body: str, expected: bool) -> None:
    ctx, tree = _ctx(f"import numpy as np\nfrom scipy.special import logsumexp\ndef f(p, c, k, n, rng):\n    {body}\n")
    log, x = _log_and_x(tree)
    assert log_space_only(ctx, log, x) is expected


def test_power_in_log_space_matches_the_power() -> None:
    # exp(k*log(1 - p)) against mpmath's (1 - p)**k: the error is that of rounding 1 - p, k units of eps
    # in relative terms, the same as the direct power (1 - p)**k (common practice).
    for p in (1e-3, 1e-9, 1e-14):
        for k in (0.2, 3.0, 40.0):
            with mpmath.workdps(40):
                ref = float((1 - mpmath.mpf(p)) ** mpmath.mpf(k))
            got = math.exp(k * math.log(1 - p))
            assert abs(got - ref) <= (k + 2) * 2**-52 * ref
