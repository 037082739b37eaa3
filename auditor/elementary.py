"""Recognisers for elementary-function forms shared by the cancellation rules (squares, roots, signs)."""
from __future__ import annotations

import ast
from dataclasses import dataclass

from auditor import patterns as p
from auditor.algebra import Term, mult_factors, signed_terms
from auditor.rule import Context
from auditor.nodes import walk


@dataclass(frozen=True, slots=True)
class Operands:
    """The two sides of a difference `left - right` (or `left -= right`), as written and as valued."""

    left: ast.expr  #: value of the left side, seen through local variables
    right: ast.expr  #: value of the right side, seen through local variables
    left_written: ast.expr  #: the left side as it appears in the source
    right_written: ast.expr  #: the right side as it appears in the source
    aug: bool  #: True for `t -= v`: there is no expression node to replace


def difference_operands(ctx: Context, node: ast.AST) -> Operands | None:
    """Operands of `a - b`, or of `t -= b` where `t` was last assigned a value in this scope."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Sub):
        return Operands(origin_before(ctx, node.left, node), origin_before(ctx, node.right, node), node.left, node.right, False)
    if isinstance(node, ast.AugAssign) and isinstance(node.op, ast.Sub) and isinstance(node.target, ast.Name):
        before = origin_before(ctx, node.target, node)
        if before is node.target:
            return None
        return Operands(before, origin_before(ctx, node.value, node), node.target, node.value, True)
    return None


def origin_before(ctx: Context, expr: ast.expr, use: ast.AST) -> ast.expr:
    """`ctx.origin`, refusing a value from the very statement being evaluated (`a, b = b - a, a - b`)."""
    value = ctx.origin(expr)
    if value is not expr and any(anc is value for anc in ctx.ancestors(use)):
        return expr
    return value


def tokens(ctx: Context, expr: ast.AST) -> set[str]:
    """The variables an expression reads, with `obj.attr` and `arr[i]` as tokens of their own.

    `x[0]` and `x[1]`, or `self.a` and `self.b`, are different quantities, not one variable `x`.
    """
    out: set[str] = set()
    stack: list[ast.AST] = [expr]
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.Attribute, ast.Subscript)) and _variable_base(ctx, node):
            out.add(ast.dump(node))
        elif isinstance(node, ast.Name):
            if ctx.qualname(node) is None:
                out.add(node.id)
        else:
            stack.extend(ast.iter_child_nodes(node))
    return out


def _variable_base(ctx: Context, node: ast.AST) -> bool:
    while isinstance(node, (ast.Attribute, ast.Subscript)):
        node = node.value
    return not (isinstance(node, ast.Name) and ctx.qualname(node) is not None)


def related(ctx: Context, a: ast.AST, b: ast.AST) -> bool:
    """True when a and b are computed from the same variables, one set containing the other.

    `x + h` and `x`, `p` and `1 - p` are related; `f(x, c)` and `f(b, c)` share only a parameter.
    """
    ta, tb = tokens(ctx, a), tokens(ctx, b)
    return bool(ta & tb) and (ta <= tb or tb <= ta)


def stable_origin(ctx: Context, value: ast.expr, use: ast.AST) -> bool:
    """True when every name read by `value` still holds the same binding at `use`.

    A rewrite may copy `value` (found through a local variable) to the place of `use` only then.
    """
    scope = ctx.scope(use)
    flow = ctx.flow(scope)
    line, col = getattr(use, "lineno", 0), getattr(use, "col_offset", 0)
    for name in (n for n in walk(value) if isinstance(n, ast.Name)):
        if ctx.scope(name) is not scope:
            return False
        if flow.reaching(name.id, name.lineno, name.col_offset) is not flow.reaching(name.id, line, col):
            return False
    return True


def reads_variables(ctx: Context, expr: ast.AST) -> bool:
    """True when `expr` reads a variable; imported names (`math.pi`, `np`) are constants, not variables."""
    return any(isinstance(n, ast.Name) and ctx.qualname(n) is None for n in walk(expr))


def variables(ctx: Context, expr: ast.AST) -> set[str]:
    """The variable names `expr` reads (imported module and function names left out)."""
    return {n.id for n in walk(expr) if isinstance(n, ast.Name) and ctx.qualname(n) is None}


def square_base(ctx: Context, node: ast.AST) -> ast.expr | None:
    """x for `x**2`, `x*x`, `np.square(x)`, `pow(x, 2)`, `math.pow(x, 2)`; else None."""
    base = p.is_square(node)
    if base is not None:
        return base
    if not isinstance(node, ast.Call) or node.keywords:
        return None
    if ctx.family(node) == "square" and len(node.args) == 1:
        return node.args[0]
    builtin_pow = isinstance(node.func, ast.Name) and node.func.id == "pow" and "pow" not in ctx.imports.bindings
    if (builtin_pow or ctx.family(node) == "pow") and len(node.args) == 2 and p.is_number(node.args[1], 2):
        return node.args[0]
    return None


def sqrt_argument(ctx: Context, node: ast.AST) -> ast.expr | None:
    """a for `sqrt(a)` in any numeric library, `a ** 0.5` or `pow(a, 0.5)`; else None."""
    if isinstance(node, ast.Call) and ctx.family(node) == "sqrt":
        return p.single_arg(node)
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow) and p.is_number(node.right, 0.5):
        return node.left
    return None


def spelled_like(ctx: Context, module: str, func: str) -> tuple[str, tuple[str, ...]]:
    """`p.spelled`, but a star import (`from numpy import *`) lets the bare name stand."""
    if module in ctx.imports.star_modules and func not in ctx.imports.bindings:
        return func, ()
    return p.spelled(ctx, module, func)


#: numeric families whose value is never negative (for real arguments)
_NONNEGATIVE = ("abs", "sqrt", "exp", "exp2", "cosh", "hypot")


def is_nonnegative(ctx: Context, expr: ast.expr, depth: int = 4) -> bool:
    """True when `expr` cannot be negative: positive literals, abs/sqrt/exp/hypot, squares, their sums."""
    if depth <= 0:
        return False
    value = p.literal_number(expr)
    if value is not None:
        return isinstance(value, (int, float)) and value > 0
    if isinstance(expr, ast.Name):
        origin = ctx.origin(expr)
        return origin is not expr and is_nonnegative(ctx, origin, depth - 1)
    if isinstance(expr, ast.Call):
        builtin = isinstance(expr.func, ast.Name) and expr.func.id in ("abs", "len")
        return builtin or ctx.family(expr) in _NONNEGATIVE or square_base(ctx, expr) is not None
    if square_base(ctx, expr) is not None:
        return True
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Mult, ast.Div)):
        return is_nonnegative(ctx, expr.left, depth - 1) and is_nonnegative(ctx, expr.right, depth - 1)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Pow):  # 2.0**k, abs(x)**p
        return is_nonnegative(ctx, expr.left, depth - 1)
    return False


@dataclass(frozen=True, slots=True)
class RootSum:
    """`±y ± sqrt(y*y + rest)`: the quadratic formula's numerator, and `sqrt(x*x + 1) - x`."""

    other: ast.expr  #: y, as written in the sum
    other_sign: int  #: its sign in the sum (+1 or -1)
    root: ast.expr  #: the square-root term as written (a call, or a local holding it)
    root_sign: int
    radicand: ast.expr  #: the argument of the square root (through local variables)
    rest: tuple[Term, ...]  #: the radicand's terms other than y*y
    module: str  #: the library of the square root ('math', 'numpy', 'cmath' ...)


