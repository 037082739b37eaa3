"""Loop trip bounds (auditor.tripcount) against Python's own range/len, and the private-helper call rule."""
from __future__ import annotations

import ast

from hypothesis import given, settings
from hypothesis import strategies as st

from auditor.rule import Context
from auditor.tripcount import item_bound


def _first_loop_bound(source: str) -> int | None:
    tree = ast.parse(source)
    ctx = Context(tree, "t.py", source)
    loop = next(n for n in ast.walk(tree) if isinstance(n, ast.For))
    return item_bound(ctx, loop.iter)


@settings(max_examples=80, deadline=None)
@given(st.integers(-20, 40), st.integers(-20, 40), st.integers(1, 7))
def test_range_bound_is_the_length_python_gives(start, stop, step):
    # reference: the built-in range's length (Python language reference, common practice)
    src = f"def f(x):\n    hi = {stop}\n    for i in range({start}, hi, {step}):\n        x += i\n"
    assert _first_loop_bound(src) == len(range(start, stop, step))


def test_comprehension_over_a_local_literal_range():
    src = ("def f(x):\n    n = 6\n    for ll in range(n):\n        rest = [i for i in range(n) if i != ll]\n"
           "        for i in rest:\n            x += i\n")
    tree = ast.parse(src)
    ctx = Context(tree, "t.py", src)
    inner = [n for n in ast.walk(tree) if isinstance(n, ast.For)][1]
    assert item_bound(ctx, inner.iter) == len([i for i in range(6) if i != 0]) + 1  # filters only drop items


def test_a_grown_list_and_a_data_length_are_open():
    assert _first_loop_bound("def f(x):\n    r = [1, 2]\n    r.append(x)\n    for v in r:\n        x += v\n") is None
    assert _first_loop_bound("def f(x):\n    for i in range(len(x)):\n        x += i\n") is None


PRIVATE = ("def _walk(t):\n    s = 0.0\n    for i in range(len(t)):\n        s += t[i]\n    return s\n\n\n"
           "def a():\n    t = (1.0, 2.0, 3.0)\n    return _walk(t)\n\n\ndef b():\n    return _walk(t=[4.0, 5.0])\n")


def test_private_helper_takes_the_longest_literal_any_caller_passes():
    assert _first_loop_bound(PRIVATE) == len((1.0, 2.0, 3.0))


def test_private_helper_used_any_other_way_is_open():
    assert _first_loop_bound(PRIVATE + "\nHANDLERS = [_walk]\n") is None  # passed as a value
    assert _first_loop_bound(PRIVATE + "\n__all__ = ['_walk']\n") is None  # exported by name
    assert _first_loop_bound(PRIVATE + "\ndef c(data):\n    return _walk(data)\n") is None  # a caller passes data
    assert _first_loop_bound(PRIVATE.replace("def _walk", "def walk").replace("_walk(", "walk(")) is None  # public
