"""Differences of ordinates that serve as divided differences of an interpolating polynomial.

In Newton's form p(v) = f1 + (f2 - f1)/(a2 - a1) * (v - a1) + ... the ordinates f_i are the
data. When they are rounded squares (`f1 = y1**2`), `f2 - f1` carries an absolute error of about
eps*(f1 + f2); over the node spacing and times an offset (v - a1) of the same scale it adds about
eps*f to p, the same as the rounding of the constant term f1 that p contains anyway. Factoring the
difference cannot remove that term's error, so nothing is gained. (Newton's divided differences:
e.g. Burden & Faires, Numerical Analysis, section 3.3, common practice.) A slope on its own
(`(x1**2 - x0**2) / (t1 - t0)` returned as a rate) is not recognised: its relative error is the
result's.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.elementary import reads_variables
from auditor.flow import ASSIGN
from auditor.rule import Context


def interpolation_ordinates(ctx: Context, node: ast.AST, left: ast.expr, right: ast.expr, depth: int = 3) -> bool:
    """True when `node` = left - right is the numerator of a divided difference (over a difference
    of other, non-constant values) whose every use reaches, scaled by an offset such as (v - a1),
    a sum that also holds `left` or `right` itself as a term: an interpolation in those ordinates."""
    quotient = ctx.parent(node)
    if not (isinstance(quotient, ast.BinOp) and isinstance(quotient.op, ast.Div) and quotient.left is node):
        return False
    if not _spacing(ctx, quotient.right, node):
        return False
    ordinates = [ctx.origin(left), ctx.origin(right)]
    return _reaches_polynomial(ctx, quotient, ordinates, False, depth)


def _spacing(ctx: Context, expr: ast.expr, numerator: ast.AST) -> bool:
    """`a2 - a1` of two variables that the numerator does not read (abscissae, not the ordinates)."""
    if not (isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Sub)):
        return False
    if not (reads_variables(ctx, expr.left) and reads_variables(ctx, expr.right)):
        return False
    return not (p.names_in(expr) & p.names_in(numerator))


def _offset(ctx: Context, expr: ast.expr) -> bool:
    """A difference of two non-constant values, or a power of one: (v - a1), (v - a1)**2."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Pow):
        expr = expr.left
    return isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Sub) \
        and reads_variables(ctx, expr.left) and reads_variables(ctx, expr.right)


def _terms(expr: ast.expr) -> list[ast.expr]:
    """The terms of a chain of + and -, signs dropped."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub)):
        return _terms(expr.left) + _terms(expr.right)
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return _terms(expr.operand)
    return [expr]


def _holds_ordinate(ctx: Context, expr: ast.expr, ordinates: list[ast.expr]) -> bool:
    return any(p.same_expr(ctx.origin(t), o) for t in _terms(expr) for o in ordinates)


def _reaches_polynomial(ctx: Context, node: ast.AST, ordinates: list[ast.expr], scaled: bool, depth: int) -> bool:
    """Walk up from `node` through factors, numerators, powers' bases and sums to a sum beside an
    ordinate (after an offset factor); through a plain local, every read must get there."""
    while True:
        parent = ctx.parent(node)
        if isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub)):
            other = parent.right if parent.left is node else parent.left
            if scaled and _holds_ordinate(ctx, other, ordinates):
                return True
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Mult):
            scaled = scaled or _offset(ctx, parent.right if parent.left is node else parent.left)
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is node:
            pass
        elif isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
            pass
        elif isinstance(parent, ast.Assign):
            return _every_read(ctx, parent, node, ordinates, scaled, depth)
        else:
            return False
        node = parent


def _every_read(ctx: Context, stmt: ast.Assign, value: ast.AST, ordinates: list[ast.expr], scaled: bool,
                depth: int) -> bool:
    if depth <= 0 or stmt.value is not value or len(stmt.targets) != 1 or not isinstance(stmt.targets[0], ast.Name):
        return False
    name, scope = stmt.targets[0].id, ctx.scope(stmt)
    if isinstance(scope, ast.Module) or any(b.kind != ASSIGN for b in ctx.flow(scope).of(name)):
        return False  # a global, or a name also augmented or unpacked: reads we would not follow
    # every read of the name is checked, whichever branch's binding reaches it (`d1` set in if/else)
    uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load)]
    return bool(uses) and all(ctx.scope(u) is scope and _reaches_polynomial(ctx, u, ordinates, scaled, depth - 1)
                              for u in uses)
