"""Sign facts for series loops: accumulators, sign factors, sign flips, negative ratios, parity."""
from __future__ import annotations

import ast
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import TypeVar

from auditor import patterns as p
from auditor.rule import Context
from auditor.nodes import children, walk

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
Loop = ast.For | ast.While
T = TypeVar("T")


@dataclass(frozen=True, slots=True)
class Accumulation:
    """`s += term` / `s = s + term` / `s -= term` / `s, t = s + t, ...` found in a loop body."""

    target: str
    term: ast.expr
    subtract: bool
    stmt: ast.stmt


_MEMO = "_auditor_series_memo"


def _memo(loop: ast.AST, key: str, compute: Callable[[], T]) -> T:
    """Per-loop cache: loop facts are asked for many times by both series rules."""
    store = loop.__dict__.setdefault(_MEMO, {})
    if key not in store:
        store[key] = compute()
    return store[key]  # type: ignore[no-any-return]


def loop_statements(loop: Loop) -> Iterator[ast.AST]:
    """Every node in the loop body (and else), nested scopes excluded."""
    return iter(_memo(loop, "nodes", lambda: _walk_body(loop)))


def _walk_body(loop: Loop) -> list[ast.AST]:
    out: list[ast.AST] = []
    stack: list[ast.AST] = [*loop.body, *loop.orelse]
    while stack:
        node = stack.pop()
        out.append(node)
        stack.extend(c for c in children(node) if not isinstance(c, _NESTED))
    return out


def _pairs(stmt: ast.AST) -> Iterator[tuple[str, ast.expr]]:
    """(name, value) for each plain or tuple-unpacked assignment in `stmt`."""
    if not isinstance(stmt, ast.Assign):
        return
    for target in stmt.targets:
        if isinstance(target, ast.Name):
            yield target.id, stmt.value
        elif isinstance(target, ast.Tuple) and isinstance(stmt.value, ast.Tuple) and len(target.elts) == len(stmt.value.elts):
            for t, v in zip(target.elts, stmt.value.elts):
                if isinstance(t, ast.Name):
                    yield t.id, v


def accumulations(loop: Loop) -> list[Accumulation]:
    """Additive updates of a single name inside the loop (augmented, plain or tuple-unpacked)."""
    return list(_memo(loop, "accumulations", lambda: _accumulations(loop)))


def _accumulations(loop: Loop) -> list[Accumulation]:
    found = []
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and isinstance(node.op, (ast.Add, ast.Sub)):
            found.append(Accumulation(node.target.id, node.value, isinstance(node.op, ast.Sub), node))
            continue
        for name, v in _pairs(node):
            if isinstance(v, ast.BinOp) and isinstance(v.op, (ast.Add, ast.Sub)):
                if isinstance(v.left, ast.Name) and v.left.id == name:
                    found.append(Accumulation(name, v.right, isinstance(v.op, ast.Sub), node))  # type: ignore[arg-type]
                elif isinstance(v.right, ast.Name) and v.right.id == name and isinstance(v.op, ast.Add):
                    found.append(Accumulation(name, v.left, False, node))  # type: ignore[arg-type]
    return sorted(found, key=lambda a: (a.stmt.lineno, a.stmt.col_offset))


def carried(loop: Loop, acc: Accumulation) -> bool:
    """The accumulator carries over from pass to pass: every binding of it in the loop is an accumulation."""
    count = sum(1 for a in accumulations(loop) if a.target == acc.target)
    return _stores(loop).get(acc.target, 0) == count


def updates(loop: Loop, name: str) -> list[ast.stmt]:
    """Statements in the loop that rebind `name`."""
    return list(_memo(loop, "updates", lambda: _updates(loop)).get(name, ()))


def _updates(loop: Loop) -> dict[str, list[ast.stmt]]:
    out: dict[str, list[ast.stmt]] = {}
    for node in sorted((n for n in loop_statements(loop) if isinstance(n, ast.stmt)), key=lambda n: (n.lineno, n.col_offset)):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name):
            out.setdefault(node.target.id, []).append(node)
        else:
            for n in dict.fromkeys(n for n, _ in _pairs(node)):
                out.setdefault(n, []).append(node)
    return out


def new_values(loop: Loop, name: str) -> list[ast.expr]:
    """The value `name` gets at each rebinding in the loop; `t *= r` reads as `t * r`."""
    out: list[ast.expr] = []
    for stmt in updates(loop, name):
        if isinstance(stmt, ast.AugAssign):
            out.append(ast.BinOp(ast.Name(name, ast.Load()), stmt.op, stmt.value))
        else:
            out.extend(v for n, v in _pairs(stmt) if n == name)
    return out


def index_names(loop: Loop) -> set[str]:
    """Loop counters: the `for` target names and names stepped by `k += c` inside the loop."""
    return set(_memo(loop, "index", lambda: _index_names(loop)))


