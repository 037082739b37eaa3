"""Bounds on a name that the branch around a use states (`if p > 0.975: ... log(1 - p)`).

A rule about small values asks whether an enclosing `if` (or conditional expression), or an
earlier `if ...: return` in the same block, keeps a name away from 0: inside `if c < p:` with
c >= 0.1 the value p is never small, and on the `else` side of `if p < c:` it is at least c.
Only plain names are followed, and only when the use reads the binding the test read.
"""
from __future__ import annotations

import ast

from auditor.rule import Context
from auditor.values import known_values

_FLIP = {ast.Lt: ast.Gt, ast.LtE: ast.GtE, ast.Gt: ast.Lt, ast.GtE: ast.LtE}


def guarded_away_from_zero(ctx: Context, node: ast.AST, x: ast.expr, bound: float) -> bool:
    """True when `x` is a name and a test that must hold wherever `node` runs keeps |x| >= `bound`."""
    if not isinstance(x, ast.Name):
        return False
    return any(_keeps(ctx, test, held, x, bound) for test, held in _conditions(ctx, node))


def _conditions(ctx: Context, node: ast.AST) -> list[tuple[ast.expr, bool]]:
    """(test, held) pairs that hold wherever `node` runs, up to its function: enclosing `if` bodies
    (True), their `else` sides (False), and earlier `if test: return/raise` in enclosing blocks (False)."""
    found: list[tuple[ast.expr, bool]] = []
    child: ast.AST = node
    for anc in ctx.ancestors(node):
        if isinstance(anc, (ast.If, ast.IfExp)) and child is not anc.test:
            body = anc.body if isinstance(anc.body, list) else [anc.body]
            found.append((anc.test, any(child is s for s in body)))
        for block in _blocks(anc):
            at = next((i for i, s in enumerate(block) if s is child), None)
            if at is not None:
                found += [(s.test, False) for s in block[:at] if isinstance(s, ast.If) and _exits(s)]
        if isinstance(anc, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            break
        child = anc
    return found


def _blocks(stmt: ast.AST) -> list[list[ast.stmt]]:
    return [b for b in (getattr(stmt, f, None) for f in ("body", "orelse", "finalbody")) if isinstance(b, list)]


def _exits(stmt: ast.If) -> bool:
    """`if test: ... return` with no else: after it the test is false."""
    return not stmt.orelse and bool(stmt.body) and \
        isinstance(stmt.body[-1], (ast.Return, ast.Raise))


def _keeps(ctx: Context, test: ast.expr, held: bool, x: ast.Name, bound: float) -> bool:
    """The test (taken as true when `held`, else as false) implies x >= bound or x <= -bound."""
    if isinstance(test, ast.BoolOp):
        conjunction = isinstance(test.op, ast.And) == held  # a held `and`, or a failed `or`
        return conjunction and any(_keeps(ctx, v, held, x, bound) for v in test.values)
    if isinstance(test, ast.UnaryOp) and isinstance(test.op, ast.Not):
        return _keeps(ctx, test.operand, not held, x, bound)
    if not (isinstance(test, ast.Compare) and len(test.ops) == 1 and type(test.ops[0]) in _FLIP):
        return False
    op, subject, other = type(test.ops[0]), test.left, test.comparators[0]
    if not _reads(ctx, subject, x):
        subject, other, op = other, subject, _FLIP[op]  # c < x reads as x > c
    if not _reads(ctx, subject, x):
        return False
    values = known_values(ctx, other)
    if values is None or len(values) != 1:
        return False
    above = op in (ast.Gt, ast.GtE)
    above = above if held else not above  # not (x < c) is x >= c
    c = values[0]
    return c >= bound if above else c <= -bound


def _reads(ctx: Context, expr: ast.expr, x: ast.Name) -> bool:
    """`expr` is the name `x` reading the same binding as `x` does."""
    if not (isinstance(expr, ast.Name) and expr.id == x.id):
        return False
    here, there = ctx.binding(expr), ctx.binding(x)
    return here is there or (here is not None and there is not None and here.stmt is there.stmt)
