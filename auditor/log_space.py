"""Where a logarithm's absolute error is all that reaches the result.

log(1 + x) formed directly has an absolute error of about eps (the rounding of 1 + x); log1p(x)
has a relative one. Two uses never see the difference:

- a product computed in log space, `exp(cumsum(log(1 - h)))`: an absolute error of eps in the
  exponent is a relative error of eps in the product, the same as rounding each factor 1 - h;
- a term of a sum beside a constant that is at least as large, as in a log-likelihood
  `-n*log(2*pi)/2 - n*(log(det) + sum(log(1 - lam)))/2`: eps absolute is below one unit of the sum.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.counts import whole_or_count
from auditor.rule import Context
from auditor.values import known_values

#: reductions that add their argument's entries (only absolute errors add up)
_SUMS = frozenset({"sum", "cumsum", "nansum", "nancumsum"})
#: `n` + a plural noun names a number of items in array and statistics code (`neqs`, `nvars`, `nlags`)
_N_PLURALS = frozenset({"eqs", "vars", "lags", "rows", "cols", "params", "groups", "steps", "periods", "states",
                        "levels", "terms", "series", "classes", "components"})
#: a constant summand must be at least this large (times the shared factors) to swamp an error of eps
_LARGE = 0.5


def additive_parent(ctx: Context, node: ast.AST) -> ast.AST | None:
    """The expression that passes `node`'s absolute error on unchanged: a slice, a sum reduction
    (`sum(v)`, `np.cumsum(v)`, `v.sum()`), a negation; else None."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Subscript) and parent.value is node:
        return parent
    if isinstance(parent, ast.UnaryOp) and isinstance(parent.op, (ast.USub, ast.UAdd)):
        return parent
    if isinstance(parent, ast.Call) and parent.args and parent.args[0] is node and _is_sum(ctx, parent):
        return parent
    if isinstance(parent, ast.Attribute) and parent.attr in _SUMS:
        call = ctx.parent(parent)
        if isinstance(call, ast.Call) and call.func is parent:
            return call
    return None


def _is_sum(ctx: Context, call: ast.Call) -> bool:
    if isinstance(call.func, ast.Name) and call.func.id == "sum" and "sum" not in ctx.imports.bindings:
        return True  # the builtin
    return ctx.family(call) in _SUMS


def exponentiated_only(ctx: Context, node: ast.AST, depth: int = 4) -> bool:
    """True when every use of `node`'s value goes through sums and slices (and local names) into
    exp(...), whose result is never set against 1 (`1 - exp(...)` would need the log's relative digits)."""
    while True:
        parent = ctx.parent(node)
        up = additive_parent(ctx, node)
        if up is not None:
            node = up
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub)):
            node = parent
        elif isinstance(parent, ast.Call) and ctx.family(parent) == "exp" and p.single_arg(parent) is node:
            return not _set_against_one(ctx, parent)
        elif isinstance(parent, ast.Assign) and depth > 0 and _single_name(parent) is not None:
            uses = _uses(ctx, parent)
            return bool(uses) and all(exponentiated_only(ctx, u, depth - 1) for u in uses)
        else:
            return False


def _single_name(stmt: ast.Assign) -> ast.Name | None:
    target = stmt.targets[0] if len(stmt.targets) == 1 else None
    return target if isinstance(target, ast.Name) else None


def _uses(ctx: Context, stmt: ast.Assign) -> list[ast.Name]:
    """The loads of the assigned name that this assignment reaches (in its own scope)."""
    name = _single_name(stmt)
    assert name is not None
    scope = ctx.scope(stmt)
    loads = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name.id and isinstance(n.ctx, ast.Load)]
    return [n for n in loads if ctx.scope(n) is scope and (b := ctx.binding(n)) is not None and b.stmt is stmt]


def _set_against_one(ctx: Context, call: ast.Call) -> bool:
    """`1 - exp(s)`, `exp(s) - 1`, directly or through the name it is assigned to (any use in the scope)."""
    parent = ctx.parent(call)
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Sub, ast.Add)):
        return p.is_one(parent.left) or p.is_one(parent.right)
    if not isinstance(parent, ast.Assign) or _single_name(parent) is None:
        return False
    for use in _uses(ctx, parent):
        holder = ctx.parent(use)
        if isinstance(holder, ast.BinOp) and isinstance(holder.op, (ast.Sub, ast.Add)) and \
                (p.is_one(holder.left) or p.is_one(holder.right)):
            return True
    return False


