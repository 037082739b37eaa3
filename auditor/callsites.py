"""Literal arguments at call sites of a function (in its own file and in the project's tests),
used as measured inputs: `exp_neg(10.0)` says x = 10 is a value the author cares about."""
from __future__ import annotations

import ast
from collections.abc import Iterable
from typing import Any

#: At most this many call-site points per function (the rest of the samples are drawn).
MAX_POINTS = 32


def _number(node: ast.AST) -> float | int | None:
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = _number(node.operand)
        return None if inner is None else (-inner if isinstance(node.op, ast.USub) else inner)
    if isinstance(node, ast.Constant) and type(node.value) in (int, float):
        return node.value  # type: ignore[return-value]
    return None


def _calls_to(tree: ast.AST, name: str) -> Iterable[ast.Call]:
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            if (isinstance(func, ast.Name) and func.id == name) or (isinstance(func, ast.Attribute) and func.attr == name):
                yield node


def call_points(trees: Iterable[ast.AST], function: ast.FunctionDef) -> list[dict[str, Any]]:
    """One point per call whose arguments include number literals, keyed by parameter name."""
    args = function.args
    params = [a.arg for a in (*args.posonlyargs, *args.args)]
    if params and params[0] in ("self", "cls"):
        params = params[1:]
    keywords = set(params) | {a.arg for a in args.kwonlyargs}
    points: list[dict[str, Any]] = []
    for tree in trees:
        for call in _calls_to(tree, function.name):
            point: dict[str, Any] = {}
            for param, arg in zip(params, call.args):
                value = _number(arg)
                if value is not None:
                    point[param] = value
            for kw in call.keywords:
                value = _number(kw.value) if kw.arg in keywords else None
                if value is not None and kw.arg is not None:
                    point[kw.arg] = value
            if point and point not in points:
                points.append(point)
            if len(points) >= MAX_POINTS:
                return points
    return points
