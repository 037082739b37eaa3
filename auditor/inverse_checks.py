"""Products that check an inverse, inverses spelled as each other's adjoint, and one inverse applied repeatedly."""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.copies import data_source
from auditor.nodes import walk
from auditor.rule import Context

#: numpy-API functions whose value is an identity matrix (eye with k=0, identity)
_IDENTITY_FAMILIES = frozenset({"eye", "identity"})
#: callee names that compare two arrays (numpy.testing and numpy API, common practice)
_COMPARERS = frozenset({"allclose", "isclose", "array_equal", "array_equiv"})


def same_matrix(ctx: Context, a: ast.expr, b: ast.expr) -> bool:
    """True when a and b hold the same numbers: one expression, the same local value, or copies of one array."""
    if p.same_expr(a, b) or p.same_expr(ctx.origin(a), ctx.origin(b)):
        return True
    return p.same_expr(data_source(ctx, a), data_source(ctx, b))


def is_identity(ctx: Context, expr: ast.expr) -> bool:
    """True for `np.eye(n)`, `np.eye(n, dtype=...)`, `np.identity(n)` (or a local holding one); not eye(n, k=1)."""
    call = ctx.origin(expr)
    if not (isinstance(call, ast.Call) and ctx.family(call) in _IDENTITY_FAMILIES):
        return False
    offset = [kw.value for kw in call.keywords if kw.arg == "k"] + call.args[2:3]
    return all(p.is_number(value, 0) for value in offset)


def _callee_name(call: ast.Call) -> str:
    func = call.func
    return func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else ""


#: functions that reduce a residual to a size before it is compared (numpy API)
_MEASURES = frozenset({"norm", "abs", "absolute", "max", "amax"})


def _reads(ctx: Context, node: ast.AST) -> list[ast.AST]:
    """`node` itself and, when it is the whole value of one local, the reads of that local that see it."""
    reads = [node]
    parent = ctx.parent(node)
    if isinstance(parent, ast.Assign) and parent.value is node and len(parent.targets) == 1 \
            and isinstance(parent.targets[0], ast.Name):
        holder = parent.targets[0].id
        reads.extend(use for use in walk(ctx.scope(node)) if isinstance(use, ast.Name) and use.id == holder
                     and isinstance(use.ctx, ast.Load) and ctx.origin(use) is node)
    return reads


def _comparison(ctx: Context, node: ast.AST) -> list[ast.expr] | None:
    """The other operands when `node` is compared (==, <) or asserted close to something, else None."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Compare):
        return [e for e in (parent.left, *parent.comparators) if e is not node]
    if isinstance(parent, ast.Call) and any(a is node for a in parent.args):
        name = _callee_name(parent).lower()
        if name.startswith("assert") or name in _COMPARERS:
            return [a for a in parent.args if a is not node and not isinstance(a, ast.Starred)]
    return None


def _checked(ctx: Context, node: ast.AST, hops: int = 2) -> bool:
    """True when the value of `node` is compared or asserted, directly or after a norm or abs of it."""
    for read in _reads(ctx, node):
        if _comparison(ctx, read) is not None:
            return True
        parent = ctx.parent(read)
        if hops > 0 and isinstance(parent, ast.Call) and any(a is read for a in parent.args) \
                and (ctx.family(parent) or _callee_name(parent)) in _MEASURES and _checked(ctx, parent, hops - 1):
            return True
    return False


def _set_against(ctx: Context, top: ast.AST) -> list[ast.expr]:
    """What the product's value is compared with, or subtracted from in a residual that is then checked."""
    found: list[ast.expr] = []
    for read in _reads(ctx, top):
        found.extend(_comparison(ctx, read) or [])
        parent = ctx.parent(read)
        if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Sub) and _checked(ctx, parent):
            found.append(parent.right if parent.left is read else parent.left)
    return found


def checks_identity(ctx: Context, top: ast.AST) -> bool:
    """True when the product chain `top` is checked against an identity matrix or the matrix ending it on both
    sides: `A X ~ I`, `norm(A X A - A) < tol`, tests of the identities an inverse satisfies.

    A difference that is not itself compared (`I - A X` as a projection) is computation, not a check.
    """
    factors = p.product_factors(ctx, top)
    if not factors:
        return False
    first, last = _untransposed(ctx, factors[0]), _untransposed(ctx, factors[-1])
    for other in _set_against(ctx, top):
        if is_identity(ctx, other):
            return True
        if same_matrix(ctx, other, first) and same_matrix(ctx, other, last):
            return True
    return False


def _untransposed(ctx: Context, node: ast.expr) -> ast.expr:
    base = p.transposed(ctx, node)
    return node if base is None else base


def adjoint(ctx: Context, x: ast.expr, y: ast.expr, depth: int = 4) -> bool:
    """True when y holds the (conjugate) transpose of x, as the code spells them.

    Seen through locals; a transpose spread over a sum or difference (`a.T + I` is `(a + I).T`);
    an identity matrix and a number are their own transposes.
    """
    if depth <= 0:
        return False
    for a, b in ((x, y), (y, x)):
        base = p.transposed(ctx, b)
        if base is not None and same_matrix(ctx, base, a):
            return True
    if is_identity(ctx, x) and is_identity(ctx, y) and same_matrix(ctx, x, y):
        return True
    if p.literal_number(x) is not None and p.same_expr(x, y):
        return True
    ox, oy = ctx.origin(x), ctx.origin(y)
    if ox is not x or oy is not y:
        return adjoint(ctx, ox, oy, depth - 1)
    if isinstance(x, ast.BinOp) and isinstance(y, ast.BinOp) and type(x.op) is type(y.op) \
            and isinstance(x.op, (ast.Add, ast.Sub)):
        return adjoint(ctx, x.left, y.left, depth - 1) and adjoint(ctx, x.right, y.right, depth - 1)
    return False
