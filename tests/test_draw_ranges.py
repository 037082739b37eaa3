"""Value ranges of uniform draws scaled by literals, and the rules that use them (fourth field-trial draw).

References: numpy's Generator.uniform returns low + (high - low) * U with U a multiple of 2**-53 in
[0, 1) (numpy random documentation, from memory), checked here by drawing with numpy itself and at
the extreme grid values; log-odds references from mpmath at 50 digits.
"""
from __future__ import annotations

import ast

import mpmath
import numpy as np
import pytest

from auditor import Config, scan_source
from auditor.draw_ranges import value_range
from auditor.rule import Context

GENERATOR = (
    "import numpy as np\n"
    "def make(n, seed):\n"
    "    rng = np.random.default_rng(seed)\n"
    "    X = rng.uniform(size=(n, 4))\n"
    "    X[:, 0] *= 100\n"
    "    X[:, 1] *= 520 * np.pi\n"
    "    X[:, 1] += 40 * np.pi\n"
    "    X[:, 3] *= 10\n"
    "    X[:, 3] += 1\n"
    "    a = X[:, 0]\n"
    "    b = X[:, 1] * X[:, 2] - 1 / (X[:, 1] * X[:, 3])\n"
    "    c = X[:, 3] - 6\n"
    "    return a, b, c\n"
)


def spans(code: str) -> dict[str, object]:
    """The range of the value each `name = ...` line (after the draw) assigns, by name."""
    tree = ast.parse(code)
    ctx = Context(tree, "case.py", code)
    out = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Assign) and isinstance(node.targets[0], ast.Name) and len(node.targets[0].id) == 1:
            out[node.targets[0].id] = value_range(ctx, node.value)
    return out


def friedman_columns(u: np.ndarray) -> dict[str, np.ndarray]:
    """The same arithmetic as GENERATOR, in numpy, on given unit draws u of shape (n, 4)."""
    X = u.copy()
    X[:, 0] *= 100
    X[:, 1] *= 520 * np.pi
    X[:, 1] += 40 * np.pi
    X[:, 3] *= 10
    X[:, 3] += 1
    return {"a": X[:, 0], "b": X[:, 1] * X[:, 2] - 1 / (X[:, 1] * X[:, 3]), "c": X[:, 3] - 6}


def unit_draws() -> np.ndarray:
    """numpy's own draws plus the extreme points of the 2**-53 grid in every column combination."""
    drawn = np.random.default_rng(20240611).uniform(size=(200_000, 4))
    grid = np.array([0.0, 2.0**-53, 0.5, 1 - 2.0**-53])
    corners = np.array(np.meshgrid(grid, grid, grid, grid)).reshape(4, -1).T
    return np.vstack([drawn, corners])


def test_ranges_hold_for_numpy_draws():
    found = spans(GENERATOR)
    values = friedman_columns(unit_draws())
    for name, v in values.items():
        span = found[name]
        assert span is not None, name
        assert span.low <= v.min() and v.max() <= span.high, (name, span, v.min(), v.max())
        nonzero = np.abs(v[v != 0])
        assert nonzero.min() >= span.floor, (name, span.floor, nonzero.min())
    assert found["a"].low == 0 and found["c"].low < 0  # a is never negative; c is shifted below 0
    assert found["b"].magnitude < 2e3 and found["b"].floor > 1e-40


@pytest.mark.parametrize("code", [
    # scaled by a parameter: any magnitude
    "import numpy as np\ndef f(n, s):\n    X = np.random.default_rng(0).uniform(size=n)\n    X *= s\n    a = X\n",
    "import numpy as np\ndef f(n, s):\n    X = np.random.default_rng(0).uniform(size=(n, 2))\n    X[:, 0] *= s\n    a = X[:, 0]\n",
    # a store under a branch is not followed
    "import numpy as np\ndef f(n, s):\n    X = np.random.default_rng(0).uniform(size=(n, 2))\n    if s:\n"
    "        X[:, 0] -= 5\n    a = X[:, 0]\n",
    # handed to a function that may change it
    "import numpy as np\ndef f(n, g):\n    X = np.random.default_rng(0).uniform(size=(n, 2))\n    g(X)\n    a = X[:, 0]\n",
    # an alias can be changed behind the name's back
    "import numpy as np\ndef f(n):\n    X = np.random.default_rng(0).uniform(size=(n, 2))\n    Y = X\n    Y[:, 0] -= 5\n"
    "    a = X[:, 0]\n",
    # a float32 draw or an unknown generator is not read
    "import numpy as np\ndef f(n):\n    X = np.random.default_rng(0).random(n, dtype=np.float32)\n    a = X\n",
    "def f(n, rng):\n    X = rng.uniform(size=n)\n    a = X\n",
    # a bound that is not a literal
    "import numpy as np\ndef f(n, lo):\n    a = np.random.default_rng(0).uniform(lo, 1.0, size=n)\n",
])
def test_unknown_ranges(code):
    assert spans(code)["a"] is None


