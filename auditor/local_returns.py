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


def private_calls(ctx: Context, func: ast.FunctionDef) -> list[ast.Call]:
    """Every call of a private module-level function, or [] when the function is used any other way
    (passed as a value, rebound, decorated, named in a string such as `__all__` or `getattr`).
    By the naming convention a private helper's callers live in its own module. Once per file."""
    return ctx.cached("local_returns:private_calls", func, lambda: _private_calls(ctx, func))


def _private_calls(ctx: Context, func: ast.FunctionDef) -> list[ast.Call]:
    if not func.name.startswith("_") or func.name.startswith("__") or func.decorator_list \
            or ctx.parent(func) is not ctx.tree:
        return []
    defs = [n for n in ctx.tree.body if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef))
            and n.name == func.name]
    calls: list[ast.Call] = []
    for n in ast.walk(ctx.tree):
        if isinstance(n, ast.Constant) and n.value == func.name or isinstance(n, ast.Global) and func.name in n.names:
            return []
        if isinstance(n, ast.Name) and n.id == func.name:
            call = ctx.parent(n)
            if not (isinstance(n.ctx, ast.Load) and isinstance(call, ast.Call) and call.func is n):
                return []
            if any(isinstance(a, ast.Starred) for a in call.args) or any(k.arg is None for k in call.keywords):
                return []
            calls.append(call)
        if isinstance(n, (ast.Import, ast.ImportFrom)) and any((a.asname or a.name) == func.name for a in n.names):
            return []
    return calls if len(defs) == 1 else []
