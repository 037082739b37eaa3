"""Uses that pass on only the absolute error of a value, reached through a square root or a local.

`use_sites` covers the direct cases (a term of a sum over samples, the argument of exp or cos).
Two indirect ones follow the same reasoning:

* `i0(beta*sqrt(u))`: an even function g that is analytic at 0 is a power series in its argument
  squared, so g(c*sqrt(u)) is analytic in u itself (I0(c*sqrt(u)) = sum (c*c*u/4)**k / k!**2,
  DLMF 10.25.2, from memory). Near u = 0 a relative error in u moves it by about c*c/4 times
  the absolute error of u; the root's infinite slope at 0 is cancelled by the evenness.
* `c = (1 - t*t) / (1 + t*t)` used only as `c*u + s*v` or `(c - 1)*u`: the quotient is a factor
  of a summand, exactly as in `a + b*(1 - x*x)`, only named first.
* a module-private helper's return value that every caller in the file only sums or averages is
  a term of those sums, as if the helper's body were written at the call.
"""
from __future__ import annotations

import ast

from auditor.local_returns import private_calls
from auditor.rule import Context
from auditor.use_sites import only_summed

#: even functions that are analytic and nonzero at 0 (cos(0) = cosh(0) = I0(0) = J0(0) = 1;
#: DLMF 4.14, 4.28, 10.25.2, 10.2.2, from memory): g(c*sqrt(u)) is a power series in u
_EVEN_FLAT = frozenset({"cos", "cosh", "i0", "j0", "cospi"})


def _factor_parent(ctx: Context, node: ast.AST) -> ast.AST | None:
    """The parent when `node` enters it as a factor, a numerator, under a sign or indexed (`c[i]`,
    `c[:, None]` pass its elements on unchanged); else None."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Subscript) and parent.value is node and isinstance(parent.ctx, ast.Load):
        return parent
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Mult):
        return parent
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is node:
        return parent
    if isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
        return parent
    return None


def _climb_factors(ctx: Context, node: ast.AST) -> ast.AST:
    """The outermost expression `node` reaches as a factor, numerator or signed value."""
    while True:
        parent = _factor_parent(ctx, node)
        if parent is None:
            return node
        node = parent


def _is_root(ctx: Context, call: ast.Call) -> bool:
    """`np.sqrt(u)`, `math.sqrt(u)`, and `xp.sqrt(u)` of an array namespace chosen at run time."""
    return ctx.family(call) == "sqrt" or isinstance(call.func, ast.Attribute) and call.func.attr == "sqrt"


def even_root_argument(ctx: Context, node: ast.AST) -> bool:
    """True when `node` is the radicand of a sqrt that enters, only scaled, the single argument of
    an even function flat and nonzero at 0: `special.i0(beta * np.sqrt(1 - x**2))`."""
    root = ctx.parent(node)
    if not (isinstance(root, ast.Call) and _is_root(ctx, root) and len(root.args) == 1
            and root.args[0] is node and not root.keywords):
        return False
    scaled = _climb_factors(ctx, root)
    call = ctx.parent(scaled)
    return isinstance(call, ast.Call) and len(call.args) == 1 and call.args[0] is scaled \
        and not call.keywords and ctx.family(call) in _EVEN_FLAT


def summand_through_locals(ctx: Context, node: ast.AST, depth: int = 3) -> bool:
    """True when `node`, entering only as a factor or numerator, is a summand of a sum, directly or
    through plain locals (bound once in a function) whose every read is such a summand."""
    top = _climb_factors(ctx, node)
    parent = ctx.parent(top)
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub)):
        return True
    if depth <= 0 or not (isinstance(parent, ast.Assign) and parent.value is top and len(parent.targets) == 1
                          and isinstance(parent.targets[0], ast.Name)):
        return False
    name, scope = parent.targets[0].id, ctx.scope(parent)
    if isinstance(scope, ast.Module) or len(ctx.flow(scope).of(name)) != 1:
        return False  # a module global other modules may read, or a name rebound elsewhere
    uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load)]
    return bool(uses) and all(ctx.scope(u) is scope and summand_through_locals(ctx, u, depth - 1) for u in uses)


def returned_only_summed(ctx: Context, node: ast.AST) -> bool:
    """True when `node`, entering only as a factor or numerator, is what a module-private function
    returns (whole, or one element of a returned tuple), and every caller in the file calls it by
    name and only sums or averages that value: `_kernel(u).mean()`, `g, dg = _pair(x); dg.sum()`."""
    top = _climb_factors(ctx, node)
    parent, index = ctx.parent(top), None
    if isinstance(parent, ast.Tuple):
        index = next(i for i, e in enumerate(parent.elts) if e is top)
        parent = ctx.parent(parent)
    func = ctx.scope(parent) if isinstance(parent, ast.Return) else None
    if not isinstance(func, ast.FunctionDef):
        return False
    calls = private_calls(ctx, func)  # [] when rebound, passed as a value, or never called: callers we cannot see
    return bool(calls) and all(_call_summed(ctx, c, index) for c in calls)


def _call_summed(ctx: Context, call: ast.AST, index: int | None) -> bool:
    """The call's value (or its `index`-th unpacked element) is only ever summed or averaged."""
    if index is None:
        return only_summed(ctx, call)
    stmt = ctx.parent(call)
    if not (isinstance(stmt, ast.Assign) and stmt.value is call and len(stmt.targets) == 1
            and isinstance(stmt.targets[0], ast.Tuple) and index < len(stmt.targets[0].elts)):
        return False
    target = stmt.targets[0].elts[index]
    scope = ctx.scope(stmt)
    if not isinstance(target, ast.Name) or isinstance(scope, ast.Module) or len(ctx.flow(scope).of(target.id)) != 1:
        return False
    uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == target.id and isinstance(n.ctx, ast.Load)]
    return bool(uses) and all(ctx.scope(u) is scope and only_summed(ctx, u) for u in uses)
