"""Parameters a class's own argument check requires to be whole numbers.

A distribution written on scipy.stats' framework declares which shape parameters are valid in
`_argcheck(self, ...)`, and the framework's public methods (pmf, cdf, stats, ...) evaluate the
private formulas only where that check holds. When the check requires `_isintegral(low)`, a
formula such as `d*d - 1` with `d = high - low` works on whole numbers: their squares are exact
below 2**53 and differences of them cancel nothing that was rounded.
"""
from __future__ import annotations

import ast

from auditor.rule import Context

#: the framework's hook that validates shape parameters before any formula sees them
_CHECK_METHOD = "_argcheck"
#: predicates that hold only for whole numbers (scipy.stats' own helper and its unprefixed spelling)
_INTEGRAL_TESTS = frozenset({"_isintegral", "isintegral"})
#: wrappers that keep a value (and its integrality) as it is
_KEEPERS = frozenset({"asarray", "asanyarray", "array", "atleast_1d", "squeeze", "ravel", "int", "float"})


def checked_whole(ctx: Context, expr: ast.expr, depth: int = 8) -> bool:
    """True when `expr` is built by +, -, * and whole literals from parameters of the enclosing
    method that the class's `_argcheck` requires to be whole numbers (`m2 - m1` with
    `m2 = np.asarray(high)` and `_argcheck` returning `... & _isintegral(high)`)."""
    if depth <= 0:
        return False
    if isinstance(expr, ast.Constant):
        return type(expr.value) is int or isinstance(expr.value, float) and expr.value.is_integer()
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult)):
        return checked_whole(ctx, expr.left, depth - 1) and checked_whole(ctx, expr.right, depth - 1)
    if isinstance(expr, ast.Call) and _keeper(ctx, expr):
        return checked_whole(ctx, expr.args[0], depth - 1)
    if not isinstance(expr, ast.Name):
        return False
    origin = ctx.origin(expr, depth=1)
    if origin is not expr:
        return checked_whole(ctx, origin, depth - 1)
    return expr.id in _integral_parameters(ctx, expr)


def _keeper(ctx: Context, call: ast.Call) -> bool:
    name = ctx.family(call) or (call.func.attr if isinstance(call.func, ast.Attribute) else
                                call.func.id if isinstance(call.func, ast.Name) else None)
    return name in _KEEPERS and len(call.args) == 1


def _integral_parameters(ctx: Context, name: ast.Name) -> frozenset[str]:
    """Names of the enclosing method's parameters (still unrebound at `name`) that the class's
    `_argcheck` requires to be whole numbers."""
    method = ctx.scope(name)
    if not isinstance(method, (ast.FunctionDef, ast.AsyncFunctionDef)) or method.name == _CHECK_METHOD:
        return frozenset()
    binding = ctx.binding(name)
    if binding is None or not isinstance(binding.stmt, ast.arg):
        return frozenset()
    cls = ctx.parent(method)
    if not isinstance(cls, ast.ClassDef):
        return frozenset()
    check = next((s for s in cls.body if isinstance(s, ast.FunctionDef) and s.name == _CHECK_METHOD), None)
    if check is None:
        return frozenset()
    returns = [n.value for n in ast.walk(check) if isinstance(n, ast.Return) and n.value is not None]
    if len(returns) != 1:
        return frozenset()
    params = {a.arg for a in check.args.args[1:]}
    return frozenset(params & _required_integral(returns[0]))


def _required_integral(expr: ast.expr) -> set[str]:
    """Names `n` for which the conjunction `expr` contains `_isintegral(n)` as one of its conjuncts."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.BitAnd):
        return _required_integral(expr.left) | _required_integral(expr.right)
    if isinstance(expr, ast.BoolOp) and isinstance(expr.op, ast.And):
        return set().union(*(_required_integral(v) for v in expr.values))
    if isinstance(expr, ast.Call) and len(expr.args) == 1 and isinstance(expr.args[0], ast.Name):
        func = expr.func
        name = func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else None
        if name in _INTEGRAL_TESTS:
            return {expr.args[0].id}
    return set()
