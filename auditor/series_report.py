"""How series findings are worded and fixed: magnitudes, severities, summed terms, rewrites."""
from __future__ import annotations

import ast
from collections.abc import Callable

from auditor import patterns as p
from auditor.model import Severity
from auditor.rule import Context
from auditor.series_growth import factorial_weight, index_degree
from auditor.series_model import Recognised
from auditor.series_rewrite import library_call, module_for, read_after
from auditor.series_signs import Accumulation, Loop, index_names, is_sign_power, parity_sign
from auditor.series_terms import in_loop_resolver, ratio_degree
from auditor.nodes import walk

#: digits lost, from the size of the largest term against the sum: for e^-x the terms peak near
#: e^x / sqrt(2 pi x) against e^-x, for sin/cos near e^|x| / sqrt(2 pi |x|) against O(1) (common practice);
#: the figures were measured against mpmath at 60 digits and are checked in tests/test_series_rules.py
MAGNITUDE: dict[str, str] = {
    "exp_neg": "the terms peak near e^x while the sum is e^-x, so about 0.8·x digits are lost (7 at x = 10, "
    "all 16 by x ≈ 20)",
    "exp_neg_sq": "the terms peak near e^(x²) while the sum is e^(-x²), so about 0.87·x² digits are lost "
    "(all 16 by |x| ≈ 4.5)",
    "sin": "the terms peak near e^|x| / sqrt(2π|x|), so about 0.43·|x| digits are lost (3 at x = 10, all 16 by "
    "|x| ≈ 40)",
    "cos": "the terms peak near e^|x| / sqrt(2π|x|), so about 0.43·|x| digits are lost (3 at x = 10, all 16 by "
    "|x| ≈ 40)",
    "j0": "the terms peak near e^|x| / sqrt(2π|x|), so about 0.4·|x| digits are lost (8 at x = 20, all 16 by "
    "|x| ≈ 38)",
    "atan": "it loses little for |x| < 1 but converges slowly near |x| = 1 and not at all beyond",
    "log1p": "it loses little for |x| < 1 but converges slowly near |x| = 1 and not at all beyond",
}
_SLOW = ("atan", "log1p")
_SUMS = ("sum", "fsum")
_DOTS = ("dot", "inner", "matmul", "vdot")
#: callee names that can be a sum or a dot product (aliases are checked through the imports)
_CALL_NAMES = frozenset({*_SUMS, *_DOTS, "nansum"})


def severity_for(ctx: Context, loop: Loop, acc: Accumulation, known: Recognised | None) -> Severity:
    """Warning for entire-function series (factorial terms); note for |x| < 1 series (log, atan, geometric)."""
    if known is not None:
        return Severity.NOTE if known.kind in _SLOW else Severity.WARNING
    if ratio_degree(ctx, loop, acc.term) < 0:
        return Severity.WARNING
    idx = index_names(loop)
    return Severity.NOTE if _has_power_or_reciprocal(acc.term, idx, in_loop_resolver(loop)) else Severity.WARNING


def _has_power_or_reciprocal(expr: ast.expr, idx: set[str], resolve) -> bool:  # type: ignore[no-untyped-def]
    """A geometric or 1/k magnitude (`x**k`, `1 / (2k + 1)`): the series needs |x| < 1 anyway."""
    return index_degree(expr, idx, resolve) < 0 or any(
        isinstance(n, ast.BinOp) and isinstance(n.op, ast.Pow) and p.names_in(n.right) & idx and not p.is_number(n.left, -1)
        for n in walk(expr)
    )


def loop_rewrite(ctx: Context, loop: Loop, acc: str, known: Recognised | None) -> tuple[str | None, tuple[str, ...], str]:
    """(replacement for the loop, imports, the fix in words)."""
    generic = "use the closed form or library function, or sum a positive series and invert it"
    if known is None:
        return None, (), generic
    call = library_call(ctx, known.kind, known.var, module_for(ctx, loop), known.negated)
    if call is None:
        return None, (), generic
    text, imports = call
    others = {n.id for n in walk(loop) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Store)} - {acc}
    if loop.orelse or read_after(ctx, loop, others):
        return None, (), f"use `{text}`"
    return f"{acc} = {text}", imports, f"use `{text}`"


