"""Matrices the code itself shows to be square: Gram products, identities, inverses, covariances."""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.local_returns import local_function
from auditor.rule import Context

#: numpy-API calls whose value is always a square matrix (common practice: cov and corrcoef are n x n)
_SQUARE_FAMILIES = frozenset({"inv", "cov", "corrcoef", "identity"})
_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)


def _gram(ctx: Context, expr: ast.expr) -> bool:
    """True for `A.T @ A` or `A @ A.T` in any product spelling."""
    factors = p.product_factors(ctx, expr)
    if factors is None or len(factors) != 2:
        return False
    first, second = (ctx.origin(f) for f in factors)
    for a, b in ((first, second), (second, first)):
        base = p.transposed(ctx, a)
        if base is not None and (p.same_expr(base, b) or p.same_expr(ctx.origin(base), b)):
            return True
    return False


def _square_call(ctx: Context, call: ast.Call) -> bool:
    family = ctx.family(call)
    if family == "eye":  # eye(n) and eye(n, k=1) are n x n; eye(n, m) is not
        return len(call.args) == 1 and not any(kw.arg in ("M", "m") for kw in call.keywords)
    return family in _SQUARE_FAMILIES


def _returns(func: ast.AST) -> list[ast.expr] | None:
    """The values a function's own `return` statements give; None for a bare return or a generator."""
    found: list[ast.expr] = []
    stack: list[ast.AST] = list(getattr(func, "body", []))
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.Yield, ast.YieldFrom)) or isinstance(node, ast.Return) and node.value is None:
            return None
        if isinstance(node, ast.Return) and node.value is not None:
            found.append(node.value)
        if not isinstance(node, _NESTED):
            stack.extend(ast.iter_child_nodes(node))
    return found or None


def _own_method(ctx: Context, call: ast.Call) -> ast.FunctionDef | None:
    """The method `self.name()` calls, when the calling method's class defines it and no other `def` in the
    file has that name (a subclass overriding it could return anything)."""
    func = call.func
    if not (isinstance(func, ast.Attribute) and isinstance(func.value, ast.Name)):
        return None
    scope = ctx.scope(call)
    params = [*scope.args.posonlyargs, *scope.args.args] if isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef)) else []
    cls = ctx.parent(scope)
    if not params or params[0].arg != func.value.id or not isinstance(cls, ast.ClassDef):
        return None
    defs = [n for n in ast.walk(ctx.tree) if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef)) and n.name == func.attr]
    if len(defs) != 1 or ctx.parent(defs[0]) is not cls or defs[0].decorator_list:
        return None
    return defs[0] if isinstance(defs[0], ast.FunctionDef) else None


def square_matrix(ctx: Context, expr: ast.expr, depth: int = 4) -> bool:
    """True when `expr` (or the local it names) is square as the code spells it: a Gram product `A.T @ A`,
    `eye(n)`, `inv(X)`, `cov(x)`, a transpose of one, or what a same-file function or own method always
    returns as such."""
    if depth <= 0:
        return False
    origin = ctx.origin(expr)
    base = p.transposed(ctx, origin)
    if base is not None:
        return square_matrix(ctx, base, depth - 1)
    if _gram(ctx, origin):
        return True
    if not isinstance(origin, ast.Call):
        return False
    if _square_call(ctx, origin):
        return True
    func = local_function(ctx, origin) or _own_method(ctx, origin)
    values = _returns(func) if func is not None else None
    return values is not None and all(square_matrix(ctx, v, depth - 1) for v in values)
