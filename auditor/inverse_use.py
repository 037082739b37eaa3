"""How a function uses a matrix inverse: as a factor on both sides of a product, or as a value of its own."""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.inverse_checks import adjoint
from auditor.nodes import walk
from auditor.rule import Context

#: attributes that read an array's layout, not its numbers
_LAYOUT = frozenset({"shape", "ndim", "dtype", "size", "itemsize", "nbytes"})
#: callee names that say the call is a matrix product (common practice in numerical code)
_PRODUCT_SUFFIXES = ("dot", "matmul")


def inverted(ctx: Context, expr: ast.expr) -> tuple[str, ast.Call] | None:
    """('inv' | 'pinv', call) when `expr` (or the local it names) is inv(A) / pinv(A)."""
    origin = ctx.origin(expr)
    if isinstance(origin, ast.Call) and ctx.family(origin) in ("inv", "pinv") and p.single_arg(origin) is not None:
        return str(ctx.family(origin)), origin
    return None


def _product_parent(ctx: Context, node: ast.AST) -> ast.AST | None:
    """The matrix product that has `node` as a direct factor (`a @ b`, `dot(a, b)`, `a.dot(b)`), else None."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Attribute) and parent.attr == "dot":
        grand = ctx.parent(parent)
        if isinstance(grand, ast.Call) and grand.func is parent and p.product_pair(ctx, grand) is not None:
            return grand
        return None
    pair = p.product_pair(ctx, parent) if parent is not None else None
    if pair is not None and any(f is node for f in pair):
        return parent
    return None


def chain_top(ctx: Context, product: ast.AST) -> ast.AST:
    """The outermost product of the chain `product` belongs to (`a @ b @ c`, `dot(a, dot(b, c))`)."""
    current = product
    while (parent := _product_parent(ctx, current)) is not None:
        current = parent
    return current


def _untransposed(ctx: Context, node: ast.expr) -> ast.expr:
    base = p.transposed(ctx, node)
    return node if base is None else base


def two_sided(ctx: Context, product: ast.AST, holder: ast.expr) -> bool:
    """True when the inverse `holder` opens and closes its product chain: A^-1 M A^-1 (or A^-1 M A^-H), a sandwich.

    Such a product is a covariance-like matrix whose every column needs the inverse, so solves gain
    nothing over the inverse. A middle that is one outer product u v^T is not exempt: there the chain
    is (A^-1 u)(A^-T v)^T, two solves against vectors.
    """
    factors = p.product_factors(ctx, chain_top(ctx, product))
    if factors is None or len(factors) < 3:
        return False
    first, last = _untransposed(ctx, factors[0]), _untransposed(ctx, factors[-1])
    if not (p.same_expr(first, holder) or p.same_expr(last, holder)):
        return False
    if not (p.same_expr(first, last) or _adjoint_inverses(ctx, first, last)):
        return False
    middle = factors[1:-1]
    rank_one = len(middle) == 1 and isinstance(ctx.origin(middle[0]), ast.Call) \
        and ctx.family(ctx.origin(middle[0])) == "outer"
    return not rank_one


def _adjoint_inverses(ctx: Context, first: ast.expr, last: ast.expr) -> bool:
    """True for inv(X) ... inv(Y) with Y spelled as X^T or X^H: inv(X^H) is inv(X)^H, one inverse on both sides."""
    left, right = inverted(ctx, first), inverted(ctx, last)
    if left is None or right is None or left[0] != right[0]:
        return False
    return adjoint(ctx, left[1].args[0], right[1].args[0])


def _callee_name(call: ast.Call) -> str:
    func = call.func
    return func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else ""


def _no_value_read(ctx: Context, node: ast.Name) -> bool:
    """True when the read looks only at shape or identity (`a.shape`, `len(a)`, `a is None`) or multiplies."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Attribute):
        return parent.attr in _LAYOUT
    if isinstance(parent, ast.Call) and node in parent.args:
        name = _callee_name(parent).lower()
        # a project's own product helper (`nan_dot`, `multi_dot`, `batched_matmul`) multiplies, by its name
        return name == "len" or name.endswith(_PRODUCT_SUFFIXES)
    return isinstance(parent, ast.Compare) and all(isinstance(op, (ast.Is, ast.IsNot)) for op in parent.ops)