def _index_names(loop: Loop) -> set[str]:
    names = set()
    if isinstance(loop, ast.For):
        names |= {n.id for n in walk(loop.target) if isinstance(n, ast.Name)}
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and isinstance(node.op, ast.Add):
            if p.is_integer_literal(node.value):
                names.add(node.target.id)
    return names


def _in_loop_value(loop: Loop | None, name: str) -> ast.expr | None:
    """The single value `name` is given in the loop, when it is not a recurrence on itself."""
    if loop is None:
        return None
    values = new_values(loop, name)
    if len(values) == 1 and name not in p.names_in(values[0]):
        return values[0]
    return None


def value_before(ctx: Context, loop: Loop, name: str) -> ast.expr | None:
    """The value a plain assignment gave `name` before the loop, in the loop's scope."""
    b = ctx.flow(ctx.scope(loop)).reaching(name, loop.lineno, loop.col_offset)
    if b is None or b.kind not in ("assign", "unpack"):
        return None
    return b.value


def sign_of(ctx: Context | None, loop: Loop | None, expr: ast.AST, depth: int = 4) -> int:
    """-1 when a product/quotient evidently carries a minus sign (variables count as positive), else +1."""
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, ast.USub):
        return -sign_of(ctx, loop, expr.operand, depth)
    if isinstance(expr, ast.Constant) and isinstance(expr.value, (int, float)) and not isinstance(expr.value, bool):
        return -1 if expr.value < 0 else 1
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div, ast.FloorDiv)):
        if isinstance(expr.op, ast.Mult) and p.same_expr(expr.left, expr.right):
            return 1
        return sign_of(ctx, loop, expr.left, depth) * sign_of(ctx, loop, expr.right, depth)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Pow):
        n = p.literal_number(expr.right)
        if isinstance(n, int) and n % 2 == 0:
            return 1
        return sign_of(ctx, loop, expr.left, depth) if isinstance(n, int) else 1
    if isinstance(expr, ast.Name) and depth > 0:
        value = _in_loop_value(loop, expr.id)
        if value is None and ctx is not None and loop is not None and not updates(loop, expr.id):
            value = value_before(ctx, loop, expr.id)
        elif value is None and ctx is not None and loop is None and hasattr(expr, "lineno"):
            origin = ctx.origin(expr)
            value = origin if origin is not expr else None
        return sign_of(ctx, loop, value, depth - 1) if value is not None else 1
    return 1


