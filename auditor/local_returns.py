"""What a function defined once in the same file returns, read from its `return` statements (never run)."""
from __future__ import annotations

import ast

from auditor.rule import Context

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)


def local_function(ctx: Context, call: ast.Call) -> ast.FunctionDef | None:
    """The module-level `def` a plain-name call reaches, when the file binds that name only there and
    no decorator can replace the function; else None."""
    if not isinstance(call.func, ast.Name) or ctx.qualname(call.func) is not None:
        return None
    if ctx.flow(ctx.scope(call)).of(call.func.id) and ctx.scope(call) is not ctx.tree:
        return None  # a local of the calling function shadows the module-level name
    bindings = ctx.flow(ctx.tree).of(call.func.id)
    if len(bindings) != 1 or not isinstance(bindings[0].stmt, ast.FunctionDef):
        return None
    func = bindings[0].stmt
    return None if func.decorator_list else func


def returned_items(ctx: Context, call: ast.Call, position: int | None = None,
                   length: int | None = None) -> list[ast.expr] | None:
    """The expressions the called local function returns (item `position` of a returned tuple of
    `length` items, when given); None when unknown: a bare return, a generator, another shape."""
    func = local_function(ctx, call)
    if func is None:
        return None
    found: list[ast.expr] = []
    stack: list[ast.AST] = list(func.body)
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.Yield, ast.YieldFrom)):
            return None
        if isinstance(node, ast.Return):
            item = _item(node.value, position, length)
            if item is None:
                return None
            found.append(item)
        if not isinstance(node, _NESTED):
            stack.extend(ast.iter_child_nodes(node))
    return found or None


def _item(value: ast.expr | None, position: int | None, length: int | None) -> ast.expr | None:
    if value is None or position is None:
        return value
    if isinstance(value, ast.Tuple) and len(value.elts) == length and not any(
            isinstance(e, ast.Starred) for e in value.elts):
        return value.elts[position]
    return None