def _own_value_read(ctx: Context, node: ast.Name) -> bool:
    """True when this read uses the inverse's numbers for themselves, not only to multiply a right-hand side."""
    if _no_value_read(ctx, node):
        return False
    factor: ast.AST = node
    parent = ctx.parent(node)
    if parent is not None and p.transposed(ctx, parent) is node:
        factor = parent  # Ainv.T @ b multiplies as much as Ainv @ b does
    product = _product_parent(ctx, factor)
    if product is None:
        return True  # returned, stored, scaled, indexed, passed on
    return two_sided(ctx, product, node)  # a sandwich keeps the inverse as part of a covariance


def kept_as_value(ctx: Context, holder: ast.expr, product: ast.AST) -> bool:
    """True when the local holding the inverse is also used as a value in its own right in the function."""
    if not isinstance(holder, ast.Name):
        return False
    for node in walk(ctx.scope(product)):
        if isinstance(node, ast.Name) and node.id == holder.id and isinstance(node.ctx, ast.Load) \
                and inverted(ctx, node) is not None and _own_value_read(ctx, node):
            return True
    return False


def _statement(ctx: Context, node: ast.AST) -> tuple[ast.AST | None, bool]:
    """The statement holding `node`, and whether a conditional part of it (`x if c else y`, `and`) may skip `node`."""
    guarded = False
    current: ast.AST | None = node
    while current is not None and not isinstance(current, ast.stmt):
        parent = ctx.parent(current)
        guarded = guarded or isinstance(parent, (ast.IfExp, ast.BoolOp, ast.Lambda, ast.comprehension))
        current = parent
    return current, guarded


def _block(ctx: Context, stmt: ast.AST) -> list[ast.stmt] | None:
    """The statement list `stmt` belongs to (a function body, a branch, a handler body)."""
    parent = ctx.parent(stmt)
    for field in ("body", "orelse", "finalbody"):
        block = getattr(parent, field, None)
        if isinstance(block, list) and any(s is stmt for s in block):
            return block
    return None


def _application(ctx: Context, use: ast.Name) -> tuple[int, bool] | None:
    """(side, transposed) when this read of an inverse is a direct factor of a matrix product, else None."""
    factor: ast.AST = use
    parent = ctx.parent(use)
    if parent is not None and p.transposed(ctx, parent) is use:
        factor = parent
    product = _product_parent(ctx, factor)
    pair = p.product_pair(ctx, product) if product is not None else None
    if pair is None:
        return None
    return (0 if pair[0] is factor else 1), factor is not use


def applied_again(ctx: Context, holder: ast.expr, product: ast.AST) -> bool:
    """True when the inverse `holder` names multiplies, the same way (side, transpose), at two or more products
    that run one after the other in one block: one operator applied to several right-hand sides."""
    if not isinstance(holder, ast.Name):
        return False
    found = inverted(ctx, holder)
    if found is None:
        return False
    runs: dict[tuple[int, int, bool], int] = {}
    for node in walk(ctx.scope(product)):
        if not (isinstance(node, ast.Name) and node.id == holder.id and isinstance(node.ctx, ast.Load)):
            continue
        same = inverted(ctx, node)
        way = _application(ctx, node)
        stmt, guarded = _statement(ctx, node)
        block = _block(ctx, stmt) if stmt is not None and not guarded else None
        if same is None or same[1] is not found[1] or way is None or block is None:
            continue
        key = (id(block), *way)
        runs[key] = runs.get(key, 0) + 1
    return any(count >= 2 for count in runs.values())


def updated_state(ctx: Context, holder: ast.expr) -> bool:
    """True when the local holding the inverse is later rebound by adding to or subtracting from its own value
    (`ainv = ainv - u @ u.T / d`, `ainv -= ...`): a Sherman-Morrison or Woodbury recursion whose state is the
    inverse itself, so every later product needs the inverse and a solve would have to replace the recursion."""
    if not isinstance(holder, ast.Name):
        return False
    start = ctx.binding(holder)
    if start is None or inverted(ctx, holder) is None:
        return False
    for later in ctx.flow(ctx.scope(holder)).of(holder.id):
        if (later.line, later.column) <= (start.line, start.column) or later.value is None:
            continue
        if later.kind == "aug" and isinstance(later.op, (ast.Add, ast.Sub)):
            return True
        value = later.value
        if later.kind == "assign" and isinstance(value, ast.BinOp) and isinstance(value.op, (ast.Add, ast.Sub)) \
                and any(isinstance(side, ast.Name) and side.id == holder.id for side in (value.left, value.right)):
            return True
    return False
