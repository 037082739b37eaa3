"""Functions handed to a root finder or minimiser by name, and the values they return.

`def residual(x): g[0] = exp(x[0]) - 1; ...; return g` passed as `root(residual, x0)` is judged by
its size only: the solver stops on an absolute test of |F| (or of the change in x), and the root is
found to the absolute error of F over |F'|. A cancelling form that loses relative digits where it
is near 0 keeps an absolute error of a few units of 1, so the answer does not change. The lambda
form is `auditor.use_sites.solver_objective`; this module follows named functions.
"""
from __future__ import annotations

import ast

from auditor.rule import Context
from auditor.use_sites import SOLVERS, is_solver

#: the root finders and minimisers of use_sites, and `minimize` (a named objective, not a lambda)
_SOLVERS = SOLVERS | {"minimize"}


def solver_residual(ctx: Context, node: ast.AST) -> bool:
    """True when `node` enters, linearly, the value returned by a function whose every use by name in
    its defining scope is as the objective (first argument, or `fun=`/`func=`/`f=`) of a scipy.optimize
    solver, and which is used so at least once."""
    func = _returned_by(ctx, node)
    if func is None:
        return False
    home = ctx.scope(func)
    uses = [n for n in ast.walk(home) if isinstance(n, ast.Name) and n.id == func.name and isinstance(n.ctx, ast.Load)]
    return bool(uses) and all(_objective_of_solver(ctx, u) for u in uses)


def _returned_by(ctx: Context, node: ast.AST) -> ast.FunctionDef | None:
    """The function whose return value `node` enters through sums, products, numerators, signs,
    list items, or a store into a name (or an element of it) that the function returns."""
    parent = ctx.parent(node)
    while parent is not None:
        linear = isinstance(parent, ast.BinOp) and (isinstance(parent.op, (ast.Add, ast.Sub, ast.Mult))
                                                    or isinstance(parent.op, ast.Div) and parent.left is node)
        if linear or isinstance(parent, (ast.List, ast.Tuple)) or \
                isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
            node, parent = parent, ctx.parent(parent)
            continue
        break
    func = ctx.scope(node)
    if not isinstance(func, ast.FunctionDef):
        return None
    if isinstance(parent, ast.Return):
        return func
    if isinstance(parent, ast.Assign) and len(parent.targets) == 1:
        target = parent.targets[0]
        base = target.value if isinstance(target, ast.Subscript) else target
        returned = {r.value.id for r in ast.walk(func) if isinstance(r, ast.Return) and isinstance(r.value, ast.Name)}
        if isinstance(base, ast.Name) and base.id in returned and all(
                isinstance(r.value, ast.Name) and r.value.id == base.id
                for r in ast.walk(func) if isinstance(r, ast.Return)):
            return func
    return None


def _objective_of_solver(ctx: Context, use: ast.Name) -> bool:
    parent = ctx.parent(use)
    call = ctx.parent(parent) if isinstance(parent, ast.keyword) and parent.arg in ("fun", "func", "f") else parent
    if not isinstance(call, ast.Call):
        return False
    if parent is call and not (call.args and call.args[0] is use):
        return False
    return is_solver(ctx, call, _SOLVERS)