def test_uniform_bounds_and_other_columns():
    code = ("import numpy as np\ndef f(n):\n    rng = np.random.RandomState(1)\n    X = rng.uniform(-2.0, 3.0, size=(n, 2))\n"
            "    X[:, 1] *= -1\n    a = X[:, 0]\n    b = X[:, 1]\n    c = np.random.rand(n) ** 2\n")
    found = spans(code)
    assert found["a"].low <= -2.0 and 3.0 <= found["a"].high < 3.0001
    assert found["b"].low <= -3.0 and found["b"].high >= 2.0
    assert found["c"].low == 0 and found["c"].high <= 1.0001


def findings(code: str, rule: str):
    report = scan_source(code, "case.py", Config(only=frozenset({rule})))
    assert not report.errors, report.errors
    return [f for f in report.findings if f.rule == rule]


def test_atan_of_drawn_column_is_a_note_with_the_exact_rewrite():
    code = GENERATOR.replace("    return a, b, c\n", "    return np.arctan(b / X[:, 0])\n")
    [f] = findings(code, "atan-of-ratio")
    assert f.severity.value == "note" and f.rewrite is not None and f.rewrite.text == "np.arctan2(b, X[:, 0])"
    shifted = GENERATOR.replace("    return a, b, c\n", "    return np.arctan(b / c)\n")
    [g] = findings(shifted, "atan-of-ratio")
    assert g.severity.value == "warning" and g.rewrite is None


def test_atan_in_expected_value_of_a_check_is_a_note():
    check = ("import numpy as np\nfrom numpy.testing import assert_allclose\ndef test_it(make):\n    X, y = make(5)\n"
             "    assert_allclose(y, np.arctan(X[:, 1] / X[:, 0]))\n")
    [f] = findings(check, "atan-of-ratio")
    assert f.severity.value == "note" and f.rewrite is None
    plain = "import numpy as np\ndef angle(X):\n    return np.arctan(X[:, 1] / X[:, 0])\n"
    [g] = findings(plain, "atan-of-ratio")
    assert g.severity.value == "warning"


def test_hypot_of_drawn_columns_is_left_alone_and_overflow_stays():
    code = GENERATOR.replace("    return a, b, c\n", "    return np.sqrt(a ** 2 + b ** 2)\n")
    assert findings(code, "unguarded-hypot") == []
    big = code.replace("X[:, 0] *= 100", "X[:, 0] *= 1e200")
    assert len(findings(big, "unguarded-hypot")) == 1  # 1e200 squared overflows


@pytest.mark.parametrize("p", [0.5 + 1e-12, 0.5 - 3e-10, 0.5 + 2.0**-40, (37 + 0.5) / 75, (4001 + 0.5) / 8003])
def test_log_odds_difference_costs_no_more_than_the_input_rounding(p):
    # log(p) - log(1 - p) near p = 1/2: absolute error against the logit of the double p (mpmath, 50 digits)
    # stays within a few eps, the size of what p's own half-ulp rounding moves the logit (4 * 2**-54 ~ 2.2e-16)
    computed = float(np.log(p) - np.log(1 - p))
    with mpmath.workdps(50):
        exact = mpmath.log(mpmath.mpf(p)) - mpmath.log(1 - mpmath.mpf(p))
        assert abs(computed - exact) <= 4 * 2.0**-52
    assert findings("import numpy as np\ndef f(p):\n    return np.log(p) - np.log(1 - p)\n", "subtractive-cancellation") == []


def test_series_sign_must_be_a_factor_that_changes_per_pass():
    fixed = ("def f(a, m, n):\n    s = 0.0\n    for j in range(n):\n        s += (-1) ** m * a[j] / (j + 1.5)\n"
             "    return s\n")
    assert findings(fixed, "alternating-series") == []
    moving = fixed.replace("(-1) ** m", "(-1) ** j")
    assert len(findings(moving, "alternating-series")) == 1
    through_call = ("def f(model, n, x):\n    s = 0.0\n    for j in range(n):\n        r = model((-1) ** j * x)\n"
                    "        s += r.score / (j + 1.5)\n    return s\n")
    assert findings(through_call, "alternating-series") == []