def beside_large_constant(ctx: Context, node: ast.AST) -> bool:
    """True when `node`'s value, through sums, slices and scalings by factors F, is added to a term
    that is F times counts and constants of size at least _LARGE: its absolute error of about eps
    (times F) is then below one unit of that term."""
    factors: list[ast.expr] = []
    while True:
        up = additive_parent(ctx, node)
        parent = ctx.parent(node)
        if up is not None:
            node = up
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Mult):
            factors.append(parent.right if parent.left is node else parent.left)
            node = parent
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is node:
            factors.append(ast.BinOp(ast.Constant(1), ast.Div(), parent.right))
            node = parent
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub)):
            other = parent.right if parent.left is node else parent.left
            if _large_multiple(ctx, other, factors):
                return True
            node = parent
        else:
            return False


def _large_multiple(ctx: Context, term: ast.expr, factors: list[ast.expr]) -> bool:
    """`term` is the product of every factor in `factors` and of counts and constants whose size is at
    least _LARGE (a count is at least 1)."""
    rest = _flat_factors(term)
    for f in factors:
        match = next((i for i, r in enumerate(rest) if p.same_expr(r, f)), None)
        if match is None:
            return False
        del rest[match]
    size = 1.0
    for r in rest:
        values = known_values(ctx, r)
        if values is not None and len(values) == 1 and values[0] != 0:
            size *= abs(values[0])
        elif not (p.has_free_names(r) and (whole_or_count(ctx, r) or _n_plural(ctx, r))):
            return False  # an arbitrary quantity: nothing says the term is large
    return bool(rest) and size >= _LARGE


def _n_plural(ctx: Context, expr: ast.expr) -> bool:
    """`neqs`, `self.nvars`: an `n` + plural-noun name, the number of those items."""
    expr = ctx.origin(expr)
    name = expr.id if isinstance(expr, ast.Name) else expr.attr if isinstance(expr, ast.Attribute) else ""
    word = name.lower().strip("_").split("_")[0]
    return word[:1] == "n" and word[1:] in _N_PLURALS


def _flat_factors(term: ast.expr) -> list[ast.expr]:
    """`-K * T * c / 2` -> [K, T, c, 1/2] (a leading minus dropped: only sizes matter)."""
    if isinstance(term, ast.UnaryOp) and isinstance(term.op, (ast.USub, ast.UAdd)):
        return _flat_factors(term.operand)
    if isinstance(term, ast.BinOp) and isinstance(term.op, ast.Mult):
        return _flat_factors(term.left) + _flat_factors(term.right)
    if isinstance(term, ast.BinOp) and isinstance(term.op, ast.Div):
        return _flat_factors(term.left) + [ast.BinOp(ast.Constant(1), ast.Div(), term.right)]
    return [term]


#: reductions that pick one of their argument's entries (its absolute error passes on unchanged)
_PICKS = frozenset({"max", "amax", "nanmax"})
#: methods that draw from [0, 1) when called with no arguments (numpy, Python's random; common practice)
_UNIT_DRAWS = frozenset({"uniform", "random", "rand", "random_sample"})


def log_space_only(ctx: Context, node: ast.AST, x: ast.expr, depth: int = 6) -> bool:
    """Like `exponentiated_only` for `node` = log(1 + x), and also through a scaling by a factor k
    (`exp(k*log(1 - x))` is the power (1 - x)**k, whose rounding of 1 - x costs the same), past masked
    stores (`v[mask] = 0`), and into a log-sum-exp (`logsumexp(v)`, or `m + log(sum(exp(v - m)))` with
    `m = v.max()`), where each v's absolute error is a relative error of its term. A factor that reads
    a name of x (`exp(n*log(1 + r/n))`, the compound-interest limit) passes only when the power is then
    just compared with a uniform draw, where an absolute error is all the decision sees."""
    state = {"tied": False}
    return _log_walk(ctx, node, _names(ctx, x), state, depth) is True and \
        (not state["tied"] or state.get("drawn", False))


