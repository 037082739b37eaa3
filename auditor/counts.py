"""Quantities that hold whole numbers: counts named by the trade's conventions and integral calls.

Used by rules whose hazard needs a fractional value: 1 + a count rounds nothing away, and the
square of a count is exact (below 2**53), so `log(nobs)` and `N*N - 1` lose nothing.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.rule import Context

#: identifier words that name a count or degrees of freedom (statistics and array-code conventions)
_COUNT_FIRST = frozenset({"n", "num", "nobs", "nsamples", "nrep", "df", "dof", "ddof", "count", "counts"})
_COUNT_LAST = frozenset({"count", "counts", "nobs", "df", "dof"})
#: last words that make a count-prefixed name a fraction after all (`n_rate`, `num_frac`)
_FRACTION_LAST = frozenset({"rate", "rates", "frac", "fraction", "ratio", "prob", "p", "pct", "share", "eps", "tol"})
#: calls whose values are whole numbers (floats holding integers, or -1/0/1)
_INTEGRAL = frozenset({"sign", "floor", "ceil", "rint", "trunc", "round", "bincount", "count_nonzero"})


def count_named(ctx: Context, expr: ast.expr, depth: int = 3) -> bool:
    """`nobs`, `N`, `res.df_resid + res.df_model`, `n_samples - 1`: quantities named as counts."""
    expr = ctx.origin(expr)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult)) and depth > 0:
        sides = (expr.left, expr.right)
        return any(count_named(ctx, s, depth - 1) for s in sides) and all(
            count_named(ctx, s, depth - 1) or whole(ctx, s, depth - 1) for s in sides)
    name = expr.id if isinstance(expr, ast.Name) else expr.attr if isinstance(expr, ast.Attribute) else None
    if name is None:
        return False
    words = name.lower().strip("_").split("_")
    return (words[0] in _COUNT_FIRST or words[-1] in _COUNT_LAST) and words[-1] not in _FRACTION_LAST


def whole(ctx: Context, expr: ast.expr, depth: int = 3) -> bool:
    """Integer-valued by construction: int literals, len(), shapes, range indices, sign()/floor() calls,
    and sums, differences and products of those."""
    if p.is_integer_valued(ctx, expr):
        return True
    value = p.literal_number(expr)
    if isinstance(value, float) and value.is_integer():
        return True  # 1.0, 2.0: whole numbers written as floats
    origin = ctx.origin(expr)
    if isinstance(origin, ast.Call) and ctx.family(origin) in _INTEGRAL:
        return True
    if isinstance(origin, ast.BinOp) and isinstance(origin.op, (ast.Add, ast.Sub, ast.Mult, ast.Pow)) and depth > 0:
        return whole(ctx, origin.left, depth - 1) and whole(ctx, origin.right, depth - 1)
    return False


def whole_or_count(ctx: Context, expr: ast.expr) -> bool:
    """A whole number by construction or a quantity named as a count."""
    return whole(ctx, expr) or count_named(ctx, expr)
