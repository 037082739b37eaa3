"""How a function uses a matrix inverse: as a factor on both sides of a product, or as a value of its own."""
from __future__ import annotations

import ast

from auditor import patterns as p
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
    """True when the inverse `holder` opens and closes its product chain: A^-1 M A^-1, a sandwich.

    Such a product is a covariance-like matrix whose every column needs the inverse, so solves gain
    nothing over the inverse. A middle that is one outer product u v^T is not exempt: there the chain
    is (A^-1 u)(A^-T v)^T, two solves against vectors.
    """
    factors = p.product_factors(ctx, chain_top(ctx, product))
    if factors is None or len(factors) < 3:
        return False
    first, last = _untransposed(ctx, factors[0]), _untransposed(ctx, factors[-1])
    if not (p.same_expr(first, holder) and p.same_expr(last, holder)):
        return False
    middle = factors[1:-1]
    rank_one = len(middle) == 1 and isinstance(ctx.origin(middle[0]), ast.Call) \
        and ctx.family(ctx.origin(middle[0])) == "outer"
    return not rank_one


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
