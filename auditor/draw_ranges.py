"""Value ranges of arrays built from uniform random draws and literal arithmetic (`rng.uniform(size=n) * 100`).

Synthetic-data generators draw from [0, 1) and then scale and shift the columns in place by
literals (`X[:, 1] *= 520 * np.pi; X[:, 1] += 40 * np.pi`). Those statements fix every element's
range, which tells a rule that a denominator is never negative or that a square cannot overflow.
Each range also carries a floor: every nonzero element is at least that large in magnitude. A
draw is a multiple of 2**-53 (numpy's and Python's float64 uniform generators), a product of
nonzero doubles keeps the product of their floors, and a nonzero sum of two doubles a and b is a
multiple of the smaller of their units in the last place, so it is at least min(|a|, |b|) * 2**-53
(IEEE 754 binary64; common practice). Only float64 generators are recognised, and any statement
that could change the array in a way the analysis does not follow (an alias, a call that receives
it, a store inside a branch or loop) makes the range unknown.
"""
from __future__ import annotations

import ast
import math

from auditor import patterns as p
from auditor.nodes import walk
from auditor.rule import Context
from auditor.spans import UNIT, Span, add, apply, constant, join, make_span, multiply, negate

#: uniform-draw methods of numpy's RandomState/Generator and Python's random module: [0, 1) or [low, high)
_STANDARD = frozenset({"random", "random_sample", "rand", "ranf"})
#: constructors whose result is a numpy random generator (numpy API; sklearn's check_random_state
#: documents that it returns a numpy RandomState, from memory)
_GENERATORS = frozenset({"default_rng", "RandomState", "Generator", "check_random_state"})
#: array attributes that read an array without changing or handing it out
_READ_ONLY = frozenset({"shape", "ndim", "dtype", "size", "T"})


def value_range(ctx: Context, expr: ast.expr, depth: int = 10) -> Span | None:
    """The range of every element of `expr`, when it is built only from float64 uniform draws, literals
    and + - * / ** on them (through locals and in-place column updates); else None."""
    if depth <= 0:
        return None
    number = p.literal_number(expr)
    if isinstance(number, (int, float)):
        return constant(float(number))
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, ast.USub):
        inner = value_range(ctx, expr.operand, depth - 1)
        return negate(inner) if inner is not None else None
    if isinstance(expr, ast.BinOp):
        return _binop(ctx, expr, depth)
    if isinstance(expr, ast.Name):
        return _name_range(ctx, expr, None, depth)
    if isinstance(expr, ast.Subscript) and isinstance(expr.value, ast.Name):
        return _name_range(ctx, expr.value, expr.slice, depth)
    if isinstance(expr, ast.Subscript):
        return value_range(ctx, expr.value, depth - 1)  # an element of an array lies in the array's range
    if isinstance(expr, ast.Attribute) and ctx.family(expr) in ("pi", "e"):
        return constant(math.pi if ctx.family(expr) == "pi" else math.e)
    if isinstance(expr, ast.Call):
        return _call_range(ctx, expr, depth)
    return None


def _binop(ctx: Context, expr: ast.BinOp, depth: int) -> Span | None:
    if isinstance(expr.op, ast.Pow):
        n = p.literal_number(expr.right)
        base = value_range(ctx, expr.left, depth - 1)
        if base is None or not isinstance(n, int) or isinstance(n, bool) or not 1 <= n <= 8:
            return None
        out: Span | None = base
        for _ in range(n - 1):
            out = multiply(out, base) if out is not None else None
        if out is not None and n % 2 == 0:
            out = Span(max(out.low, 0.0), out.high, out.floor)  # an even power is never negative
        return out
    if not isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.Div)):
        return None
    left, right = value_range(ctx, expr.left, depth - 1), value_range(ctx, expr.right, depth - 1)
    if left is None or right is None:
        return None
    return apply(expr.op, left, right)


def _call_range(ctx: Context, call: ast.Call, depth: int) -> Span | None:
    family = ctx.family(call)
    if family in ("abs", "fabs", "absolute") and len(call.args) == 1:
        inner = value_range(ctx, call.args[0], depth - 1)
        if inner is None:
            return None
        low = 0.0 if not inner.excludes_zero else min(abs(inner.low), abs(inner.high))
        return make_span(low, inner.magnitude, inner.floor)
    method = _float64_draw(ctx, call)
    return _draw(call, method) if method is not None else None


def _float64_draw(ctx: Context, call: ast.Call) -> str | None:
    """The method name of a float64 uniform draw: `np.random.rand(...)`, `random.random()`, or a method of a
    local numpy generator (`rng = np.random.default_rng(0)`, `generator = check_random_state(seed)`)."""
    if any(k.arg in ("dtype", "out") for k in call.keywords):
        return None  # Generator.random(dtype=np.float32) draws on a coarser grid
    qual = ctx.qualname(call.func)
    if qual is not None:
        known = qual.startswith("numpy.random.") or qual.startswith("random.")
        return qual.rpartition(".")[2] if known else None
    if not isinstance(call.func, ast.Attribute):
        return None
    receiver = ctx.origin(call.func.value)
    if not isinstance(receiver, ast.Call):
        return None
    maker = ctx.qualname(receiver.func) or _spelled_name(receiver.func)
    return call.func.attr if maker is not None and maker.rpartition(".")[2] in _GENERATORS else None


def _spelled_name(func: ast.expr) -> str | None:
    """`check_random_state` for a call through a relative import the import table does not resolve."""
    return func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else None


