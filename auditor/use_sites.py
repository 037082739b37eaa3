"""Uses of a value that pass on only its absolute error: sums over samples, solver objectives,
and arguments of functions that are flat and nonzero at 0.

A cancelling form such as `1 - x*x` has a large relative error where it is small. That error
only matters where the result sees it relative to the form's own size. Three uses do not:
a sum or mean over samples (the samples away from the cancellation set the sum), the value of
a root finder's objective (the root is found to the absolute error of f over |f'|, and the
cancelling form is backward stable in x), and the argument of a function such as exp, cos or
the complete elliptic integral K at a point where it is flat and nonzero (K(m) = pi/2*(1 + m/4
+ ...), so a relative error in a small m barely moves K).
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.rule import Context

#: sums over the elements of their argument (method forms `.sum()`/`.mean()` included)
_SUMS = frozenset({"sum", "mean", "nansum", "nanmean", "fsum"})

#: functions f with f(0) finite and nonzero and f analytic at 0, so m*f'(m)/f(m) -> 0 as m -> 0
#: (exp(0) = cos(0) = cosh(0) = 1; K(0) = E(0) = pi/2, DLMF 19.6.1, from memory; I0(0) = J0(0) = 1,
#: DLMF 10.25.2 and 10.2.2, from memory)
_FLAT_AT_ZERO = frozenset({"exp", "exp2", "cos", "cosh", "ellipk", "ellipe", "i0", "j0", "cospi"})

#: scipy.optimize functions whose first argument is an objective or residual function
SOLVERS = frozenset({
    "brentq", "brenth", "ridder", "bisect", "toms748", "newton", "root_scalar", "fsolve", "root",
    "least_squares", "minimize_scalar", "fminbound", "golden", "brent",
})


def _linear_parent(ctx: Context, node: ast.AST) -> ast.AST | None:
    """The parent when `node` enters it linearly (a term, a factor, a numerator, a sign); else None."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub, ast.Mult)):
        return parent
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is node:
        return parent
    if isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
        return parent
    return None


def _summed_here(ctx: Context, node: ast.AST) -> bool:
    """True when `node` is the data of a sum or mean: `np.sum(node)`, `node.mean(axis=0)`."""
    parent = ctx.parent(node)
    call = parent if isinstance(parent, ast.Call) else ctx.parent(parent) if isinstance(parent, ast.Attribute) else None
    if not isinstance(call, ast.Call):
        return False
    found = p.reduction(ctx, call)
    return found is not None and found[1] is node and (found[0] in _SUMS or ctx.family(call) in _SUMS)


def only_summed(ctx: Context, node: ast.AST, depth: int = 3) -> bool:
    """True when every way the value of `node` reaches a result is as a term of a sum or mean over
    elements, entered linearly (as a factor or numerator of the term, never a divisor or power),
    directly or through local names whose every use is such a term."""
    while True:
        if _summed_here(ctx, node):
            return True
        parent = _linear_parent(ctx, node)
        if parent is None:
            break
        node = parent
    return depth > 0 and _every_use_summed(ctx, node, depth)


def _every_use_summed(ctx: Context, value: ast.AST, depth: int) -> bool:
    """`g = <value>` assigned once to a plain local whose every later read is only summed."""
    stmt = ctx.parent(value)
    if not (isinstance(stmt, ast.Assign) and stmt.value is value and len(stmt.targets) == 1
            and isinstance(stmt.targets[0], ast.Name)):
        return False
    name, scope = stmt.targets[0].id, ctx.scope(stmt)
    if len(ctx.flow(scope).of(name)) != 1 or isinstance(scope, ast.Module):
        return False  # rebound, or a module global that other modules may read
    uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load)]
    return bool(uses) and all(ctx.scope(u) is scope and only_summed(ctx, u, depth - 1) for u in uses)


def solver_objective(ctx: Context, node: ast.AST) -> bool:
    """True when `node` lies in the body of a lambda that is the objective (first argument) of a
    scipy.optimize root finder or minimiser: only the sign and absolute size of its value count."""
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.stmt):
            return False
        if isinstance(anc, ast.Lambda):
            call = ctx.parent(anc)
            if not (isinstance(call, ast.Call) and call.args and call.args[0] is anc):
                return False
            return is_solver(ctx, call, SOLVERS)
    return False


def flat_call_argument(ctx: Context, node: ast.AST) -> bool:
    """True when `node` is the argument (alone, or an element of a literal list or tuple argument)
    of a function that is flat and nonzero at 0 (exp, cos, cosh, ellipk, ...): near 0, where the
    value cancels, its relative error changes the function's value by a negligible relative amount."""
    parent = ctx.parent(node)
    if isinstance(parent, (ast.List, ast.Tuple)):
        node, parent = parent, ctx.parent(parent)
    return isinstance(parent, ast.Call) and len(parent.args) == 1 and parent.args[0] is node \
        and not parent.keywords and ctx.family(parent) in _FLAT_AT_ZERO


def is_solver(ctx: Context, call: ast.Call, names: frozenset[str]) -> bool:
    """True when `call` calls one of the scipy.optimize functions `names`, by any import spelling."""
    module, _, name = (ctx.qualname(call.func) or "").rpartition(".")
    return (module == "scipy.optimize" or module.startswith("scipy.optimize.")) and name in names
