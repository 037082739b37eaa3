"""auditor.root_guards and auditor.log_space: guards that keep a root from 1, and logs whose absolute error is all that counts."""
from __future__ import annotations

import ast

import numpy as np
import pytest

from auditor.log_space import beside_large_constant, exponentiated_only
from auditor.root_guards import guarded_root
from auditor.rule import Context


def _ctx(source: str) -> tuple[Context, ast.Module]:
    tree = ast.parse(source)
    return Context(tree, "case.py", source), tree


def _use_of(tree: ast.Module, name: str) -> ast.Name:
    """The last load of `name` that is the left operand of a subtraction."""
    subs = [n for n in ast.walk(tree) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub)
            and isinstance(n.left, ast.Name) and n.left.id == name]
    return subs[-1].left  # type: ignore[return-value]


GUARDED = [
    ("if np.angle(a) >= np.pi / 2:\n        a = np.sqrt(a)", True),
    ("if abs(np.angle(a)) > 1.0:\n        a = np.sqrt(a)", True),
    ("if a > 4.0:\n        a = np.sqrt(a)", True),
    ("if 0.25 > a:\n        a = np.sqrt(a)", True),
    ("if a > 1.01:\n        a = np.sqrt(a)", False),  # sqrt(1.01) - 1 still loses two digits
    ("if np.angle(a) >= 0.01:\n        a = np.sqrt(a)", False),
    ("if k > 2:\n        a = np.sqrt(a)", False),
    ("if a > 4.0:\n        a = a / 8\n        a = np.sqrt(a)", False),  # rebound before the root
    ("if a > 4.0:\n        pass\n    else:\n        a = np.sqrt(a)", False),
]


@pytest.mark.parametrize("guard, expected", GUARDED)
def test_guarded_root(guard: str, expected: bool) -> None:
    source = f"import numpy as np\ndef f(a, k):\n    {guard}\n    return a - 1\n"
    ctx, tree = _ctx(source)
    assert guarded_root(ctx, _use_of(tree, "a")) is expected


def test_angle_bound_holds() -> None:
    # |w - 1| >= |w| sin(arg w) for 0 <= arg w <= pi/2, and |w - 1| >= |w| beyond (distance to the real
    # axis; common practice): so arg(a) >= t gives magnification |w / (w - 1)| <= 1 / sin(t / 2) for w = sqrt(a)
    rng = np.random.default_rng(7)
    t = np.pi / 2
    a = rng.uniform(0.01, 100, 2000) * np.exp(1j * rng.uniform(t, np.pi, 2000))
    w = np.sqrt(a)
    assert np.all(np.abs(w / (w - 1)) <= 1 / np.sin(t / 2) * (1 + 1e-12))


LOGS = [
    ("import numpy as np\ndef f(d, n):\n    s = np.log(1 - d / n)\n    s = np.cumsum(s)\n    return np.exp(s)\n", True),
    ("import numpy as np\ndef f(h):\n    return np.exp(np.log(1 - h).sum() - 2.0)\n", True),
    ("import numpy as np\ndef f(p):\n    s = np.exp(np.sum(np.log(1 - p)))\n    return 1 - s\n", False),
    ("import numpy as np\ndef f(h):\n    return np.exp(3 * np.log(1 - h))\n", False),  # a scaling is not a sum
    ("import numpy as np\ndef f(h):\n    s = np.log(1 - h)\n    return np.exp(s), s\n", False),
]


@pytest.mark.parametrize("source, expected", LOGS)
def test_exponentiated_only(source: str, expected: bool) -> None:
    ctx, tree = _ctx(source)
    log = next(n for n in ast.walk(tree) if isinstance(n, ast.Call) and ast.unparse(n.func) == "np.log")
    assert exponentiated_only(ctx, log) is expected


SUMS = [
    ("-nobs * np.log(2 * np.pi) / 2 - nobs * np.log(1 - r * r) / 2", True),
    ("-nvars * nobs / 2 - nobs * (d + sum(np.log(1 - lam)[:k])) / 2", True),
    ("nobs * 0.001 - nobs * np.log(1 - r * r)", False),  # the constant term is smaller than eps can hide
    ("w * 3.0 - nobs * np.log(1 - r * r)", False),  # the scale nobs is not shared
    ("x - np.log(1 + x)", False),
]


@pytest.mark.parametrize("expr, expected", SUMS)
def test_beside_large_constant(expr: str, expected: bool) -> None:
    ctx, tree = _ctx(f"import numpy as np\ndef f(nobs, nvars, r, d, lam, k, w, x):\n    return {expr}\n")
    log = next(n for n in ast.walk(tree) if isinstance(n, ast.Call) and ast.unparse(n.func) == "np.log"
               and "1" in ast.unparse(n.args[0]) and "pi" not in ast.unparse(n.args[0]))
    assert beside_large_constant(ctx, log) is expected