def root_sum(ctx: Context, node: ast.AST) -> RootSum | None:
    """Match a two-term sum of y and sqrt(y*y + rest), in either order and with any signs."""
    if not isinstance(node, (ast.BinOp, ast.UnaryOp)):
        return None
    terms = signed_terms(node)
    if len(terms) != 2:
        return None
    for (root, rs), (other, os_) in (terms, terms[::-1]):
        call = ctx.origin(root)
        radicand = sqrt_argument(ctx, call)
        if radicand is None or not reads_variables(ctx, other):
            continue
        radicand = ctx.origin(radicand)
        parts = signed_terms(radicand)
        square = next((i for i, (t, s) in enumerate(parts) if s > 0 and _squares(ctx, t, other)), None)
        if square is None or len(parts) < 2:
            continue
        rest = tuple(parts[:square] + parts[square + 1:])
        module = p.callee_module(ctx, call) or "math"
        return RootSum(other, os_, root, rs, radicand, rest, module)
    return None


def _squares(ctx: Context, term: ast.expr, base: ast.expr) -> bool:
    found = square_base(ctx, term)
    return found is not None and p.same_expr(found, base)


def is_discriminant(shape: RootSum) -> bool:
    """True when the radicand is b*b - 4*a*c in some spelling (a single rest term with a factor 4)."""
    if len(shape.rest) != 1:
        return False
    return any(p.is_number(f, 4) for f in mult_factors(shape.rest[0][0]))
