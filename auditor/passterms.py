"""What one pass of a loop adds: a per-group reduction, matrix work, a whole slab of an array."""
from __future__ import annotations

import ast

from auditor.patterns import names_in, product_pair, reduction
from auditor.rule import Context

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
#: calls whose every use costs a matrix product, power, factorisation or solve: a pass that needs one
#: adds a few heavy terms (each already carrying its own rounding error of order size * eps), not many light ones
MATRIX_WORK = frozenset({
    "kron", "matrix_power", "solve", "solve_triangular", "inv", "pinv", "lstsq", "det", "slogdet", "cholesky",
    "cho_factor", "cho_solve", "lu_factor", "lu_solve", "qr", "svd", "eig", "eigh", "eigvals", "eigvalsh", "expm",
})  # not `outer`: a scatter matrix summed from outer products of data rows is a long sum
#: array methods that reduce what they are called on
_SLAB_REDUCERS = frozenset({"sum", "mean", "prod", "std", "var", "max", "min", "dot", "any", "all", "nansum", "trace"})


def scaled_reduction(ctx: Context, term: ast.expr, varying: set[str]) -> bool:
    """`part.sum() / n`, `len(g) * xp.sum(d)`, `sq[k] / n[k]` after `sq = [g.sum() ** 2 for g in groups]`:
    a per-pass partial sum, scaled; the loop runs over groups."""
    while isinstance(term, ast.BinOp) and isinstance(term.op, (ast.Mult, ast.Div)):
        if any(group_sum(ctx, side, varying, 6) for side in (term.left, term.right)):
            return True
        term = term.left
    return group_sum(ctx, term, varying, 6)


def group_sum(ctx: Context, node: ast.expr, varying: set[str], depth: int) -> bool:
    """A reduction over one group, maybe wrapped, squared or scaled; or the element, picked by the
    loop, of a list built by a comprehension of such (`sums[k]` after `sums = [a.sum() for a in parts]`)."""
    if depth <= 0:
        return False
    if reduction(ctx, node) is not None or _namespace_sum(node, varying) or lagged_product(ctx, node, varying):
        return True
    if isinstance(node, ast.Call) and ctx.family(node) in ("asarray", "array", "abs", "sqrt", "square") and node.args:
        return group_sum(ctx, node.args[0], varying, depth - 1)
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):  # `a.sum() ** 2 - ssq`
        return group_sum(ctx, node.left, varying, depth - 1) and group_sum(ctx, node.right, varying, depth - 1)
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div, ast.Pow)):
        return group_sum(ctx, node.left, varying, depth - 1) or \
            not isinstance(node.op, ast.Pow) and group_sum(ctx, node.right, varying, depth - 1)
    if isinstance(node, ast.Subscript) and isinstance(node.value, ast.Name) and names_in(node.slice) & varying:
        built = ctx.origin(node.value)
        return isinstance(built, (ast.ListComp, ast.GeneratorExp)) and group_sum(ctx, built.elt, set(), depth - 1)
    if isinstance(node, ast.Name) and node.id in varying:  # `ssq = np.sum(r * r)` earlier in this pass
        value = pass_value(ctx, node)
        if value is not None and names_in(value) & varying and group_sum(ctx, value, varying, depth - 1):
            return True
    if isinstance(node, ast.Name):  # a comprehension variable: an element of the list it walks
        for comp in ctx.ancestors(node):
            if isinstance(comp, _NESTED):
                break
            gens = comp.generators if isinstance(comp, (ast.ListComp, ast.GeneratorExp, ast.SetComp)) else []
            if len(gens) == 1 and isinstance(gens[0].target, ast.Name) and gens[0].target.id == node.id:
                built = ctx.origin(gens[0].iter)
                return isinstance(built, (ast.ListComp, ast.GeneratorExp)) and group_sum(ctx, built.elt, set(), depth - 1)
    return False


def lagged_product(ctx: Context, node: ast.expr, varying: set[str]) -> bool:
    """`np.dot(r[i:], r[:n - i])`: an inner product of slices that run from a bound the pass moves to an
    end it does not (a lag or a tail); each term is a reduction over most of the data, the loop runs
    over lags. A window `x[i:i + k]` moves both bounds and is left out: it is short, and one per item."""
    pair = product_pair(ctx, node)
    return pair is not None and any(_tail_slice(side, varying) for side in pair)


def _tail_slice(node: ast.expr, varying: set[str]) -> bool:
    if not isinstance(node, ast.Subscript):
        return False
    parts = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
    for part in parts:
        if isinstance(part, ast.Slice) and part.step is None:
            bounds = [b for b in (part.lower, part.upper)]
            moved = [b is not None and bool(names_in(b) & varying) for b in bounds]
            if any(moved) and not all(moved):
                return True
    return False


def _namespace_sum(node: ast.AST, varying: set[str]) -> bool:
    """`xp.sum(a)` through an array-namespace variable the import table cannot resolve; a name the loop
    rebinds is an array, not a namespace (`ratio.sum(0)` is a partial reduction of this pass's array)."""
    return isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr in ("sum", "mean") \
        and isinstance(node.func.value, ast.Name) and node.func.value.id not in varying and bool(node.args)


def pass_value(ctx: Context, name: ast.Name) -> ast.expr | None:
    """The value a name holds in this pass: the assignment inside the innermost loop around the use
    that reaches it (the call itself for `_, v = f(x)`), else None."""
    loops = ctx.enclosing_loops(name)
    b = ctx.binding(name)
    if not loops or b is None or b.kind not in ("assign", "unpack"):
        return None
    loop = loops[0]
    if not loop.body[0].lineno <= b.line <= (loop.end_lineno or loop.lineno):
        return None
    if b.value is not None:
        return b.value
    stmt = b.stmt
    return stmt.value if isinstance(stmt, ast.Assign) and isinstance(stmt.value, ast.Call) else None


def matrix_work(ctx: Context, term: ast.expr, depth: int = 2) -> bool:
    """`G = G + piece` after `piece = np.kron(apow, irf[m])`, `f -= n[j] * ld` after `_, ld = slogdet(c)`:
    the term, or a temporary of this pass it reads, needs a matrix product, power or factorisation."""
    for n in ast.walk(term):
        if isinstance(n, ast.Call) and ctx.family(n) in MATRIX_WORK:
            return True
        if depth > 1 and isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load):
            value = pass_value(ctx, n)
            if value is not None and matrix_work(ctx, value, depth - 1):
                return True
    return False


def slab_term(term: ast.expr, index: set[str]) -> bool:
    """`logpdf(y[..., i])`, `w[j] * X[:, j]`: the loop index picks a whole slab along one axis and the
    term keeps it an array, so each element gets one addition per pass (the loop walks an axis)."""
    stack: list[ast.AST] = [term]
    while stack:
        n = stack.pop()
        if isinstance(n, ast.Call) and isinstance(n.func, ast.Attribute) and n.func.attr in _SLAB_REDUCERS:
            continue  # `X[ix, :].sum(0)` adds up rows: one term per group, not an axis walk
        if isinstance(n, ast.Subscript) and isinstance(n.slice, ast.Tuple):
            parts = n.slice.elts
            whole = any(isinstance(e, ast.Slice) or isinstance(e, ast.Constant) and e.value is Ellipsis for e in parts)
            if whole and any(not isinstance(e, ast.Slice) and names_in(e) & index for e in parts):
                return True
        stack.extend(ast.iter_child_nodes(n))
    return False
