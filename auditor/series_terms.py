"""What a series loop sums: growing terms, exact integer terms, positive series and their twins."""
from __future__ import annotations

import ast
from collections.abc import Iterator
from dataclasses import dataclass

from auditor import patterns as p
from auditor.rule import Context
from auditor.series_growth import combine_degrees, factorial_weight, fixed_point, index_degree, is_integer_term
from auditor.series_signs import (
    Accumulation, Loop, _memo, accumulations, recurrence_ratio, alternation, index_names, new_values, parity_branches, sign_of, updates,
    value_before,
)
from auditor.nodes import children, walk


@dataclass(frozen=True, slots=True)
class Growth:
    """A term that grows with the index: through a recurrence ratio or an explicit factorial."""

    name: str | None  #: the recurrence variable, or None for an explicit term
    stmt: ast.stmt | None  #: the recurrence update (for a smallest-term guard)
    expr: ast.expr  #: the new value of the recurrence, or the explicit term
    xnames: frozenset[str]  #: the other variables of the ratio or term (the series argument)


def in_loop_resolver(loop: Loop):  # type: ignore[no-untyped-def]
    """Resolve a local name to its single non-recursive value inside the loop."""

    def resolve(name: str) -> ast.expr | None:
        values = new_values(loop, name)
        if len(values) == 1 and name not in p.names_in(values[0]):
            return values[0]
        return None

    return resolve


def recurrence(loop: Loop, name: str) -> tuple[ast.stmt, ast.expr] | None:
    """(statement, new value) of a product recurrence `t *= r` / `t = -t * r` for `name`."""
    stmts = updates(loop, name)
    values = new_values(loop, name)
    if len(stmts) != 1 or len(values) != 1:
        return None
    value = values[0]
    if name in p.names_in(value) and _product(value) and recurrence_ratio(loop, name) is not None:
        return stmts[0], value
    return None


def _product(expr: ast.AST) -> bool:
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return _product(expr.operand)
    return isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div))


def ratio_degree(ctx: Context, loop: Loop, expr: ast.AST, depth: int = 3) -> float:
    """Degree in the index of the ratio t(k+1)/t(k) of a term: recurrences, factorials, locals combined."""
    idx = index_names(loop)
    if isinstance(expr, ast.Name) and expr.id not in idx and depth > 0:
        found = recurrence(loop, expr.id)
        if found is not None:
            return index_degree(found[1], idx, in_loop_resolver(loop))
        value = in_loop_resolver(loop)(expr.id)
        return ratio_degree(ctx, loop, value, depth - 1) if value is not None else 0.0
    if isinstance(expr, ast.UnaryOp):
        return ratio_degree(ctx, loop, expr.operand, depth)
    if isinstance(expr, ast.Call):
        return factorial_weight(ctx, expr, idx)
    if not isinstance(expr, ast.BinOp):
        return 0.0
    left, right = ratio_degree(ctx, loop, expr.left, depth), ratio_degree(ctx, loop, expr.right, depth)
    return combine_degrees(expr, left, right)


def growth(ctx: Context, loop: Loop, acc: Accumulation) -> Growth | None:
    """The term of `acc` grows factorially with the index (ratio of positive degree in k), or None."""
    if ratio_degree(ctx, loop, acc.term) <= 0:
        return None
    idx = index_names(loop)
    resolve = in_loop_resolver(loop)
    if isinstance(acc.term, ast.Name):
        found = recurrence(loop, acc.term.id)
        if found is not None:
            stmt, value = found
            return Growth(acc.term.id, stmt, value, frozenset(_reads(value, resolve) - idx - {acc.term.id}))
    xnames = set()
    for name in value_names(acc.term) - idx:
        found = recurrence(loop, name)
        xnames |= _reads(found[1], resolve) - {name} if found is not None else _reads(ast.Name(name, ast.Load()), resolve)
    return Growth(None, None, acc.term, frozenset(xnames - idx))


def value_names(expr: ast.AST) -> set[str]:
    """Variables read as values (callees and module prefixes like `math` excluded)."""
    skip = {id(n.func) for n in walk(expr) if isinstance(n, ast.Call)}
    skip |= {id(n.value) for n in walk(expr) if isinstance(n, ast.Attribute)}
    return {n.id for n in walk(expr) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load) and id(n) not in skip}


def _reads(expr: ast.expr, resolve) -> set[str]:  # type: ignore[no-untyped-def]
    out = set()
    for name in value_names(expr):
        value = resolve(name)
        out |= value_names(value) if value is not None else {name}
    return out


def integer_names(ctx: Context, loop: Loop) -> set[str]:
    """Names that hold exact Python ints through the loop (range counters, integer recurrences)."""
    ints: set[str] = set()
    if isinstance(loop, ast.For) and isinstance(loop.iter, ast.Call) and isinstance(loop.iter.func, ast.Name):
        if loop.iter.func.id == "range" and isinstance(loop.target, ast.Name):
            ints.add(loop.target.id)
            ints |= {n for a in loop.iter.args for n in p.names_in(a)}  # range() takes ints only
        elif loop.iter.func.id == "enumerate" and isinstance(loop.target, ast.Tuple) and isinstance(loop.target.elts[0], ast.Name):
            ints.add(loop.target.elts[0].id)
    assigned = {n.id for n in walk(loop) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Store)}
    for _ in range(3):
        for name in sorted(assigned - ints):
            before = value_before(ctx, loop, name)
            values = new_values(loop, name)
            if before is not None and is_integer_term(ctx, before, ints) and all(
                is_integer_term(ctx, v, ints | {name}) for v in values
            ):
                ints.add(name)
    return ints


