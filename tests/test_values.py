"""auditor.values: the values the code spells out, checked against numpy evaluating the same literals."""
from __future__ import annotations

import ast

import numpy as np
import pytest

from auditor.rule import Context
from auditor.values import known_values


def _last_value(source: str) -> tuple[Context, ast.expr]:
    tree = ast.parse(source)
    last = tree.body[-1]
    assert isinstance(last, (ast.Assign, ast.Expr))
    return Context(tree, "case.py", source), last.value


# each case: source whose last statement's value is evaluated, and numpy's value of the same literals
CASES = [
    ("import numpy as np\ny = np.array([[0.5, 1], [1, 2], [7, 6]]) + 1", np.array([[0.5, 1], [1, 2], [7, 6]]) + 1),
    ("p, loc = 0.3, 3\ny = 1.0 - p", [0.7]),
    ("x = 2.0\nf = x**2 + 5\nfs = f / 10\ny = 1 - fs**2", [1 - 0.81]),
    ("import numpy as np\nparams = np.r_[0.0, 2]\ny = params[1]", [2.0]),
    ("import numpy as np\ny = np.linspace(-1, 1)", np.linspace(-1, 1)),
    ("import numpy as np\ny = np.linspace(0, 2 * np.pi, 51, endpoint=False)", np.linspace(0, 2 * np.pi, 51, endpoint=False)),
    ("import numpy as np\nk = np.arange(51)\ny = 2 * np.pi * k / 51", 2 * np.pi * np.arange(51) / 51),
    ("import numpy as np\ny = np.arange(0.5, 3, 0.25)", np.arange(0.5, 3, 0.25)),
    ("import math\ny = math.sqrt(2.0) * math.exp(-1.0)", [np.sqrt(2.0) * np.exp(-1.0)]),
]


@pytest.mark.parametrize("source, expected", CASES)
def test_known_values_match_numpy(source: str, expected: object) -> None:
    ctx, expr = _last_value(source)
    found = known_values(ctx, expr)
    assert found is not None
    assert np.allclose(sorted(found), np.sort(np.ravel(expected)), rtol=1e-15, atol=0)


def test_nested_helper_arguments_from_every_call() -> None:
    source = ("import numpy as np\ndef t():\n    def f(x):\n        return np.log(1 - x)\n"
              "    x = np.array([0.125, 0.25, 0.5])\n    return f(x), f(1 - x)\n")
    tree = ast.parse(source)
    ctx = Context(tree, "case.py", source)
    inner = next(n for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id == "x" and isinstance(n.ctx, ast.Load)
                 and n.lineno == 4)
    assert sorted(known_values(ctx, inner) or ()) == sorted([0.125, 0.25, 0.5, 0.875, 0.75, 0.5])


@pytest.mark.parametrize("source", [
    "def f(x):\n    y = x + 1\n    return y",                    # a parameter: any value
    "import numpy as np\ndef f(n):\n    return np.linspace(0, 1, n)",  # a grid of unknown size
    "def t(solve):\n    def f(x):\n        return x\n    return solve(f, 0.5)",  # the helper escapes
    "def t():\n    def f(x):\n        return x\n    return f(0.5), f(1.0 + 1e-300 * t)",  # one call not spelled out
    "x = 1.0\nfor i in range(3):\n    x = x * 2\ny = x",        # rebound in a loop
    "y = 10.0 ** 400",                                          # overflows: no value to vouch for
])
def test_unknown_values_stay_unknown(source: str) -> None:
    tree = ast.parse(source)
    ctx = Context(tree, "case.py", source)
    returns = [n for n in ast.walk(tree) if isinstance(n, ast.Return)]
    innermost = max(returns, key=lambda r: r.col_offset) if returns else None
    last = tree.body[-1]
    expr = innermost.value if innermost is not None else last.value  # type: ignore[attr-defined]
    assert expr is not None
    assert known_values(ctx, expr) is None


@pytest.mark.parametrize("source", [
    "def f(c, x):\n    if c:\n        r = 0.0\n    else:\n        r = x / 3\n    return 1 - r**2\n",
    "def f(c, x):\n    r = 0.5\n    if c:\n        r = x\n    return 1 - r**2\n",
    "def f(xs):\n    r = 0.5\n    for x in xs:\n        r = x\n    return 1 - r**2\n",
    "def f(c):\n    if c:\n        r = 0.5\n    return 1 - r**2\n",
])
def test_a_value_set_on_one_branch_is_not_spelled_out(source: str) -> None:
    # linregress-style code sets r = 0.0 on one branch and computes it on the other: after the
    # if, r is not a value the code spells out, whichever binding the walk recorded last
    tree = ast.parse(source)
    ctx = Context(tree, "case.py", source)
    use = [n for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id == "r" and isinstance(n.ctx, ast.Load)][-1]
    assert known_values(ctx, use) is None


def test_a_value_set_before_and_inside_the_same_branch_is_known() -> None:
    source = "def f(c):\n    if c:\n        r = 0.5\n        return 1 - r**2\n    return 0.0\n"
    tree = ast.parse(source)
    ctx = Context(tree, "case.py", source)
    use = next(n for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id == "r" and isinstance(n.ctx, ast.Load))
    assert known_values(ctx, use) == (0.5,)


def test_bound_facts_refuse_a_value_set_on_one_branch() -> None:
    # bounded/magnitude clear hypot and 1 - x*x findings; a value that is sin(t) on one branch and
    # free on the other must not count as bounded after the if
    from auditor.bounded import is_bounded
    from auditor.magnitude import magnitude_bound

    source = ("import numpy as np\ndef f(c, t, x):\n    if c:\n        u = np.sin(t)\n    else:\n        u = x\n"
              "    return u\n")
    tree = ast.parse(source)
    ctx = Context(tree, "case.py", source)
    use = [n for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id == "u" and isinstance(n.ctx, ast.Load)][-1]
    assert not is_bounded(ctx, use)
    assert magnitude_bound(ctx, use) is None
