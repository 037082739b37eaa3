"""Tallies returned by calls asked for them: the counts item of `return_counts=True` or
`return_ties=True`, whole numbers even after a cast to float.

`np.unique(x, return_counts=True)` returns the counts last (numpy documentation, "unique_counts",
common practice); a ranking helper called with `return_ties=True` returns the tie counts last
in the same way. A count squared stays exact below 2**53, so `t*t - 1` of tie counts loses nothing.
"""
from __future__ import annotations

import ast

from auditor.rule import Context

#: keywords that ask a call to return tallies as its last item
_TALLY_FLAGS = frozenset({"return_counts", "return_ties"})
#: conversions that keep the values (a cast of whole numbers to float is exact below 2**53)
_CASTS = frozenset({"asarray", "array", "float64", "double", "asanyarray"})


def tally(ctx: Context, expr: ast.expr, depth: int = 4) -> bool:
    """True when `expr` is the last item unpacked from a call with `return_counts=True` or
    `return_ties=True`, seen through local names, casts (`xp.asarray(t, dtype=...)`, `t.astype(...)`)
    and tuple-to-tuple assignments."""
    if depth <= 0:
        return False
    if isinstance(expr, ast.Call):
        inner = _cast_operand(ctx, expr)
        return inner is not None and tally(ctx, inner, depth - 1)
    if not isinstance(expr, ast.Name):
        return False
    binding = ctx.binding(expr)
    if binding is None or binding.kind not in ("assign", "unpack"):
        return False
    if len(ctx.flow(ctx.scope(expr)).of(expr.id)) > 1 and ctx.enclosing_loops(expr):
        return False  # rebound inside a loop: the reaching value is ambiguous
    stmt = binding.stmt
    if not (isinstance(stmt, ast.Assign) and len(stmt.targets) == 1):
        return False
    target = stmt.targets[0]
    if isinstance(target, ast.Name):
        return tally(ctx, stmt.value, depth - 1)
    if not isinstance(target, (ast.Tuple, ast.List)):
        return False
    names = [t.id if isinstance(t, ast.Name) else None for t in target.elts]
    if expr.id not in names:
        return False
    position = names.index(expr.id)
    if isinstance(stmt.value, (ast.Tuple, ast.List)) and len(stmt.value.elts) == len(names):
        return tally(ctx, stmt.value.elts[position], depth - 1)  # data, t = f(data), g(t)
    return position == len(names) - 1 and isinstance(stmt.value, ast.Call) and _asks_for_tallies(stmt.value)


def _asks_for_tallies(call: ast.Call) -> bool:
    return any(k.arg in _TALLY_FLAGS and isinstance(k.value, ast.Constant) and k.value.value is True
               for k in call.keywords)


def _cast_operand(ctx: Context, call: ast.Call) -> ast.expr | None:
    """t for `asarray(t, dtype=...)`, `np.float64(t)`, `xp.asarray(t)`, `t.astype(float)`."""
    func = call.func
    if isinstance(func, ast.Attribute) and func.attr == "astype" and len(call.args) <= 1:
        return func.value
    name = ctx.family(call) or (func.attr if isinstance(func, ast.Attribute) else None)
    if name in _CASTS and call.args and not isinstance(call.args[0], ast.Starred):
        return call.args[0]
    return None
