"""Where a value's relative error ends up: in the result (a factor, a divisor, a radicand, an
argument), or only as an absolute error in a larger sum.

A cancelling form such as `1 - x*x` or `1 - exp(-t)` loses relative digits of a small result;
that matters when the result is multiplied, divided, rooted or returned, and not when it is one
summand next to larger ones, where only its absolute error (below one unit of the largest term)
reaches the sum.
"""
from __future__ import annotations

import ast

from auditor.rule import Context

#: calls that pass the relative error of their argument on to their result
_RELATIVE = frozenset({"sqrt", "cbrt", "log", "log10", "log2", "abs", "power", "pow", "square", "reciprocal"})


def relative_position(ctx: Context, node: ast.AST) -> bool:
    """True when the value's relative error reaches the enclosing expression's result: it is used
    only through products, quotients, powers, negation and root/log calls up to the statement, not
    as a summand of a larger sum (`b*(1 - x*x) + a` loses only an absolute error below eps)."""
    while True:
        parent = ctx.parent(node)
        if isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Mult, ast.Div, ast.MatMult)):
            node = parent
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Pow) and parent.left is node:
            node = parent
        elif isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
            node = parent
        elif isinstance(parent, ast.Call) and ctx.family(parent) in _RELATIVE and parent.args and parent.args[0] is node:
            node = parent
        elif isinstance(parent, ast.BinOp):
            return False  # a summand (or an operand of a comparison-like op): only the absolute error counts
        else:
            return True  # reached the statement, an argument, a subscript: the value is used as it is


#: names that hold a starting point of an iterative method (solver, optimiser, fit)
_SEED_NAMES = frozenset({
    "start", "start_params", "start_value", "start_values", "startparams", "x0", "p0", "beta0", "theta0",
    "params0", "init", "initial", "initial_guess", "guess", "init_params",
})


def seeds_iteration(ctx: Context, node: ast.AST) -> bool:
    """True when the value only serves as the starting point of an iterative method: it is assigned to
    `start`/`x0`/... or passed as such a keyword. The low digits of a starting point do not reach
    the converged answer, so digits lost there cost nothing."""
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.keyword):
            return anc.arg in _SEED_NAMES
        if isinstance(anc, (ast.Assign, ast.AnnAssign)):
            targets = anc.targets if isinstance(anc, ast.Assign) else [anc.target]
            return bool(targets) and all(isinstance(t, ast.Name) and t.id in _SEED_NAMES for t in targets)
        if isinstance(anc, (ast.stmt, ast.Lambda)):
            return False
    return False
