"""Loop facts the summation rules share: what a loop walks, and what its stores read."""
from __future__ import annotations

import ast

from auditor.nodes import children
from auditor.patterns import names_in
from auditor.rule import Context

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)


def walked(it: ast.expr) -> list[ast.expr]:
    """The sequences a loop walks: `enumerate(x)` -> [x], `zip(a, b)` -> [a, b], `range(len(x))` -> [x]."""
    if isinstance(it, ast.Call) and isinstance(it.func, ast.Name) and it.args:
        name, first = it.func.id, it.args[0]
        if name in ("enumerate", "reversed", "sorted", "list", "tuple", "iter"):
            return [first]
        if name == "zip":
            return list(it.args)
        if name == "range" and len(it.args) == 1 and isinstance(first, ast.Call) and isinstance(first.func, ast.Name) \
                and first.func.id == "len" and len(first.args) == 1:
            return [first.args[0]]
    return [it]


def group_loop(ctx: Context, loop: ast.For) -> bool:
    """A loop over groups, not data items: the function's `*args` or a tally of categories (bins)."""
    return any(few_items(ctx, seq, 5) for seq in walked(loop.iter))  # zip stops at its shortest


def few_items(ctx: Context, node: ast.expr, depth: int) -> bool:
    """`*args` (the groups written at a call site), `np.bincount(y)`, the counts of `np.unique`,
    `np.histogram(x)[0]`, `Counter(x).values()`, or a comprehension over one of them, through locals."""
    if depth <= 0:
        return False
    if isinstance(node, ast.Name):
        b = ctx.binding(node)
        scope = ctx.scope(node)
        if b is not None and isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef)) and b.stmt is scope.args.vararg:
            return True
        if b is not None and b.kind == "unpack" and b.value is None and isinstance(b.stmt, ast.Assign):
            return _tally(ctx, b.stmt.value, _position(b.stmt.targets[0], node.id))
        return b is not None and b.kind in ("assign", "unpack") and b.value is not None \
            and few_items(ctx, b.value, depth - 1)
    if isinstance(node, (ast.ListComp, ast.GeneratorExp, ast.SetComp)) and len(node.generators) == 1:
        return few_items(ctx, node.generators[0].iter, depth - 1)
    if isinstance(node, ast.Subscript) and isinstance(node.slice, ast.Constant) and isinstance(node.slice.value, int):
        return _tally(ctx, ctx.origin(node.value), node.slice.value)
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and not node.args \
            and node.func.attr in ("values", "keys", "items", "most_common"):
        return _counter(ctx, ctx.origin(node.func.value))
    return _counter(ctx, node) or isinstance(node, ast.Call) and ctx.family(node) == "bincount"


def _position(target: ast.expr, name: str) -> int | None:
    elts = target.elts if isinstance(target, (ast.Tuple, ast.List)) else []
    return next((i for i, e in enumerate(elts) if isinstance(e, ast.Name) and e.id == name), None)


def _counter(ctx: Context, node: ast.expr) -> bool:
    return isinstance(node, ast.Call) and ctx.qualname(node.func) == "collections.Counter"


def _tally(ctx: Context, call: ast.expr, index: int | None) -> bool:
    """Item `index` of `np.histogram(...)` (counts, edges) or `np.unique(..., return_counts=True)`
    (values and counts: one per category; the inverse map is as long as the data)."""
    if not isinstance(call, ast.Call) or index is None:
        return False
    if ctx.family(call) == "histogram":
        return True
    flags = {k.arg: isinstance(k.value, ast.Constant) and k.value.value is True for k in call.keywords}
    if ctx.family(call) != "unique" or not flags.get("return_counts"):
        return False
    parts = ["values"] + [f for f in ("return_index", "return_inverse", "return_counts") if flags.get(f)]
    return index < len(parts) and parts[index] != "return_inverse"


def loop_dependencies(loop: ast.For | ast.While) -> dict[str, set[str]]:
    """For each name the loop stores, the names its stored values read (`w[j] -= g` stores `w`)."""
    deps: dict[str, set[str]] = {}
    stack: list[ast.AST] = [*loop.body, *loop.orelse]
    while stack:  # the loop body, nested scopes excluded
        node = stack.pop()
        stack.extend(c for c in children(node) if not isinstance(c, _NESTED))
        if isinstance(node, ast.Assign):
            targets, value = node.targets, node.value
        elif isinstance(node, (ast.AugAssign, ast.AnnAssign)) and node.value is not None:
            targets, value = [node.target], node.value
        elif isinstance(node, ast.For):
            targets, value = [node.target], node.iter
        else:
            continue
        reads = names_in(value)
        for name in (n for t in targets for n in stored_names(t)):
            deps.setdefault(name, set()).update(reads)
    return deps


def stored_names(target: ast.expr) -> list[str]:
    """`a, *b = ...` -> a, b; `w[j] = ...` -> w (an element store changes the array)."""
    if isinstance(target, (ast.Tuple, ast.List)):
        return [n for e in target.elts for n in stored_names(e)]
    if isinstance(target, (ast.Starred, ast.Subscript)):
        return stored_names(target.value) if isinstance(target.value, (ast.Name, ast.Starred, ast.Tuple)) else []
    return [target.id] if isinstance(target, ast.Name) else []