def _log_walk(ctx: Context, node: ast.AST, names: frozenset[str], state: dict[str, bool], depth: int) -> bool:
    while True:
        parent = ctx.parent(node)
        up = additive_parent(ctx, node) or _pick_parent(ctx, node)
        if up is not None:
            node = up
        elif isinstance(parent, ast.BinOp) and isinstance(parent.op, (ast.Add, ast.Sub)):
            if _log_of_exp_sum(ctx, parent.right if parent.left is node else parent.left):
                return True  # the shift m of m + log(sum(exp(v - m)))
            node = parent
        elif isinstance(parent, ast.BinOp) and (isinstance(parent.op, ast.Mult) or
                                                isinstance(parent.op, ast.Div) and parent.left is node):
            factor = parent.right if parent.left is node else parent.left
            state["tied"] = state["tied"] or bool(_names(ctx, factor) & names)
            node = parent
        elif isinstance(parent, ast.Call) and ctx.family(parent) == "exp" and p.single_arg(parent) is node:
            state["drawn"] = state.get("drawn", True) and _drawn_against(ctx, parent)
            return not _set_against_one(ctx, parent)
        elif isinstance(parent, ast.Call) and ctx.family(parent) == "logsumexp" and parent.args and parent.args[0] is node:
            return True
        elif isinstance(parent, ast.Assign) and depth > 0 and _single_name(parent) is not None:
            uses = [u for u in _uses(ctx, parent) if not _masked_store(ctx, u)]
            return bool(uses) and all(_log_walk(ctx, u, names, state, depth - 1) for u in uses)
        else:
            return False


def _names(ctx: Context, expr: ast.expr) -> frozenset[str]:
    """Names and attribute names `expr` reads, through one level of local assignments."""
    found: set[str] = set()
    for n in ast.walk(expr):
        if isinstance(n, ast.Name):
            found.add(n.id)
            origin = ctx.origin(n)
            if origin is not n:
                found |= {m.id if isinstance(m, ast.Name) else m.attr for m in ast.walk(origin)
                          if isinstance(m, (ast.Name, ast.Attribute))}
        elif isinstance(n, ast.Attribute):
            found.add(n.attr)
    return frozenset(found - {"np", "numpy", "math", "self"})


def _pick_parent(ctx: Context, node: ast.AST) -> ast.AST | None:
    """`node.max()`, `np.max(node)`: the largest entry carries its own absolute error."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Call) and parent.args and parent.args[0] is node and ctx.family(parent) in _PICKS:
        return parent
    if isinstance(parent, ast.Attribute) and parent.attr in _PICKS:
        call = ctx.parent(parent)
        if isinstance(call, ast.Call) and call.func is parent:
            return call
    return None


def _log_of_exp_sum(ctx: Context, expr: ast.expr) -> bool:
    """`log(s)` with s (through locals) a sum of exp(...): the tail of a log-sum-exp."""
    if not (isinstance(expr, ast.Call) and ctx.family(expr) == "log" and expr.args):
        return False
    total = ctx.origin(expr.args[0])
    if not isinstance(total, ast.Call):
        return False
    if isinstance(total.func, ast.Attribute) and total.func.attr in _SUMS and not total.args:
        data = total.func.value
    elif ctx.family(total) in _SUMS and total.args:
        data = total.args[0]
    else:
        return False
    data = ctx.origin(data)
    return isinstance(data, ast.Call) and ctx.family(data) == "exp"


def _masked_store(ctx: Context, use: ast.Name) -> bool:
    """`v[mask] = c` or `v[i] += c`: overwrites entries, hands the value nowhere."""
    parent = ctx.parent(use)
    return isinstance(parent, ast.Subscript) and parent.value is use and isinstance(parent.ctx, ast.Store)


def _drawn_against(ctx: Context, call: ast.Call) -> bool:
    """The exp result, directly or through the name it is assigned to, is only compared with a uniform
    draw (`r <= pqv`, r = rng.uniform()): the decision errs with probability equal to the absolute error."""
    parent = ctx.parent(call)
    uses: list[ast.AST] = [call]
    name = _single_name(parent) if isinstance(parent, ast.Assign) else None
    if name is not None and isinstance(parent, ast.Assign):  # every later read of the name, whichever branch bound it (stricter than reaching)
        scope, end = ctx.scope(parent), (parent.end_lineno or parent.lineno, parent.end_col_offset or 0)
        uses = [n for n in ast.walk(scope) if isinstance(n, ast.Name) and n.id == name.id
                and isinstance(n.ctx, ast.Load) and ctx.scope(n) is scope
                and ((n.lineno, n.col_offset) > end or bool(ctx.enclosing_loops(parent)))]
    return bool(uses) and all(_compared_with_draw(ctx, u) for u in uses)


def _compared_with_draw(ctx: Context, use: ast.AST) -> bool:
    compare = ctx.parent(use)
    if not (isinstance(compare, ast.Compare) and len(compare.ops) == 1):
        return False
    other = compare.comparators[0] if compare.left is use else compare.left
    draw = ctx.origin(other)
    return isinstance(draw, ast.Call) and not draw.args and not draw.keywords and \
        isinstance(draw.func, ast.Attribute) and draw.func.attr in _UNIT_DRAWS
