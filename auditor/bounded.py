"""Values whose every element is bounded by a small constant: unit-vector components, sines, their products.

A sum of squares of such values can neither overflow nor, for a unit vector, lose the result to
underflow (its squares add up to 1), so a hypot rewrite buys nothing there.
"""
from __future__ import annotations

import ast

from auditor import algebra as alg
from auditor import patterns as p
from auditor.array_api import namespace_function
from auditor.elementary import sqrt_argument, square_base
from auditor.copies import stored_into
from auditor.flow import Binding
from auditor.local_returns import returned_items
from auditor.relative_names import relative_qualname
from auditor.rule import Context
from auditor.values import certain_binding

#: numeric families whose value, for a real argument, lies within [-1, 1]
UNIT_FAMILIES = frozenset({"sin", "cos", "sinpi", "cospi", "tanh", "erf", "sign"})
#: numeric families whose value, for a real argument, lies within [-pi, pi]
_BOUNDED_FAMILIES = UNIT_FAMILIES | {"erfc", "atan", "atan2", "asin", "acos", "softmax"}

#: library functions documented to return unit vectors: qualified name -> (position of the unit vector
#: in the returned tuple, or None for the whole result; length of that tuple). From the pyerfa/SOFA
#: documentation (from memory): `pn(p)` returns "modulus and unit vector" (r, u); `s2c(theta, phi)`
#: returns the direction cosines of a point on the unit sphere.
_UNIT_RESULTS: dict[str, tuple[int | None, int]] = {
    "erfa.pn": (1, 2),
    "erfa.s2c": (None, 1),
}


#: library constructors documented to return rotation (orthogonal) matrices, whose entries lie in [-1, 1]
#: and whose products stay orthogonal. From the astropy and pyerfa/SOFA documentation (from memory):
#: `rotation_matrix(angle, axis)` rotates about an axis; the SOFA precession-nutation, celestial-to-
#: intermediate/terrestrial and ecliptic matrices are rotations.
_ORTHOGONAL = frozenset({
    "astropy.coordinates.matrix_utilities.rotation_matrix",
    "erfa.pnm06a", "erfa.pnm00a", "erfa.c2i06a", "erfa.c2t06a", "erfa.ecm06",
})


def is_bounded(ctx: Context, expr: ast.expr, depth: int = 8) -> bool:
    """True when every element of `expr` is known to lie within a small constant of 0 (|x| <= pi).

    Seen through local variables (tuple unpacking included): components of a vector divided by its
    own norm, bounded functions (sin, cos, tanh, erf ...), documented unit-vector results, their
    elements, transposes, products and means.
    """
    if depth <= 0:
        return False
    while isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        expr = expr.operand
    if isinstance(expr, ast.Name):
        return _name_bounded(ctx, expr, depth - 1)
    if isinstance(expr, ast.Subscript):
        return _unit_element(ctx, expr) or is_bounded(ctx, expr.value, depth - 1)
    if isinstance(expr, ast.Attribute) and expr.attr == "T":
        return is_bounded(ctx, expr.value, depth - 1)
    if isinstance(expr, ast.Call):
        return _call_bounded(ctx, expr, depth)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.MatMult):
        return is_orthogonal(ctx, expr, depth)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Mult):
        return is_bounded(ctx, expr.left, depth - 1) and is_bounded(ctx, expr.right, depth - 1)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Div):
        return divided_by_own_norm(ctx, expr.left, expr.right)
    return False


def _call_bounded(ctx: Context, call: ast.Call, depth: int) -> bool:
    """Bounded functions (also through an array-API namespace `xp.sin`), means of bounded values,
    unit-vector and rotation-matrix results, and same-file functions that return bounded values."""
    total = p.reduction(ctx, call)
    namespaced = namespace_function(ctx, call)
    if namespaced == "mean" and call.args and not isinstance(call.args[0], ast.Starred):
        total = ("mean", call.args[0])
    if total is not None and total[0] == "mean":  # a mean of bounded values (circular statistics)
        return is_bounded(ctx, total[1], depth - 1)
    if (ctx.family(call) or namespaced) in _BOUNDED_FAMILIES or is_orthogonal(ctx, call, depth):
        return True
    if _UNIT_RESULTS.get(ctx.qualname(call.func) or "") == (None, 1):
        return True
    items = returned_items(ctx, call)
    return items is not None and all(is_bounded(ctx, item, depth - 1) for item in items)


def is_orthogonal(ctx: Context, expr: ast.expr, depth: int = 5) -> bool:
    """A rotation matrix: a documented constructor's result, its transpose, or a product of such."""
    if depth <= 0:
        return False
    if isinstance(expr, ast.Name):
        binding = ctx.binding(expr)
        if binding is None or binding.kind != "assign" or binding.value is None or stored_into(ctx, expr, binding):
            return False
        if len(ctx.flow(ctx.scope(expr)).of(expr.id)) > 1 and ctx.enclosing_loops(expr):
            return False  # reassigned inside a loop: the reaching value is ambiguous
        return is_orthogonal(ctx, binding.value, depth - 1)
    if isinstance(expr, ast.Attribute) and expr.attr == "T":
        return is_orthogonal(ctx, expr.value, depth - 1)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.MatMult):
        return is_orthogonal(ctx, expr.left, depth - 1) and is_orthogonal(ctx, expr.right, depth - 1)
    if not isinstance(expr, ast.Call):
        return False
    if ctx.family(expr) == "matmul" and len(expr.args) == 2 and not expr.keywords:
        return all(is_orthogonal(ctx, a, depth - 1) for a in expr.args)
    return (ctx.qualname(expr.func) or relative_qualname(ctx, expr.func, _ORTHOGONAL)) in _ORTHOGONAL


