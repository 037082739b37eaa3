"""Uses that pass on only an absolute error, size bounds and tallies (auditor/use_sites.py,
auditor/magnitude.py, auditor/tallies.py), checked against mpmath and numpy."""
from __future__ import annotations

import ast

import mpmath
import numpy as np
import pytest

from auditor.magnitude import magnitude_bound
from auditor.rule import Context
from auditor.tallies import tally
from auditor.use_sites import _FLAT_AT_ZERO, flat_call_argument, only_summed

#: mpmath spellings of the table's functions
_MPMATH = {
    "exp": mpmath.exp, "exp2": lambda m: mpmath.power(2, m), "cos": mpmath.cos, "cosh": mpmath.cosh,
    "ellipk": mpmath.ellipk, "ellipe": mpmath.ellipe, "i0": lambda m: mpmath.besseli(0, m),
    "j0": lambda m: mpmath.besselj(0, m), "cospi": mpmath.cospi,
}


def _condition(f, m: float) -> mpmath.mpf:
    """m f'(m) / f(m): how much a relative error in m moves f (condition number, common practice)."""
    with mpmath.workdps(40):
        x = mpmath.mpf(m)
        return abs(x * mpmath.diff(f, x) / f(x))


@pytest.mark.parametrize("family", sorted(_FLAT_AT_ZERO))
def test_flat_functions_ignore_relative_errors_near_zero(family: str) -> None:
    # mpmath as the reference: at m = 1e-8 a relative error in m reaches f at most 1e-7 times
    assert _condition(_MPMATH[family], 1e-8) < 1e-7


def test_complement_elliptic_integral_is_not_flat() -> None:
    # mpmath: K(1 - p) near p = 0 keeps a condition number above 1e-2 (log singularity), so not in the table
    assert _condition(lambda p: mpmath.ellipk(1 - p), 1e-8) > 1e-2
    assert "ellipkm1" not in _FLAT_AT_ZERO


def _ctx(source: str) -> tuple[Context, ast.Module]:
    tree = ast.parse(source)
    return Context(tree, "case.py", source), tree


def _last_assigned(tree: ast.Module, name: str) -> ast.expr:
    found = [n.value for n in ast.walk(tree) if isinstance(n, ast.Assign)
             and isinstance(n.targets[0], ast.Name) and n.targets[0].id == name]
    return found[-1]


def test_bounded_skew_constant_matches_numpy() -> None:
    source = "import numpy as np\ndef f(a):\n    const = np.sqrt(2/np.pi) * a/np.sqrt(1 + a**2)\n    return const\n"
    ctx, tree = _ctx(source)
    ret = next(n for n in ast.walk(tree) if isinstance(n, ast.Return))
    bound = magnitude_bound(ctx, ret.value)
    a = np.concatenate([-np.logspace(-8, 8, 401), np.logspace(-8, 8, 401)])
    reached = np.max(np.abs(np.sqrt(2 / np.pi) * a / np.sqrt(1 + a**2)))
    # numpy: the bound is tight and holds up to the few ulps the computed quotient rounds by
    assert bound is not None and reached <= bound * (1 + 4e-16) and bound - reached < 1e-12


@pytest.mark.parametrize("source", [
    "def f(a):\n    return a / (1 + a**2)",           # not a length: unbounded claim refused
    "import numpy as np\ndef f(a, b):\n    return a / np.sqrt(b**2 - 1)",  # a subtraction under the root
    "import numpy as np\ndef f(a, b):\n    return b / np.sqrt(1 + a**2)",  # a different numerator
])
def test_unbounded_values_get_no_bound(source: str) -> None:
    ctx, tree = _ctx(source)
    ret = next(n for n in ast.walk(tree) if isinstance(n, ast.Return))
    assert magnitude_bound(ctx, ret.value) is None


def test_unique_returns_counts_last() -> None:
    # numpy documentation of np.unique (common practice): counts come after index and inverse
    x = np.array([3.0, 1.0, 3.0, 2.5, 3.0])
    *_, counts = np.unique(x, return_index=True, return_inverse=True, return_counts=True)
    assert counts.tolist() == [1, 1, 3]
    source = ("import numpy as np\ndef f(x):\n    u, i, t = np.unique(x, return_index=True, return_counts=True)\n"
              "    t = t.astype(float)\n    return t, u, i\n")
    ctx, tree = _ctx(source)
    ret = next(n for n in ast.walk(tree) if isinstance(n, ast.Return))
    t, u, i = ret.value.elts
    assert tally(ctx, t) and not tally(ctx, u) and not tally(ctx, i)


def test_summed_uses_and_divisors() -> None:
    source = ("import numpy as np\ndef f(x, w):\n    g = (1 - x**2) * w\n    h = (1 - x**2) * w\n"
              "    return g.mean() + np.sum(g), np.sum(h) / h\n")
    ctx, tree = _ctx(source)
    g_diff = _last_assigned(tree, "g").left
    h_diff = _last_assigned(tree, "h").left
    assert only_summed(ctx, g_diff) and not only_summed(ctx, h_diff)


def test_flat_call_argument_through_a_list() -> None:
    ctx, tree = _ctx("from scipy import special\ndef f(a):\n    return special.ellipk([a**2, 1 - a**2]), special.ellipkm1(1 - a**2)\n")
    diffs = [n for n in ast.walk(tree) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub)]
    assert [flat_call_argument(ctx, d) for d in sorted(diffs, key=lambda d: d.col_offset)] == [True, False]
