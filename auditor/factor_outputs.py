"""Which output of a matrix factorisation a value is: unitary factors and eigen- or singular vectors."""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.copies import stored_into
from auditor.rule import Context

#: tuple positions holding a factor with orthonormal columns (numpy.linalg / scipy.linalg API):
#: U and Vh of svd, Q of qr, the eigenvectors of a standard eigh, Z of schur
_UNITARY = {"svd": (0, 2), "qr": (0,), "eigh": (1,), "schur": (1,)}
#: tuple positions holding eigen- or singular vectors, each defined only up to its sign (or phase)
_VECTORS = {"svd": (0, 2), "eigh": (1,), "eig": (1, 2)}
#: named fields of numpy's result tuples (SVDResult, QRResult, EighResult, EigResult)
_FIELDS = {"U": 0, "Vh": 2, "Q": 0, "eigenvectors": 1}
#: modules whose factorisations follow the numpy / scipy tuple layout
_MODULES = ("numpy.linalg", "scipy.linalg", "jax.numpy.linalg", "torch.linalg", "cupy.linalg")
#: qr modes that return Q first (numpy 'reduced' / 'complete', scipy 'full' / 'economic')
_Q_MODES = ("reduced", "complete", "full", "economic")


def _keyword(call: ast.Call, name: str) -> ast.expr | None:
    return next((kw.value for kw in call.keywords if kw.arg == name), None)


def _returns_tuple(ctx: Context, call: ast.Call) -> str | None:
    """The factorisation's family when `call` returns its full tuple of factors as numpy/scipy document it."""
    family = ctx.family(call)
    if family not in ("svd", "qr", "eigh", "eig", "schur") or p.callee_module(ctx, call) not in _MODULES:
        return None
    if family == "svd":
        flag = _keyword(call, "compute_uv") or (call.args[2] if len(call.args) > 2 else None)
        return family if flag is None or isinstance(flag, ast.Constant) and flag.value is True else None
    if family == "qr":
        mode = _keyword(call, "mode")
        return family if mode is None or isinstance(mode, ast.Constant) and mode.value in _Q_MODES else None
    if family == "eigh":
        only = _keyword(call, "eigvals_only")
        return family if only is None or isinstance(only, ast.Constant) and only.value is False else None
    return family


def _standard_eigh(ctx: Context, call: ast.Call) -> bool:
    """True unless a second matrix makes eigh generalised (scipy's `b`): its vectors are then B-orthonormal."""
    if _keyword(call, "b") is not None:
        return False
    second = call.args[1] if len(call.args) > 1 else None
    return second is None or p.callee_module(ctx, call) != "scipy.linalg" \
        or isinstance(second, ast.Constant) and second.value is None


def _unpacked(ctx: Context, name: ast.Name) -> tuple[ast.expr, int] | None:
    """(value, position) when `name` is bound by `a, b, c = value` and nothing rebinds or stores into it."""
    binding = ctx.binding(name)
    if binding is None or binding.kind != "unpack" or stored_into(ctx, name, binding):
        return None
    if len(ctx.flow(ctx.scope(name)).of(name.id)) > 1 and ctx.enclosing_loops(name):
        return None  # rebound inside a loop: the reaching value is ambiguous
    stmt = binding.stmt
    if not (isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], (ast.Tuple, ast.List))):
        return None
    names = [t.id if isinstance(t, ast.Name) else None for t in stmt.targets[0].elts]
    return (stmt.value, names.index(name.id)) if name.id in names else None


def factor_output(ctx: Context, expr: ast.expr, depth: int = 4) -> tuple[str, int, ast.Call] | None:
    """(family, position, call) when `expr` holds item `position` of the factor tuple a factorisation returns:
    `u, s, vh = svd(a)`, `svd(a)[2]`, `eigh(a).eigenvectors`, seen through locals."""
    if depth <= 0:
        return None
    holder: ast.expr | None = None
    position: int | None = None
    if isinstance(expr, ast.Name):
        origin = ctx.origin(expr)
        if origin is not expr:
            return factor_output(ctx, origin, depth - 1)
        found = _unpacked(ctx, expr)
        if found is not None:
            holder, position = found
    elif isinstance(expr, ast.Subscript) and isinstance(expr.slice, ast.Constant) and type(expr.slice.value) is int:
        holder, position = expr.value, expr.slice.value
    elif isinstance(expr, ast.Attribute) and expr.attr in _FIELDS:
        holder, position = expr.value, _FIELDS[expr.attr]
    call = ctx.origin(holder) if holder is not None else None
    if not isinstance(call, ast.Call) or position is None or position < 0:
        return None
    family = _returns_tuple(ctx, call)
    return (family, position, call) if family is not None else None


def unitary_factor(ctx: Context, expr: ast.expr, depth: int = 4) -> bool:
    """True when `expr` is a unitary (orthogonal) factor a factorisation returned, its (conjugate) transpose,
    or a product of such: a matrix with condition number 1 whenever it is square."""
    if depth <= 0:
        return False
    base = p.transposed(ctx, expr)
    if base is not None:
        return unitary_factor(ctx, base, depth - 1)
    factors = p.product_factors(ctx, ctx.origin(expr))
    if factors is not None:
        return all(unitary_factor(ctx, f, depth - 1) for f in factors)
    found = factor_output(ctx, expr)
    if found is None:
        return False
    family, position, call = found
    return position in _UNITARY.get(family, ()) and (family != "eigh" or _standard_eigh(ctx, call))


def _scale(ctx: Context, expr: ast.expr) -> bool:
    """True for a divisor that scales a whole vector alike: a literal or a norm call (`np.linalg.norm(v)`)."""
    origin = ctx.origin(expr)
    return p.literal_number(origin) is not None or isinstance(origin, ast.Call) and ctx.family(origin) == "norm"


def eigenvector_source(ctx: Context, expr: ast.expr) -> ast.expr | None:
    """The factor matrix when `expr` is that matrix, a row or column of it (`w[:, 0]`, `w[0]`), or such a
    vector divided by its norm or a literal; eigen- and singular vectors are defined up to sign only."""
    current = ctx.origin(expr)
    for _ in range(4):
        if isinstance(current, ast.BinOp) and isinstance(current.op, ast.Div) and _scale(ctx, current.right):
            current = ctx.origin(current.left)  # a normalisation keeps the direction
        elif isinstance(current, ast.Subscript) and factor_output(ctx, current) is None:
            current = ctx.origin(current.value)
        else:
            break
    found = factor_output(ctx, current)
    if found is None or found[1] not in _VECTORS.get(found[0], ()):
        return None
    return current
