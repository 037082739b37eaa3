"""Array-API namespaces held in variables (`xp = array_namespace(x)`), whose functions the import table cannot see.

Code written for the array API standard calls `xp.mean`, `xp.sin` on a namespace chosen at run
time. Whatever array library it is, a standard-conforming namespace gives those names the
standard's meaning, so `xp.sin` is a sine. A variable counts as a namespace only when every binding
of it in its scope is one: a call to a namespace getter, a parameter with the standard's
conventional name, or a choice between such values.
"""
from __future__ import annotations

import ast

from auditor.flow import Binding
from auditor.rule import Context

#: functions returning a namespace: array-api-compat's and scipy's `array_namespace`, scikit-learn's
#: `get_namespace` (from memory)
_GETTERS = frozenset({"array_namespace", "get_namespace"})
#: getters returning a tuple whose first item is the namespace (scikit-learn, from memory)
_TUPLE_GETTERS = frozenset({"get_namespace", "get_namespace_and_device"})
#: the array API standard's name for a namespace parameter (common practice in its documentation)
_CONVENTIONAL_PARAMETER = "xp"


def namespace_function(ctx: Context, call: ast.Call) -> str | None:
    """'mean' for `xp.mean(a)` when `xp` holds an array-API namespace; else None."""
    func = call.func
    if isinstance(func, ast.Attribute) and isinstance(func.value, ast.Name) and is_namespace(ctx, func.value):
        return func.attr
    return None


def is_namespace(ctx: Context, name: ast.Name, depth: int = 3) -> bool:
    """True when every binding of `name` in its scope is an array-API namespace."""
    if depth <= 0 or ctx.qualname(name) is not None:
        return False
    bindings = ctx.flow(ctx.scope(name)).of(name.id)
    return bool(bindings) and all(_binds_namespace(ctx, b, depth - 1) for b in bindings)


def _binds_namespace(ctx: Context, binding: Binding, depth: int) -> bool:
    stmt = binding.stmt
    if isinstance(stmt, ast.arg):
        return stmt.arg == _CONVENTIONAL_PARAMETER
    if binding.kind == "assign" and binding.value is not None:
        return _namespace_value(ctx, binding.value, depth)
    if binding.kind == "unpack" and isinstance(stmt, ast.Assign) and len(stmt.targets) == 1:
        target = stmt.targets[0]
        first = target.elts[0] if isinstance(target, (ast.Tuple, ast.List)) and target.elts else None
        return isinstance(first, ast.Name) and first.id == binding.name and _getter(stmt.value) in _TUPLE_GETTERS
    return False


def _namespace_value(ctx: Context, value: ast.expr, depth: int) -> bool:
    if isinstance(value, ast.IfExp):  # `array_namespace(x) if xp is None else xp`
        return _namespace_value(ctx, value.body, depth) and _namespace_value(ctx, value.orelse, depth)
    if isinstance(value, ast.Name):
        binding = ctx.binding(value)
        return binding is not None and _binds_namespace(ctx, binding, depth - 1) if depth > 0 else False
    return _getter(value) in _GETTERS


def _getter(value: ast.expr) -> str | None:
    if not isinstance(value, ast.Call):
        return None
    func = value.func
    return func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else None
