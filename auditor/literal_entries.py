"""Entries of a literal matrix picked by constant indices: `A[0, 1]` of `A = np.array([[0.5, -0.2], ...])`.

`known_values` reads one-dimensional literal rows; a test that spells out a small transition or
covariance matrix and then uses `A[0, 0]` and `A[1, 1]` fixes those entries just as firmly. The
name must be bound once in the scope and never written through (`A[0, 0] = ...`, `A += ...`,
`A.fill(...)`), so that the literal is still what the subscript reads.
"""
from __future__ import annotations

import ast

from auditor.rule import Context
from auditor.values import Values, known_values

_ARRAY_MAKERS = ("array", "asarray", "asanyarray")
#: ndarray methods that change the array in place
_MUTATORS = frozenset({"fill", "sort", "put", "itemset", "resize", "setfield", "partition"})


def entry_values(ctx: Context, expr: ast.AST) -> Values | None:
    """The values `expr` takes when the code spells them out, also through constant multi-indices
    into a nested literal array bound once to a local; else None (as `known_values`)."""
    found = known_values(ctx, expr)
    if found is not None or not isinstance(expr, ast.Subscript):
        return found
    index = _constant_indices(expr.slice)
    literal: ast.expr | None = _literal_matrix(ctx, expr.value)
    if index is None or literal is None:
        return None
    for i in index:
        if not isinstance(literal, (ast.List, ast.Tuple)) or not -len(literal.elts) <= i < len(literal.elts):
            return None
        literal = literal.elts[i]
    if isinstance(literal, (ast.List, ast.Tuple)):
        return None  # a whole row: its shape matters to the caller, not only its values
    return known_values(ctx, literal)


def _constant_indices(index: ast.expr) -> tuple[int, ...] | None:
    parts = index.elts if isinstance(index, ast.Tuple) else [index]
    out: list[int] = []
    for part in parts:
        sign = -1 if isinstance(part, ast.UnaryOp) and isinstance(part.op, ast.USub) else 1
        value = part.operand if isinstance(part, ast.UnaryOp) and sign < 0 else part
        if not (isinstance(value, ast.Constant) and type(value.value) is int):
            return None
        out.append(sign * value.value)
    return tuple(out)


def _literal_matrix(ctx: Context, base: ast.expr) -> ast.List | ast.Tuple | None:
    """The nested literal a local name holds, when it is bound once and never changed in place."""
    if not isinstance(base, ast.Name):
        return None
    scope = ctx.scope(base)
    if isinstance(scope, ast.Module) or len(ctx.flow(scope).of(base.id)) != 1 or _written_through(scope, base.id):
        return None
    origin = ctx.origin(base)
    if isinstance(origin, ast.Call) and ctx.family(origin) in _ARRAY_MAKERS and len(origin.args) == 1:
        origin = origin.args[0]
    return origin if isinstance(origin, (ast.List, ast.Tuple)) else None


def _written_through(scope: ast.AST, name: str) -> bool:
    """True when the scope stores into `name[...]`, augments it, or calls an in-place method on it."""
    for node in ast.walk(scope):
        if isinstance(node, ast.Subscript) and isinstance(node.ctx, (ast.Store, ast.Del)) \
                and isinstance(node.value, ast.Name) and node.value.id == name:
            return True
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and node.target.id == name:
            return True
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr in _MUTATORS \
                and isinstance(node.func.value, ast.Name) and node.func.value.id == name:
            return True
        if isinstance(node, ast.keyword) and node.arg == "out" and isinstance(node.value, ast.Name) \
                and node.value.id == name:
            return True
    return False
