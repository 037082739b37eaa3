"""Facts rules read from the source: class-attribute constants, array-API namespaces, same-file returns,
relative imports, and reference survival values at literal points."""
from __future__ import annotations

import ast

import pytest

from auditor.array_api import namespace_function
from auditor.bounded import is_orthogonal
from auditor.class_constants import class_attribute_value, literal_numbers
from auditor.literal_tails import special_value, stats_survival
from auditor.local_returns import returned_items
from auditor.relative_names import relative_qualname
from auditor.rule import Context


def _ctx(src: str, path: str = "lab.py") -> tuple[ast.Module, Context]:
    tree = ast.parse(src)
    return tree, Context(tree, path, src)


def _first(tree: ast.AST, kind: type, pred=lambda n: True):  # type: ignore[no-untyped-def]
    return next(n for n in ast.walk(tree) if isinstance(n, kind) and pred(n))


_CLASS = (
    "class TestBench:\n    @classmethod\n    def setup_class(cls):\n        cls.levels = [0.5, 2.0]\n"
    "    def test_a(self):\n        return self.levels\n"
)


def test_class_attribute_set_once_is_a_constant() -> None:
    tree, ctx = _ctx(_CLASS)
    use = _first(tree, ast.Attribute, lambda n: isinstance(n.ctx, ast.Load) and n.attr == "levels")
    assert literal_numbers(ctx, use) == (0.5, 2.0)


def test_class_attribute_stored_twice_is_not_a_constant() -> None:
    tree, ctx = _ctx(_CLASS + "    def test_b(self):\n        self.levels = [9.0]\n")
    use = _first(tree, ast.Attribute, lambda n: isinstance(n.ctx, ast.Load) and n.attr == "levels")
    assert class_attribute_value(ctx, use) is None


def test_parameter_default_is_not_a_constant() -> None:
    tree, ctx = _ctx("def f(step=0.1):\n    return step\n")
    assert literal_numbers(ctx, tree.body[0].body[0].value) is None  # type: ignore[attr-defined]


def test_namespace_from_getter_or_conventional_parameter() -> None:
    src = ("def g(a, xp=None):\n    xp = array_namespace(a) if xp is None else xp\n    return xp.mean(a)\n"
           "def h(a, lib):\n    return lib.mean(a)\n")
    tree, ctx = _ctx(src)
    calls = [n for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Attribute)]
    assert [namespace_function(ctx, c) for c in calls] == ["mean", None]


def test_returned_items_of_a_same_file_helper() -> None:
    src = "def parts(t):\n    return t, t * 2\ndef use(t):\n    return parts(t)\n"
    tree, ctx = _ctx(src)
    call = _first(tree, ast.Call)
    items = returned_items(ctx, call, 1, 2)
    assert items is not None and ast.unparse(items[0]) == "t * 2"
    assert returned_items(ctx, call, 0, 3) is None  # another shape: unknown


def test_relative_import_matched_by_folders() -> None:
    src = "from .matrix_utilities import rotation_matrix\ndef f(t):\n    return rotation_matrix(t, 'z')\n"
    known = frozenset({"astropy.coordinates.matrix_utilities.rotation_matrix"})
    tree, ctx = _ctx(src, "/site/astropy/coordinates/sky.py")
    call = _first(tree, ast.Call)
    assert relative_qualname(ctx, call.func, known) in known and is_orthogonal(ctx, call)
    tree, ctx = _ctx(src, "/site/mylab/optics/sky.py")
    assert relative_qualname(ctx, _first(tree, ast.Call).func, known) is None


def test_reference_survival_values() -> None:
    pytest.importorskip("scipy")
    # chi-square with 1 degree of freedom at 1: 2 * (1 - Phi(1)) = 0.31731 (Abramowitz & Stegun table 26.1, from memory)
    assert stats_survival("chi2", [1.0], [[1.0]], {}) == pytest.approx(0.3173105, rel=1e-6)
    # normal upper tail at 5 sigma: 2.8665e-7 (Abramowitz & Stegun table 26.1, from memory)
    assert stats_survival("norm", [5.0, 1.0], [], {}) == pytest.approx(2.8665157e-7, rel=1e-6)
    # erfc(1) = 0.157299 (Abramowitz & Stegun table 7.1, from memory)
    assert special_value("erfc", [[1.0]]) == pytest.approx(0.1572992, rel=1e-6)
    assert stats_survival("ttest_ind", [1.0], [], {}) is None  # not a distribution object: never called
