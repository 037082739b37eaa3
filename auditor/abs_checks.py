"""Values judged only by an absolute tolerance (`assert_almost_equal(y, 1 - np.exp(-t))`).

numpy.testing's `assert_almost_equal(actual, desired, decimal=7)` passes when
|desired - actual| < 1.5 * 10**-decimal, and `assert_array_almost_equal` does the same per
element with decimal=6 by default (numpy.testing documentation, from memory); `assert_allclose`
with rtol=0 checks |actual - desired| <= atol. A cancelling form such as 1 - exp(-t) or
log(1 + x) near its zero has an absolute error of a few units of 1 (about 1e-16): far below such
a tolerance, so the digits it loses relative to its own small size cannot change the verdict.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.rule import Context
from auditor.values import known_values

#: absolute-tolerance checks and their default `decimal`
_DECIMAL_CHECKS = {"assert_almost_equal": 7, "assert_array_almost_equal": 6}
#: the smallest absolute tolerance that an error of a few units of 1 (~1e-16) cannot reach
_TIGHTEST = 1e-12


def absolute_check_only(ctx: Context, node: ast.AST) -> bool:
    """True when `node`'s value (itself, negated, or through a local name whose every use is such)
    is only an operand of an absolute-tolerance check whose tolerance is at least _TIGHTEST."""
    parent = ctx.parent(node)
    while isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
        node, parent = parent, ctx.parent(parent)
    if isinstance(parent, ast.Call) and any(a is node for a in parent.args[:2]):
        return _absolute_tolerance(ctx, parent)
    if not (isinstance(parent, ast.Assign) and len(parent.targets) == 1 and isinstance(parent.targets[0], ast.Name)):
        return False
    name, scope = parent.targets[0].id, ctx.scope(parent)
    uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load)
            and ctx.scope(n) is scope and (b := ctx.binding(n)) is not None and b.stmt is parent]
    return bool(uses) and all(_checked(ctx, u) for u in uses)


def _checked(ctx: Context, use: ast.Name) -> bool:
    call = ctx.parent(use)
    return isinstance(call, ast.Call) and any(a is use for a in call.args[:2]) and _absolute_tolerance(ctx, call)


def _absolute_tolerance(ctx: Context, call: ast.Call) -> bool:
    """`call` is an absolute-tolerance check with a tolerance of at least _TIGHTEST."""
    name = call.func.attr if isinstance(call.func, ast.Attribute) else call.func.id if isinstance(call.func, ast.Name) else ""
    keywords = {k.arg: k.value for k in call.keywords if k.arg}
    if name in _DECIMAL_CHECKS:
        decimal = keywords.get("decimal", call.args[2] if len(call.args) > 2 else None)
        if decimal is None:
            return True
        value = p.literal_number(decimal)
        return isinstance(value, (int, float)) and 1.5 * 10.0 ** -value >= _TIGHTEST
    if name == "assert_allclose" and "rtol" in keywords and "atol" in keywords:
        rtol, atol = known_values(ctx, keywords["rtol"]), known_values(ctx, keywords["atol"])
        return rtol is not None and all(v == 0 for v in rtol) and atol is not None and min(atol) >= _TIGHTEST
    return False