def summed_term(ctx: Context, node: ast.AST) -> tuple[ast.expr, set[str], set[str]] | None:
    """(term, index names, names known to be ints) of a vectorised or generator sum, else None."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.MatMult):
        return _array_term(ctx, ast.BinOp(node.left, ast.Mult(), node.right))
    if not isinstance(node, ast.Call):
        return None
    func = node.func
    last = func.attr if isinstance(func, ast.Attribute) else func.id if isinstance(func, ast.Name) else None
    if last is None or (last not in _CALL_NAMES and not (isinstance(func, ast.Name) and func.id in ctx.imports.bindings)):
        return None  # neither a sum or dot by name nor an imported alias that could be one
    fam = ctx.family(node)
    builtin = isinstance(node.func, ast.Name) and node.func.id == "sum" and ctx.qualname(node.func) is None
    if (fam in _SUMS or builtin) and node.args:
        arg = node.args[0]
        if isinstance(arg, (ast.GeneratorExp, ast.ListComp)):
            return _generator_term(arg)
        return _array_term(ctx, ctx.origin(arg))
    if fam in _DOTS and len(node.args) == 2:
        return _array_term(ctx, ast.BinOp(node.args[0], ast.Mult(), node.args[1]))
    if isinstance(node.func, ast.Attribute) and node.func.attr == "sum" and not node.args:
        if ctx.qualname(node.func) is None:
            return _array_term(ctx, ctx.origin(node.func.value))
    return None


def _generator_term(gen: ast.GeneratorExp | ast.ListComp) -> tuple[ast.expr, set[str], set[str]]:
    idx, ints = set(), set()
    for g in gen.generators:
        names = {n.id for n in walk(g.target) if isinstance(n, ast.Name)}
        idx |= names
        if isinstance(g.iter, ast.Call) and isinstance(g.iter.func, ast.Name) and g.iter.func.id == "range":
            ints |= names | {n for a in g.iter.args for n in p.names_in(a)}  # range() takes ints only
    return gen.elt, idx, ints


def _array_term(ctx: Context, term: ast.expr) -> tuple[ast.expr, set[str], set[str]]:
    """Index names are those bound to `arange` (directly or through one local)."""
    idx = set()
    for n in _names_through(ctx, term, 3):
        origin = ctx.origin(n)
        if ctx.is_call(origin, "arange"):
            idx.add(n.id)
    return term, idx, set()


def vector_resolver(ctx: Context, expr: ast.AST) -> Callable[[str], ast.expr | None]:
    """Resolve the locals an array expression reads to the values they were given."""
    values: dict[str, ast.expr] = {}
    for n in _names_through(ctx, expr, 3):
        origin = ctx.origin(n)
        if origin is not n:
            values.setdefault(n.id, origin)
    return values.get


def expressions_through(ctx: Context, expr: ast.AST, depth: int = 3) -> list[ast.AST]:
    """Every node of `expr` and of the values of the locals it reads (a few levels deep)."""
    out = list(walk(expr))
    for n in _names_through(ctx, expr, depth):
        origin = ctx.origin(n)
        if origin is not n:
            out.extend(walk(origin))
    return out


def _names_through(ctx: Context, expr: ast.AST, depth: int, seen: set[int] | None = None) -> list[ast.Name]:
    """Names read by `expr` and, `depth` levels down, by the values of the locals it reads; each
    value is walked once however often its name is read (`seen` holds the values walked)."""
    seen = set() if seen is None else seen
    out = []
    for n in walk(expr):
        if isinstance(n, ast.Name) and hasattr(n, "lineno"):
            out.append(n)
            origin = ctx.origin(n)
            if origin is not n and depth > 0 and id(origin) not in seen:
                seen.add(id(origin))
                out.extend(_names_through(ctx, origin, depth - 1, seen))
    return out


def _index_sign_power(ctx: Context, term: ast.AST, idx: set[str]) -> bool:
    """A sign power that alternates over the summed index: `(-1)**k` always counts; `(-x)**e`
    only when its exponent reads an index name (`(-log u)**theta` with a shape parameter is a
    plain power, not a sign that flips from term to term)."""
    for n in walk(term):
        if not is_sign_power(ctx, n):
            continue
        base, exponent = (n.left, n.right) if isinstance(n, ast.BinOp) else (n.args[0], n.args[1])  # type: ignore[attr-defined]
        if p.is_number(base, -1) or p.names_in(exponent) & idx:
            return True
    return False


def vector_alternates(ctx: Context, term: ast.AST, idx: set[str], depth: int = 3) -> bool:
    """A sign power or parity sign in the term, directly or in the locals it reads."""
    if isinstance(term, ast.Compare):
        return False  # a summed comparison counts booleans: no series
    if _index_sign_power(ctx, term, idx) or parity_sign(ctx, None, term, idx or p.names_in(term)):
        return True
    for n in walk(term):
        if isinstance(n, ast.Name) and hasattr(n, "lineno") and depth > 0:
            origin = ctx.origin(n)
            if origin is n or _opaque(ctx, origin):
                continue
            if vector_alternates(ctx, origin, idx, depth - 1):
                return True
    return False


def magnitude_reads_index(ctx: Context, term: ast.AST, idx: set[str], depth: int = 3) -> bool:
    """True when the size of the term, not just its sign, changes with the summed index.

    `(-1)**k * x**k / k!` is a series; `es * (-1)**np.arange(n)` dotted with data is a
    +-1-weighted combination whose magnitudes come from the data, not from the index (a
    contrast, not a series). Pure sign factors `(-1)**k` are skipped; an index name or an
    inline `arange` anywhere else (through the locals the term reads) counts."""
    seen: set[int] = set()
    stack: list[tuple[ast.AST, int]] = [(term, depth)]
    while stack:
        node, left = stack.pop()
        if is_sign_power(ctx, node) and p.is_number(node.left if isinstance(node, ast.BinOp) else node.args[0], -1):  # type: ignore[attr-defined]
            continue  # the sign, not the size
        if isinstance(node, ast.Call) and ctx.family(node) == "arange":
            return True
        if isinstance(node, ast.Name) and hasattr(node, "lineno"):
            if node.id in idx:
                return True
            origin = ctx.origin(node)
            if origin is not node and left > 0 and id(origin) not in seen:
                seen.add(id(origin))
                stack.append((origin, left - 1))
            continue
        stack.extend((c, left) for c in ast.iter_child_nodes(node))
    return False


def _opaque(ctx: Context, value: ast.AST) -> bool:
    """A value made by a call to something other than a numeric-library function (a model, a
    method): its signs are not the ones written in its arguments, so they are not followed."""
    return isinstance(value, ast.Call) and ctx.family(value) is None