def _draw(call: ast.Call, method: str) -> Span | None:
    unit = Span(0.0, 1.0, UNIT)
    if method in _STANDARD:
        return unit
    if method != "uniform":
        return None
    keywords = {k.arg: k.value for k in call.keywords}
    bounds = []
    for position, name, default in ((0, "low", 0.0), (1, "high", 1.0)):
        node = call.args[position] if len(call.args) > position else keywords.get(name)
        value = default if node is None else p.literal_number(node)
        if not isinstance(value, (int, float)):
            return None
        bounds.append(float(value))
    low, high = bounds
    width, start = constant(high - low), constant(low)  # numpy: low + (high - low) * U
    scaled = multiply(unit, width) if width is not None else None
    return add(start, scaled) if scaled is not None and start is not None else None


def _name_range(ctx: Context, name: ast.Name, index: ast.expr | None, depth: int) -> Span | None:
    """The range of `name` (or of `name[index]`), from its assignment and the in-place stores that follow it."""
    binding = ctx.binding(name)
    if binding is None or binding.kind != "assign" or binding.value is None:
        return None
    flow = ctx.flow(ctx.scope(name))
    if len(flow.of(name.id)) > 1 and ctx.enclosing_loops(name):
        return None  # rebound inside a loop: the reaching value is ambiguous
    span = value_range(ctx, binding.value, depth - 1)
    if span is None:
        return None
    block = _block_of(ctx, binding.stmt)
    for stmt in _between(ctx, name, binding.stmt):
        found = _store(stmt, name.id)
        if found is None:
            return None  # the array is handed on or changed in a way not followed here
        target, op, value = found
        if block is None or not any(s is stmt for s in block):
            return None  # a store under an `if`, a loop or a `with`: not followed
        changed = value_range(ctx, value, depth - 1)
        if changed is None:
            return None
        new = apply(op, span, changed) if op is not None else changed
        if new is None:
            return None
        span = _merge(span, new, target.slice, index)
    return span


def _merge(old: Span, new: Span, stored: ast.expr, wanted: ast.expr | None) -> Span:
    """The range after a store into `name[stored]`, for the elements `name[wanted]` (None: all of them)."""
    if wanted is not None and p.same_expr(stored, wanted):
        return new
    if wanted is not None and _disjoint(stored, wanted):
        return old
    return join(old, new)


def _disjoint(a: ast.expr, b: ast.expr) -> bool:
    """`[:, 0]` and `[:, 3]`: tuple indices that differ in a non-negative int literal at one position."""
    if not (isinstance(a, ast.Tuple) and isinstance(b, ast.Tuple) and len(a.elts) == len(b.elts)):
        return False
    for x, y in zip(a.elts, b.elts):
        vx, vy = p.literal_number(x), p.literal_number(y)
        if isinstance(vx, int) and isinstance(vy, int) and vx >= 0 and vy >= 0 and vx != vy:
            return True
    return False


def _block_of(ctx: Context, stmt: ast.AST) -> list[ast.stmt] | None:
    parent = ctx.parent(stmt)
    for field in ("body", "orelse", "finalbody"):
        block = getattr(parent, field, None)
        if isinstance(block, list) and any(s is stmt for s in block):
            return block
    return None


def _between(ctx: Context, name: ast.Name, start: ast.AST) -> list[ast.stmt]:
    """Statements of the scope after the binding and before the use (anywhere after it when the use is in a
    loop) that store into the array or hand it on, in source order."""
    begin, end = (getattr(start, "lineno", 0), getattr(start, "end_lineno", 0)), (name.lineno, name.col_offset)
    looped = bool(ctx.enclosing_loops(name))
    holding = {id(a) for a in ctx.ancestors(name)}  # the statements around the use read it, they do not change it
    found: list[ast.stmt] = []
    for node in walk(ctx.scope(name)):
        if not isinstance(node, ast.stmt) or node is start:
            continue
        if id(node) in holding:  # a statement around the use: only its header could hand the array on
            header = [getattr(node, f, None) for f in ("test", "iter", "items")]
            if any(h is not None and _escapes(ctx, h, name.id) for h in header if not isinstance(h, list)):
                found.append(node)
            continue
        where = (node.lineno, node.col_offset)
        if where <= (begin[1], 1 << 30) or not (where < end or looped):
            continue
        if _store(node, name.id) is not None or _escapes(ctx, node, name.id):
            found.append(node)
    return sorted(found, key=lambda s: (s.lineno, s.col_offset))


def _store(stmt: ast.AST, name: str) -> tuple[ast.Subscript, ast.operator | None, ast.expr] | None:
    """(target, operator or None for `=`, value) for `name[...] op= value` / `name[...] = value`."""
    targets: list[ast.expr]
    if isinstance(stmt, ast.AugAssign):
        targets, op = [stmt.target], stmt.op
    elif isinstance(stmt, ast.Assign):
        targets, op = stmt.targets, None
    else:
        return None
    for target in targets:
        if isinstance(target, ast.Subscript) and isinstance(target.value, ast.Name) and target.value.id == name:
            return target, op, stmt.value
    return None


def _escapes(ctx: Context, stmt: ast.AST, name: str) -> bool:
    """True when the statement hands the whole array on (an alias, a call argument, a method call)
    or stores into it in a form `_store` does not read (`name[i][j] = v`, `name += v`)."""
    for node in walk(stmt):
        if isinstance(node, ast.Name) and node.id == name:
            parent = ctx.parent(node)
            if isinstance(node.ctx, ast.Store) or isinstance(parent, ast.AugAssign) and parent.target is node:
                return True
            if isinstance(parent, ast.Subscript) and parent.value is node:
                grand = ctx.parent(parent)
                if isinstance(grand, ast.Subscript) and grand.value is parent and isinstance(grand.ctx, ast.Store):
                    return True  # name[i][j] = v
                continue
            if isinstance(parent, ast.Attribute) and parent.attr in _READ_ONLY:
                continue
            return True
    return False
