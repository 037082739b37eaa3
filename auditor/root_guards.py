"""Square roots taken only inside an `if` whose test keeps them away from 1.

`if np.angle(a) >= np.pi / 2: a = np.sqrt(a)` followed by `a - 1` reads like sqrt(a) - 1, but on
the path where `a` is a root its argument is at least pi/4, so it is far from 1; on the other path
`a` is not a root at all. A rule about roots near 1 asks `guarded_root` before it reports.
"""
from __future__ import annotations

import ast
import math

from auditor.elementary import sqrt_argument
from auditor.rule import Context
from auditor.values import known_values

#: largest magnification |w / (w - 1)| of the rounding of w accepted as "away from 1" (about one digit)
_MAX_GAIN = 10.5


def guarded_root(ctx: Context, written: ast.expr) -> bool:
    """True when the name `written` holds sqrt(y) only through an assignment in an `if` body that does
    not hold this use, whose test keeps y away from 1 (then sqrt(y) - 1 loses at most about one digit),
    and the value it has when the branch is not taken is not a square root either."""
    if not isinstance(written, ast.Name):
        return False
    binding = ctx.binding(written)
    if binding is None or binding.kind != "assign" or binding.value is None:
        return False
    arg = sqrt_argument(ctx, binding.value)
    guard = _branch(ctx, binding.stmt, written)
    if not isinstance(arg, ast.Name) or guard is None or _assigned_before(guard, binding.stmt, arg.id):
        return False
    earlier = ctx.flow(ctx.scope(written)).reaching(written.id, guard.lineno, guard.col_offset)
    if earlier is not None and earlier.value is not None and sqrt_argument(ctx, ctx.origin(earlier.value)) is not None:
        return False  # the untaken path also holds a root, and nothing guards that one
    return _keeps_from_one(ctx, guard.test, arg.id)


def _branch(ctx: Context, stmt: ast.AST, use: ast.AST) -> ast.If | None:
    """The `if` whose body (not its else) holds `stmt` directly, when the use lies outside it."""
    parent = ctx.parent(stmt)
    if not isinstance(parent, ast.If) or stmt not in parent.body:
        return None
    if any(anc is parent for anc in ctx.ancestors(use)):
        return None
    return parent


def _assigned_before(guard: ast.If, stmt: ast.AST, name: str) -> bool:
    """True when a statement of the body before `stmt` rebinds `name` (the test no longer speaks of it)."""
    for earlier in guard.body[:guard.body.index(stmt)]:  # type: ignore[arg-type]
        if any(isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Store) for n in ast.walk(earlier)):
            return True
    return False


def _keeps_from_one(ctx: Context, test: ast.expr, name: str) -> bool:
    """`angle(y) >= t`, `y > c` (c > 1) or `y < c` (c < 1), either way round, alone or in an `and`."""
    if isinstance(test, ast.BoolOp) and isinstance(test.op, ast.And):
        return any(_keeps_from_one(ctx, v, name) for v in test.values)
    if not (isinstance(test, ast.Compare) and len(test.ops) == 1):
        return False
    op = test.ops[0]
    if not isinstance(op, (ast.Gt, ast.GtE, ast.Lt, ast.LtE)):
        return False
    above = isinstance(op, (ast.Gt, ast.GtE))
    subject, other = test.left, test.comparators[0]
    if not _mentions(subject, name):
        subject, other, above = other, subject, not above  # c < y reads as y > c
    bound = known_values(ctx, other)
    if bound is None or len(bound) != 1:
        return False
    c = bound[0]
    if _angle_of(ctx, subject, name):
        # arg(sqrt(y)) >= c/2, and a point w of that argument has |w - 1| >= |w| sin(c/2) (c <= pi)
        return above and 0 < c <= math.pi and 1 / math.sin(c / 2) <= _MAX_GAIN
    if not (isinstance(subject, ast.Name) and subject.id == name):
        return False
    if above and c > 1:
        return math.sqrt(c) / (math.sqrt(c) - 1) <= _MAX_GAIN  # sqrt(y) > sqrt(c) > 1
    return not above and 0 <= c < 1 and math.sqrt(c) / (1 - math.sqrt(c)) <= _MAX_GAIN  # sqrt(y) < sqrt(c) < 1


def _mentions(expr: ast.expr, name: str) -> bool:
    return any(isinstance(n, ast.Name) and n.id == name for n in ast.walk(expr))


def _angle_of(ctx: Context, expr: ast.expr, name: str) -> bool:
    """`angle(y)` or `abs(angle(y))` of the name."""
    builtin = isinstance(expr, ast.Call) and isinstance(expr.func, ast.Name) and expr.func.id == "abs"
    if isinstance(expr, ast.Call) and (builtin or ctx.family(expr) in ("abs", "absolute")) and len(expr.args) == 1:
        expr = expr.args[0]
    return (isinstance(expr, ast.Call) and ctx.family(expr) == "angle" and len(expr.args) >= 1
            and isinstance(expr.args[0], ast.Name) and expr.args[0].id == name)