def _unit_element(ctx: Context, sub: ast.Subscript) -> bool:
    """`erfa.pn(p)[1]`: the unit-vector item of a documented tuple result."""
    call = ctx.origin(sub.value)
    if not (isinstance(call, ast.Call) and isinstance(sub.slice, ast.Constant)):
        return False
    known = _UNIT_RESULTS.get(ctx.qualname(call.func) or "")
    return known is not None and known[0] is not None and sub.slice.value == known[0]


def _name_bounded(ctx: Context, name: ast.Name, depth: int) -> bool:
    binding = ctx.binding(name)
    if binding is None or stored_into(ctx, name, binding) or not certain_binding(ctx, name):
        return False  # changed in place, or another assignment (on a branch) may be the one in effect
    if len(ctx.flow(ctx.scope(name)).of(name.id)) > 1 and ctx.enclosing_loops(name):
        return False  # reassigned inside a loop: the reaching value is ambiguous
    if binding.kind in ("assign", "unpack") and binding.value is not None:
        return is_bounded(ctx, binding.value, depth)
    if binding.kind == "unpack":
        return _unpacked_bounded(ctx, binding, depth)
    if binding.kind == "aug" and isinstance(binding.op, ast.Div) and binding.value is not None:
        return divided_by_own_norm(ctx, name, binding.value)  # v /= np.linalg.norm(v)
    return False


def _unpacked_bounded(ctx: Context, binding: Binding, depth: int) -> bool:
    """`r, u = erfa.pn(p)` binds u to a unit vector; `x, y, z = u` binds rows of a bounded array."""
    stmt = binding.stmt
    if not (isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], (ast.Tuple, ast.List))):
        return False
    elts = stmt.targets[0].elts
    position = next((i for i, t in enumerate(elts) if isinstance(t, ast.Name) and t.id == binding.name), None)
    if position is None:
        return False
    value = ctx.origin(stmt.value)
    if isinstance(value, ast.Call):
        known = _UNIT_RESULTS.get(ctx.qualname(value.func) or "")
        if known is not None and known[0] is not None:
            return known == (position, len(elts))
        items = returned_items(ctx, value, position, len(elts))
        if items is not None:  # `s, sin_s, cos_s = helper(x)` with a same-file helper
            return all(is_bounded(ctx, item, depth - 1) for item in items)
    return is_bounded(ctx, stmt.value, depth)


def divided_by_own_norm(ctx: Context, numerator: ast.expr, denominator: ast.expr) -> bool:
    """True for `v / norm(v)`, `x / hypot(x, y)`, `v / sqrt(sum(v**2))`: every element within [-1, 1]."""
    found = norm_bases(ctx, _unwrap(ctx, denominator))
    if found is None:
        return False
    bases, whole = found
    # an element of v over the length of all of v is bounded; a component over others' length is not
    target = _unsubscripted(numerator) if whole else numerator
    return any(p.same_expr(base, target) for base in bases)


def _unwrap(ctx: Context, expr: ast.expr) -> ast.expr:
    """The norm behind `n`, `n[:, None]`, `n[..., np.newaxis]` (a local holding it, broadcast)."""
    for _ in range(4):
        if isinstance(expr, ast.Subscript):
            expr = expr.value
        elif isinstance(expr, ast.Name) and ctx.origin(expr) is not expr:
            expr = ctx.origin(expr)
        else:
            break
    return expr


def _unsubscripted(expr: ast.expr) -> ast.expr:
    while isinstance(expr, ast.Subscript):
        expr = expr.value
    return expr


def norm_bases(ctx: Context, den: ast.expr) -> tuple[list[ast.expr], bool] | None:
    """(vectors, True) when `den` is the length of whole vectors, (components, False) for
    `hypot(x, y)` or `sqrt(x*x + y*y)`; None when it is not a length."""
    if isinstance(den, ast.Call) and ctx.family(den) == "norm" and den.args and _vector_norm(ctx, den):
        return [den.args[0]], True
    if isinstance(den, ast.Call) and ctx.family(den) == "abs" and den.args:
        return [den.args[0]], False
    if isinstance(den, ast.Call) and ctx.family(den) == "hypot":
        return list(den.args), False
    radicand = sqrt_argument(ctx, den)
    if radicand is None:
        return None
    radicand = ctx.origin(radicand)
    total = p.reduction(ctx, radicand)
    if total is not None and total[0] == "sum":  # sqrt(np.sum(v**2, axis=-1)), sqrt((v*v).sum())
        base = square_base(ctx, total[1])
        return ([base], True) if base is not None else None
    pair = p.product_pair(ctx, radicand)
    if pair is not None and p.same_expr(pair[0], pair[1]):  # sqrt(v @ v), sqrt(np.dot(v, v))
        return [pair[0]], True
    terms = alg.signed_terms(radicand)
    bases = [square_base(ctx, t) for t, sign in terms if sign > 0]
    if len(terms) >= 2 and len(bases) == len(terms) and all(b is not None for b in bases):
        return bases, False  # type: ignore[return-value]
    return None


def _vector_norm(ctx: Context, call: ast.Call) -> bool:
    """True unless `ord` asks for a norm below the largest element (ord=0, -1, -inf): those do not bound v / norm."""
    order = call.args[1] if len(call.args) > 1 else next((k.value for k in call.keywords if k.arg == "ord"), None)
    if order is None or (isinstance(order, ast.Constant) and order.value in (None, "fro", "nuc")):
        return True
    if isinstance(order, ast.Attribute) and order.attr == "inf":
        return True
    value = p.constant_value(ctx, order)
    return value is not None and value >= 1
