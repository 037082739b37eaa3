"""Which array a value holds when it is only a copy or a dtype/layout conversion of another one."""
from __future__ import annotations

import ast

from auditor.flow import Binding
from auditor.nodes import walk
from auditor.rule import Context

#: methods that return the same numbers in a new buffer, dtype or memory order (numpy ndarray API)
_COPY_METHODS = frozenset({"copy", "astype"})
#: numeric-library functions that return their first argument's numbers as an array (numpy API)
_COPY_FAMILIES = frozenset({"array", "asarray", "asanyarray", "ascontiguousarray", "asfortranarray", "copy"})


def copied_from(ctx: Context, expr: ast.expr) -> ast.expr | None:
    """x for `x.copy()`, `x.astype(float)`, `np.array(x)`, `np.asarray(x)`, `np.copy(x)` ...; else None."""
    if not isinstance(expr, ast.Call):
        return None
    func = expr.func
    if isinstance(func, ast.Attribute) and func.attr in _COPY_METHODS and ctx.qualname(func) is None:
        return func.value
    if ctx.family(expr) in _COPY_FAMILIES and expr.args and not isinstance(expr.args[0], ast.Starred):
        return expr.args[0]
    return None


def data_source(ctx: Context, expr: ast.expr, depth: int = 6) -> ast.expr:
    """The expression whose numbers `expr` holds, seen through copies, conversions and the locals holding them.

    `a = a0.astype(float).copy(order='F')`: the source of `a` is `a0`. A local that is not such a
    copy (or alias), or that is changed in place (`a[0, 0] = 1`) after it, is left as written, so
    two different arrays never meet at a shared ancestor.
    """
    for _ in range(depth):
        source = copied_from(ctx, expr)
        if source is None and isinstance(expr, ast.Name) and not _changed_in_place(ctx, expr):
            value = ctx.value_of(expr)  # one local at a time, so each is checked for in-place changes
            source = value if isinstance(value, ast.Name) else copied_from(ctx, value) if value is not None else None
        if source is None:
            break
        expr = source
    return expr


def _changed_in_place(ctx: Context, name: ast.Name) -> bool:
    binding = ctx.binding(name)
    return binding is not None and stored_into(ctx, name, binding)


def stored_into(ctx: Context, name: ast.Name, binding: Binding) -> bool:
    """True when `name[...] = ...` or `name[...] *= ...` may change the array between its binding and this use."""
    start = (binding.line, binding.column)
    use = (name.lineno, name.col_offset)
    looped = bool(ctx.enclosing_loops(name))
    for node in walk(ctx.scope(name)):
        if isinstance(node, ast.Assign):
            targets = node.targets
        elif isinstance(node, (ast.AugAssign, ast.AnnAssign)):
            targets = [node.target]
        else:
            continue
        for target in targets:
            base = target
            while isinstance(base, ast.Subscript):
                base = base.value
            if base is target or not (isinstance(base, ast.Name) and base.id == name.id):
                continue
            where = (target.lineno, target.col_offset)
            if where > start and (where < use or looped):
                return True
    return False
