"""Whether the term a loop adds changes sign from pass to pass, following only what sets its sign.

A sign reaches the term only as a factor: through products, quotients, unary minus, odd powers,
an element the pass picks from a signed array, and the locals holding such values. A sign power
passed into a model, a comparison or a reduction (`fit(x, (-1)**np.arange(n)).stats >= t`) no
longer decides the term's sign. A scalar sign power whose exponent stays the same on every pass
(`es * (-1)**np.arange(npos)` rebuilt in a Monte Carlo loop) gives the same sign each pass.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.nodes import walk
from auditor.rule import Context
from auditor.series_signs import (
    Accumulation, Loop, index_names, is_sign_power, loop_statements, new_values, parity_branches, parity_sign,
    recurrence_ratio, sign_of, toggles_sign, updates, value_before,
)

#: conversions that keep the sign of their argument (Python builtins and numpy scalar types)
_KEEPS_SIGN = frozenset({"float", "float64", "float32", "longdouble", "asarray", "array", "real"})


def pass_alternation(ctx: Context, loop: Loop, acc: Accumulation) -> str | None:
    """Why the term `acc` adds alternates in sign across passes, or None."""
    for a, b in parity_branches(loop):
        if acc in (a, b) and a.target == b.target and a.subtract != b.subtract:
            return "an add/subtract switch on the parity of the index"
    return _alternates(ctx, loop, acc.term, _varying(loop), False, 3)


def _varying(loop: Loop) -> set[str]:
    """Names whose value can differ between passes: counters and every name the body binds."""
    stored = {n.id for n in loop_statements(loop) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Store)}
    if isinstance(loop, ast.For):
        stored |= {n.id for n in walk(loop.target) if isinstance(n, ast.Name)}
    return stored | index_names(loop)


def factors(expr: ast.expr) -> list[ast.expr]:
    """The sign-carrying factors of a product or quotient (`-a * b / c` -> a, b, c); sums keep both sides."""
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return factors(expr.operand)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div, ast.Add, ast.Sub)) \
            and not _parity_form(expr):
        return factors(expr.left) + factors(expr.right)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Pow):
        n = p.literal_number(expr.right)
        if isinstance(n, int) and n % 2 == 1:
            return factors(expr.left)
    return [expr]


def _parity_form(expr: ast.BinOp) -> bool:
    """`1 - 2 * (k % 2)`: a sign made from the parity, judged whole by parity_sign."""
    return isinstance(expr.op, ast.Sub) and p.is_one(expr.left) and any(
        isinstance(n, ast.BinOp) and isinstance(n.op, (ast.Mod, ast.BitAnd)) for n in walk(expr.right))


def _alternates(ctx: Context, loop: Loop, term: ast.expr, varying: set[str], picked: bool, depth: int) -> str | None:
    """`picked`: the term is an element the pass picks out of this value, so a sign array counts too."""
    for f in factors(term):
        why = _factor_alternates(ctx, loop, f, varying, picked, depth)
        if why is not None:
            return why
    return None


def _factor_alternates(ctx: Context, loop: Loop, f: ast.expr, varying: set[str], picked: bool,
                       depth: int) -> str | None:
    if is_sign_power(ctx, f, loop):
        exponent = f.right if isinstance(f, ast.BinOp) else f.args[1]  # type: ignore[attr-defined]
        return "an explicit sign factor" if picked or p.names_in(exponent) & varying else None
    if isinstance(f, (ast.IfExp, ast.BinOp, ast.Call)) and parity_sign(ctx, loop, f, index_names(loop)) \
            and (not isinstance(f, ast.Call) or ctx.family(f) == "where"):
        return "a sign chosen by the parity of the index"
    if isinstance(f, ast.Call) and len(f.args) == 1 and _keeps_sign(ctx, f) and depth > 0:
        return _alternates(ctx, loop, f.args[0], varying, picked, depth - 1)
    if isinstance(f, ast.Subscript) and p.names_in(f.slice) & varying and depth > 0:
        return _alternates(ctx, loop, f.value, varying, True, depth - 1)  # the pass picks an element
    if isinstance(f, ast.Name):
        return _name_alternates(ctx, loop, f.id, varying, picked, depth)
    return None


def _keeps_sign(ctx: Context, call: ast.Call) -> bool:
    name = call.func.id if isinstance(call.func, ast.Name) else None
    return name == "float" or ctx.family(call) in _KEEPS_SIGN


def _name_alternates(ctx: Context, loop: Loop, name: str, varying: set[str], picked: bool, depth: int) -> str | None:
    if toggles_sign(loop, name):
        return f"the sign flip of `{name}` each pass"
    ratio = recurrence_ratio(loop, name)
    if ratio is not None and sign_of(ctx, loop, ratio) < 0:
        return f"the negative ratio of the term recurrence for `{name}`"
    values = new_values(loop, name)
    value = values[0] if len(values) == 1 and name not in p.names_in(values[0]) else None
    if value is None and not updates(loop, name):
        value = value_before(ctx, loop, name)
    if value is None or depth <= 0:
        return None
    return _alternates(ctx, loop, value, varying, picked, depth - 1)
