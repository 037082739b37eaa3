"""Shared facts about loops that accumulate series: accumulators, terms, sign patterns, ratios."""
from __future__ import annotations

import ast
from collections.abc import Iterator
from dataclasses import dataclass

from auditor import patterns as p
from auditor.rule import Context

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)


@dataclass(frozen=True, slots=True)
class Accumulation:
    """`s += term` / `s = s + term` / `s -= term` found in a loop body."""

    target: str
    term: ast.expr
    subtract: bool
    stmt: ast.stmt


def loop_statements(loop: ast.For | ast.While) -> Iterator[ast.AST]:
    """Every node in the loop body (and else), nested scopes excluded."""
    stack: list[ast.AST] = [*loop.body, *loop.orelse]
    while stack:
        node = stack.pop()
        yield node
        stack.extend(c for c in ast.iter_child_nodes(node) if not isinstance(c, _NESTED))


def accumulations(loop: ast.For | ast.While) -> list[Accumulation]:
    """Additive updates of a single name inside the loop."""
    found = []
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and isinstance(node.op, (ast.Add, ast.Sub)):
            found.append(Accumulation(node.target.id, node.value, isinstance(node.op, ast.Sub), node))
        elif isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            name = node.targets[0].id
            v = node.value
            if isinstance(v, ast.BinOp) and isinstance(v.op, (ast.Add, ast.Sub)):
                if isinstance(v.left, ast.Name) and v.left.id == name:
                    found.append(Accumulation(name, v.right, isinstance(v.op, ast.Sub), node))
                elif isinstance(v.right, ast.Name) and v.right.id == name and isinstance(v.op, ast.Add):
                    found.append(Accumulation(name, v.left, False, node))
    return sorted(found, key=lambda a: (a.stmt.lineno, a.stmt.col_offset))


def updates(loop: ast.For | ast.While, name: str) -> list[ast.stmt]:
    """Statements in the loop that rebind `name`."""
    out: list[ast.stmt] = []
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and node.target.id == name:
            out.append(node)
        elif isinstance(node, ast.Assign) and any(isinstance(t, ast.Name) and t.id == name for t in node.targets):
            out.append(node)
    return out


def is_sign_power(ctx: Context, node: ast.AST) -> bool:
    """`(-1)**k`, `(-x)**k`, `pow(-1, k)`, `np.power(-1, k)` with a variable exponent."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
        base, exp = node.left, node.right
    elif isinstance(node, ast.Call) and (ctx.family(node) == "pow" or (isinstance(node.func, ast.Name) and node.func.id == "pow")):
        if len(node.args) < 2:
            return False
        base, exp = node.args[0], node.args[1]
    else:
        return False
    if not p.has_free_names(exp):
        return False
    if p.is_number(base, -1):
        return True
    return p.is_negated(base) and p.has_free_names(base)


def contains_sign_power(ctx: Context, expr: ast.AST) -> bool:
    return any(is_sign_power(ctx, n) for n in ast.walk(expr))


def is_negative_factor(expr: ast.AST) -> bool:
    """True when a product/quotient carries an odd number of explicit unary minuses on variables
    or negative literals, e.g. `-x / k`, `-t * x * x / (...)`, `x * (-1) / k`."""
    count = 0
    for node in ast.walk(expr):
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
            count += 1
        elif isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) and node.value < 0:
            count += 1
    if not isinstance(expr, (ast.BinOp, ast.UnaryOp)):
        return False
    if isinstance(expr, ast.BinOp) and not isinstance(expr.op, (ast.Mult, ast.Div)):
        return False
    return count % 2 == 1


def toggles_sign(loop: ast.For | ast.While, name: str) -> bool:
    """`sign = -sign`, `sign *= -1` in the loop."""
    for stmt in updates(loop, name):
        if isinstance(stmt, ast.AugAssign) and isinstance(stmt.op, ast.Mult) and p.is_number(stmt.value, -1):
            return True
        if isinstance(stmt, ast.Assign):
            v = stmt.value
            if p.is_negated(v) and isinstance(v, ast.UnaryOp) and isinstance(v.operand, ast.Name) and v.operand.id == name:
                return True
            if isinstance(v, ast.BinOp) and isinstance(v.op, ast.Mult) and (
                p.is_number(v.left, -1) or p.is_number(v.right, -1)
            ):
                return True
    return False


def recurrence_ratio(loop: ast.For | ast.While, name: str) -> ast.expr | None:
    """The multiplier of a term recurrence `t *= r`, `t /= r`, `t = t * r`, `t = -t * r / k`."""
    for stmt in updates(loop, name):
        if isinstance(stmt, ast.AugAssign) and isinstance(stmt.op, (ast.Mult, ast.Div)):
            return stmt.value
        if isinstance(stmt, ast.Assign):
            v = stmt.value
            if isinstance(v, (ast.BinOp, ast.UnaryOp)) and any(
                isinstance(n, ast.Name) and n.id == name for n in ast.walk(v)
            ) and _is_product(v):
                return v
    return None


def _is_product(expr: ast.AST) -> bool:
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return _is_product(expr.operand)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div)):
        return True
    return False


def term_alternates(ctx: Context, loop: ast.For | ast.While, term: ast.expr) -> str | None:
    """Why the accumulated term alternates in sign across passes, or None."""
    if contains_sign_power(ctx, term):
        return "an explicit sign factor"
    for name in sorted(p.names_in(term)):
        if toggles_sign(loop, name):
            return f"the sign flip of `{name}` each pass"
        ratio = recurrence_ratio(loop, name)
        if ratio is not None and is_negative_factor(ratio):
            return f"the negative ratio of the term recurrence for `{name}`"
        value = _assigned_in_loop(loop, name)
        if value is not None and contains_sign_power(ctx, value):
            return f"the sign factor in `{name}`"
    return None


def _assigned_in_loop(loop: ast.For | ast.While, name: str) -> ast.expr | None:
    stmts = updates(loop, name)
    if len(stmts) == 1 and isinstance(stmts[0], ast.Assign):
        return stmts[0].value
    return None
