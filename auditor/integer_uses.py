"""Values the code only ever converts to whole numbers (`int(r)`, `math.ceil(r)`), where only absolute error counts."""
from __future__ import annotations

import ast

from auditor.rule import Context

#: builtins that turn a float into a whole number
_BUILTINS = frozenset({"int", "round"})
#: math / numpy families that round to a whole number (math.floor, numpy.ceil, numpy.rint ...)
_ROUNDERS = frozenset({"floor", "ceil", "trunc", "rint", "round", "around", "fix"})
#: dtype spellings `astype` turns into integers
_INT_TYPES = frozenset({"int", "int8", "int16", "int32", "int64", "intp", "uint", "uint32", "uint64"})


def _builtin(ctx: Context, func: ast.expr) -> str | None:
    """`int` / `round` when the name is the builtin: not imported, not bound anywhere in the file's scopes."""
    if not isinstance(func, ast.Name) or func.id not in _BUILTINS or ctx.qualname(func) is not None:
        return None
    if ctx.flow(ctx.tree).of(func.id) or ctx.flow(ctx.scope(func)).of(func.id):
        return None
    return func.id


def _int_type(node: ast.expr) -> bool:
    name = node.attr if isinstance(node, ast.Attribute) else node.id if isinstance(node, ast.Name) \
        else node.value if isinstance(node, ast.Constant) else None
    return name in _INT_TYPES


def _converted_here(ctx: Context, node: ast.AST) -> bool:
    """True when `node` is the lone argument of int(), round(), floor, ceil, or the array of `.astype(int)`."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Call) and len(parent.args) == 1 and parent.args[0] is node and not parent.keywords:
        return _builtin(ctx, parent.func) is not None or ctx.family(parent) in _ROUNDERS
    if isinstance(parent, ast.Attribute) and parent.attr == "astype" and parent.value is node:
        call = ctx.parent(parent)
        return isinstance(call, ast.Call) and len(call.args) == 1 and _int_type(call.args[0])
    return False


def _rebound_around(ctx: Context, use: ast.Name, stores: list[ast.AST]) -> bool:
    """True when a loop around `use` also binds the name: the value the read sees may come from a later pass."""
    return any(any(n is stmt for n in ast.walk(loop) for stmt in stores) for loop in ctx.enclosing_loops(use))


def rounded_to_integer(ctx: Context, node: ast.AST, depth: int = 2) -> bool:
    """True when every use of the value of `node` converts it to a whole number: directly (`int(r)`), or
    through a plain local every read of which (that sees this assignment) is so converted."""
    if _converted_here(ctx, node):
        return True
    stmt = ctx.parent(node)
    if depth <= 0 or not (isinstance(stmt, ast.Assign) and stmt.value is node and len(stmt.targets) == 1
                          and isinstance(stmt.targets[0], ast.Name)):
        return False
    name, scope = stmt.targets[0].id, ctx.scope(stmt)
    if isinstance(scope, ast.Module):
        return False  # a module global: other modules may read it
    stores = [b.stmt for b in ctx.flow(scope).of(name)]
    uses = []
    for use in ast.walk(scope):
        if isinstance(use, ast.Name) and use.id == name and isinstance(use.ctx, ast.Load):
            if ctx.scope(use) is not scope or _rebound_around(ctx, use, stores):
                return False  # read by a nested function, or rebound in a loop: which value it sees is unclear
            binding = ctx.binding(use)
            if binding is not None and binding.stmt is stmt:
                uses.append(use)
    return bool(uses) and all(rounded_to_integer(ctx, use, depth - 1) for use in uses)