def positive_series(ctx: Context, loop: Loop, acc: Accumulation) -> bool:
    """The accumulated term is a convergent power-series term of constant sign (`t *= x / k`, `x**k / k!`)."""
    if alternation(ctx, loop, acc) is not None or acc.subtract:
        return False
    idx = index_names(loop)
    if ratio_degree(ctx, loop, acc.term) < 0:
        return True
    return _index_power(acc.term, idx, in_loop_resolver(loop))


def _index_power(expr: ast.expr, idx: set[str], resolve) -> bool:  # type: ignore[no-untyped-def]
    """`x**k` (a power with the counter in the exponent) somewhere in the term."""
    for n in walk(expr):
        if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Pow) and p.names_in(n.right) & idx and p.names_in(n.left) - idx:
            return True
        if isinstance(n, ast.Name) and n.id not in idx:
            value = resolve(n.id)
            if value is not None and _index_power(value, idx, lambda _: None):
                return True
    return False


def parity_split(ctx: Context, loop: Loop) -> tuple[str, str] | None:
    """Even and odd terms added to two accumulators in the arms of `if k % 2:`."""
    for a, b in parity_branches(loop):
        if a.target != b.target and not a.subtract and not b.subtract:
            return a.target, b.target
    return None


def series_accumulators(ctx: Context, loop: Loop) -> list[str]:
    """Accumulators of positive power series in this loop (the candidates for a subtracted twin)."""
    names = [a.target for a in accumulations(loop) if positive_series(ctx, loop, a)]
    split = parity_split(ctx, loop)
    if split is not None:
        names += [n for n in split if n not in names]
    return names


def positive_sum_call(ctx: Context, call: ast.AST) -> bool:
    """`sum(x**k / factorial(k) for k in range(n))`: a positive power series summed by a call."""
    if not (isinstance(call, ast.Call) and call.args and isinstance(call.args[0], (ast.GeneratorExp, ast.ListComp))):
        return False
    if not (ctx.family(call) in ("sum", "fsum") or (isinstance(call.func, ast.Name) and call.func.id == "sum")):
        return False
    gen = call.args[0]
    idx = {n.id for g in gen.generators for n in walk(g.target) if isinstance(n, ast.Name)}
    term = gen.elt
    if sign_of(ctx, None, term) < 0 or any(isinstance(n, ast.UnaryOp) and isinstance(n.op, ast.USub) for n in walk(term)):
        return False
    return factorial_weight(ctx, term, idx) < 0 or _index_power(term, idx, lambda _: None)


def _sources(ctx: Context, scope: ast.AST) -> dict[str, ast.AST]:
    """Name -> the loop or call that computes it as a positive power series, in this scope."""
    out: dict[str, ast.AST] = {}
    for node in walk(scope):
        if isinstance(node, (ast.For, ast.While)) and ctx.scope(node) is scope:
            for name in series_accumulators(ctx, node):
                out.setdefault(name, node)
        elif isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            if positive_sum_call(ctx, node.value):
                out.setdefault(node.targets[0].id, node.value)
    return out


def _own_nodes(scope: ast.AST) -> Iterator[ast.AST]:
    """The nodes of one scope, nested functions and classes excluded (a module's own code only)."""
    stack: list[ast.AST] = list(getattr(scope, "body", []))
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef, ast.Lambda)):
            continue
        yield node
        stack.extend(children(node))


def subtracted_twin(ctx: Context, node: ast.AST) -> ast.BinOp | None:
    """`a - b` of two positive series where `node` (a loop or sum call) computes the earlier one."""
    scope = ctx.scope(node)
    subs = _memo(scope, "name_differences", lambda: [
        n for n in _own_nodes(scope) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub)
        and isinstance(n.left, ast.Name) and isinstance(n.right, ast.Name)
    ])
    if isinstance(node, (ast.For, ast.While)):
        mine = {a.target for a in accumulations(node)}
    else:
        parent = ctx.parent(node)
        mine = {t.id for t in getattr(parent, "targets", []) if isinstance(t, ast.Name)}
    if not any({sub.left.id, sub.right.id} & mine for sub in subs):  # type: ignore[attr-defined]
        return None  # cheap exit: nothing this node computes is ever subtracted
    sources = _sources(ctx, scope)
    if not any(src is node for src in sources.values()):
        return None
    for sub in walk(scope):
        if not (isinstance(sub, ast.BinOp) and isinstance(sub.op, ast.Sub)):
            continue
        left, right = sub.left, sub.right
        if not (isinstance(left, ast.Name) and isinstance(right, ast.Name) and left.id != right.id):
            continue
        a, b = sources.get(left.id), sources.get(right.id)
        if a is None or b is None or (sub.lineno, sub.col_offset) <= (_end(a), 0) or sub.lineno <= _end(b):
            continue
        first = a if (a.lineno, a.col_offset) <= (b.lineno, b.col_offset) else b  # type: ignore[attr-defined]
        if first is node:
            return sub
    return None


def _end(node: ast.AST) -> int:
    end: int | None = getattr(node, "end_lineno", None)
    return end if end is not None else int(getattr(node, "lineno", 0))


def exact_arithmetic(ctx: Context, loop: Loop, acc: Accumulation) -> bool:
    """Integer terms (exact) or fixed-point integer arithmetic (`>>`, `//`): no float cancellation."""
    if is_integer_term(ctx, acc.term, integer_names(ctx, loop)) or fixed_point(acc.term):
        return True
    return any(fixed_point(v) for name in p.names_in(acc.term) for v in new_values(loop, name))