def is_sign_power(ctx: Context, node: ast.AST, loop: Loop | None = None) -> bool:
    """`(-1)**k`, `(-x)**k`, `pow(-1, k)`, `math.pow(-1, k)`, `np.power(-1, k)` with a variable exponent."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
        base, exp = node.left, node.right
    elif isinstance(node, ast.Call) and (ctx.family(node) == "pow" or (isinstance(node.func, ast.Name) and node.func.id == "pow")):
        if len(node.args) < 2:
            return False
        base, exp = node.args[0], node.args[1]
    else:
        return False
    if not p.has_free_names(exp) or p.literal_number(exp) is not None:
        return False
    if p.is_number(base, -1):
        return True
    return p.has_free_names(base) and sign_of(ctx, loop, base) < 0


def contains_sign_power(ctx: Context, expr: ast.AST, loop: Loop | None = None) -> bool:
    return any(is_sign_power(ctx, n, loop) for n in walk(expr))


def is_negative_factor(expr: ast.AST) -> bool:
    """True when a product/quotient evidently carries a minus sign, e.g. `-x / k`, `-t * x * x / (...)`."""
    return isinstance(expr, (ast.BinOp, ast.UnaryOp)) and sign_of(None, None, expr) < 0


def toggles_sign(loop: Loop, name: str) -> bool:
    """`sign = -sign`, `sign *= -1`, `sign = -1 * sign` each pass: unconditional, the only rebinding."""
    values = new_values(loop, name)
    if not values or not all(_is_flip(v, name) for v in values) or len(values) != _stores(loop).get(name, 0):
        return False
    return all(any(stmt is top for top in loop.body) for stmt in updates(loop, name))


def _stores(loop: Loop) -> dict[str, int]:
    """How many times each name is bound in the loop (unpacking, `for` targets and `with` included)."""

    def count() -> dict[str, int]:
        out: dict[str, int] = {}
        for node in loop_statements(loop):
            if isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):  # augmented targets included
                out[node.id] = out.get(node.id, 0) + 1
        return out

    return _memo(loop, "stores", count)


def _is_flip(value: ast.expr, name: str) -> bool:
    if isinstance(value, ast.UnaryOp) and isinstance(value.op, ast.USub):
        return isinstance(value.operand, ast.Name) and value.operand.id == name
    if isinstance(value, ast.BinOp) and isinstance(value.op, (ast.Mult, ast.Div)):
        sides = (value.left, value.right)
        return any(isinstance(s, ast.Name) and s.id == name for s in sides) and any(p.is_number(s, -1) for s in sides)
    return False


def recurrence_ratio(loop: Loop, name: str) -> ast.expr | None:
    """The new value of a term recurrence `t *= r`, `t /= r`, `t = t * r`, `t = -t * r / k`, else None.

    Only a name updated once per pass is a term recurrence; several updates (Krylov-style state) are not.
    """
    values = new_values(loop, name)
    if len(values) != 1 or _stores(loop).get(name, 0) != 1:
        return None
    value = values[0]
    if name in p.names_in(value) and _is_product(value) and not _is_flip(value, name) and _series_ratio(loop, value, name):
        return value
    return None


def _series_ratio(loop: Loop, value: ast.expr, name: str, depth: int = 2) -> bool:
    """The ratio depends only on counters and values fixed during the loop (`-x / k`), not on state
    rebuilt each pass (the Givens sines of an iterative solver)."""
    idx, stores = index_names(loop), _stores(loop)
    for other in p.names_in(value) - {name} - idx:
        if other not in stores:
            continue
        inner = new_values(loop, other)
        if depth == 0 or len(inner) != 1 or other in p.names_in(inner[0]) or not _series_ratio(loop, inner[0], other, depth - 1):
            return False
    return True


def _is_product(expr: ast.AST) -> bool:
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return _is_product(expr.operand)
    return isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div))


def _parity_test(test: ast.AST, idx: set[str]) -> bool:
    """`k % 2`, `k % 2 == 0`, `k & 1`, `not k % 2` on a loop counter."""
    for n in walk(test):
        if isinstance(n, ast.BinOp) and (
            (isinstance(n.op, ast.Mod) and p.is_number(n.right, 2)) or (isinstance(n.op, ast.BitAnd) and p.is_one(n.right))
        ):
            if p.names_in(n.left) & idx:
                return True
    return False


def parity_sign(ctx: Context, loop: Loop | None, expr: ast.AST, idx: set[str]) -> bool:
    """`1 if k % 2 == 0 else -1`, `np.where(k % 2, -1, 1)`, `1 - 2 * (k % 2)`: a sign set by parity."""
    for n in walk(expr):
        if isinstance(n, ast.IfExp) and _parity_test(n.test, idx):
            if sign_of(ctx, loop, n.body) != sign_of(ctx, loop, n.orelse):
                return True
        if isinstance(n, ast.Call) and len(n.args) == 3 and ctx.family(n) == "where" and _parity_test(n.args[0], idx):
            if sign_of(ctx, loop, n.args[1]) != sign_of(ctx, loop, n.args[2]):
                return True
        if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Sub) and p.is_one(n.left) and _parity_test(n.right, idx):
            return True
    return False


def parity_branches(loop: Loop) -> list[tuple[Accumulation, Accumulation]]:
    """Pairs of updates in the two arms of an `if k % 2:` (same or different accumulators)."""
    idx = index_names(loop)
    accs = accumulations(loop)
    out: list[tuple[Accumulation, Accumulation]] = []
    for node in loop_statements(loop):
        if isinstance(node, ast.If) and node.orelse and _parity_test(node.test, idx):
            left = [a for a in accs if any(a.stmt is s for s in node.body)]
            right = [a for a in accs if any(a.stmt is s for s in node.orelse)]
            out.extend((a, b) for a in left for b in right)
    return out


def alternation(ctx: Context, loop: Loop, acc: Accumulation) -> str | None:
    """Why the accumulated term of `acc` alternates in sign across passes, or None."""
    for a, b in parity_branches(loop):
        if acc in (a, b) and a.target == b.target and a.subtract != b.subtract:
            return "an add/subtract switch on the parity of the index"
    return term_alternates(ctx, loop, acc.term)


def term_alternates(ctx: Context, loop: Loop, term: ast.expr, depth: int = 3) -> str | None:
    """Why a term alternates in sign across passes (sign factor, flip, negative ratio), or None."""
    if contains_sign_power(ctx, term, loop):
        return "an explicit sign factor"
    if parity_sign(ctx, loop, term, index_names(loop)):
        return "a sign chosen by the parity of the index"
    for name in sorted(p.names_in(term)):
        if toggles_sign(loop, name):
            return f"the sign flip of `{name}` each pass"
        ratio = recurrence_ratio(loop, name)
        if ratio is not None and sign_of(ctx, loop, ratio) < 0:
            return f"the negative ratio of the term recurrence for `{name}`"
        value = _in_loop_value(loop, name)
        if value is None and not updates(loop, name):
            value = value_before(ctx, loop, name)
        if value is not None and depth > 0:
            why = term_alternates(ctx, loop, value, depth - 1)
            if why is not None:
                return why
    return None
