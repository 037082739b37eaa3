"""Upper bounds on the size of a value, from how the code builds it: literals, sines and cosines,
t/sqrt(t**2 + c), their products and quotients by constants.

`1 - x*x` cancels only where |x| is near 1. When the code builds x as a bounded function times
a constant below 1 (`sqrt(2/pi) * a/sqrt(1 + a**2)` is at most 0.798 in size), 1 - x*x stays
above 0.36 and nothing cancels.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.bounded import UNIT_FAMILIES, divided_by_own_norm
from auditor.elementary import sqrt_argument, square_base
from auditor.rule import Context
from auditor.values import certain_binding, known_values



def magnitude_bound(ctx: Context, expr: ast.expr, depth: int = 6) -> float | None:
    """An upper bound on |expr| over every value it can take, or None when the code does not fix one."""
    if depth <= 0:
        return None
    values = known_values(ctx, expr)
    if values is not None:
        return max(abs(v) for v in values)
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return magnitude_bound(ctx, expr.operand, depth - 1)
    if isinstance(expr, ast.Name):
        origin = ctx.origin(expr, depth=1)
        if origin is expr or not certain_binding(ctx, expr):
            return None  # not assigned, or another assignment (on a branch) may be the one in effect
        return magnitude_bound(ctx, origin, depth - 1)
    if isinstance(expr, ast.Call):
        return 1.0 if ctx.family(expr) in UNIT_FAMILIES and len(expr.args) == 1 and not _complex(ctx, expr) else None
    if not isinstance(expr, ast.BinOp):
        return None
    if isinstance(expr.op, ast.Mult):
        left, right = magnitude_bound(ctx, expr.left, depth - 1), magnitude_bound(ctx, expr.right, depth - 1)
        return None if left is None or right is None else left * right
    if isinstance(expr.op, ast.Div):
        return _quotient_bound(ctx, expr, depth)
    return None


def _complex(ctx: Context, call: ast.Call) -> bool:
    """A cmath call: sin of a complex argument is not bounded."""
    return (ctx.qualname(call.func) or "").startswith("cmath.")


def _quotient_bound(ctx: Context, expr: ast.BinOp, depth: int) -> float | None:
    """t / sqrt(t**2 + c) with c >= 0, t / hypot(t, s), v / norm(v): at most 1; x / k for a literal k."""
    if _over_own_length(ctx, expr.left, expr.right) or divided_by_own_norm(ctx, expr.left, expr.right):
        return 1.0
    # a product whose factors are each bounded, divided by such a length (c * t / sqrt(1 + t**2))
    if isinstance(expr.left, ast.BinOp) and isinstance(expr.left.op, ast.Mult):
        for mine, other in ((expr.left.left, expr.left.right), (expr.left.right, expr.left.left)):
            if _over_own_length(ctx, mine, expr.right):
                bound = magnitude_bound(ctx, other, depth - 1)
                return None if bound is None else bound
    divisor = known_values(ctx, expr.right)
    if divisor is None or min(abs(v) for v in divisor) == 0:
        return None
    top = magnitude_bound(ctx, expr.left, depth - 1)
    return None if top is None else top / min(abs(v) for v in divisor)


def _over_own_length(ctx: Context, top: ast.expr, bottom: ast.expr) -> bool:
    """True for t / sqrt(t**2 + c) (any order of the terms) with every other term a square or a
    non-negative literal: the radicand is at least t**2, so the quotient is at most 1 in size."""
    bottom = ctx.origin(bottom)
    radicand = sqrt_argument(ctx, bottom)
    if radicand is None:
        return False
    terms = _terms(ctx.origin(radicand))
    if terms is None:
        return False
    bases = [square_base(ctx, t) for t in terms]
    if not any(b is not None and p.same_expr(b, top) for b in bases):
        return False
    return all(b is not None or _non_negative_literal(t) for t, b in zip(terms, bases))


def _terms(expr: ast.expr) -> list[ast.expr] | None:
    """The terms of a sum written with `+` only; None when it subtracts anything."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Add):
        left, right = _terms(expr.left), _terms(expr.right)
        return None if left is None or right is None else left + right
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Sub):
        return None
    return [expr]


def _non_negative_literal(expr: ast.expr) -> bool:
    value = p.literal_number(expr)
    return isinstance(value, (int, float)) and value >= 0
