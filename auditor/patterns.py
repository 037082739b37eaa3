"""Shared AST predicates the rules use ("is this the literal 1?", "what names does it read?")."""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor.rule import Context

Number = int | float | complex


def literal_number(node: ast.AST) -> Number | None:
    """The value of a numeric literal, including a leading unary minus; else None."""
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float, complex)):
        if isinstance(node.value, bool):
            return None
        return node.value
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = literal_number(node.operand)
        if inner is None:
            return None
        return -inner if isinstance(node.op, ast.USub) else inner
    return None


def is_number(node: ast.AST, value: float) -> bool:
    """True for a literal equal to `value` (1, 1.0, 1e0 ...)."""
    v = literal_number(node)
    return v is not None and v == value


def is_one(node: ast.AST) -> bool:
    return is_number(node, 1)


def is_integer_literal(node: ast.AST) -> bool:
    v = literal_number(node)
    return isinstance(v, int)


def names_in(expr: ast.AST) -> set[str]:
    """Free variable names read by an expression (attribute bases included)."""
    return {n.id for n in ast.walk(expr) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load)}


def is_negated(node: ast.AST) -> bool:
    """`-x` (a unary minus on a non-literal)."""
    return isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub)


def strip_negation(node: ast.expr) -> tuple[ast.expr, bool]:
    """(-x) -> (x, True); x -> (x, False)."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return node.operand, True
    return node, False


def call_args(node: ast.AST) -> list[ast.expr]:
    """Positional arguments of a call, else []."""
    return list(node.args) if isinstance(node, ast.Call) else []


def single_arg(node: ast.AST) -> ast.expr | None:
    """The lone positional argument of a call with no starred args, else None."""
    if isinstance(node, ast.Call) and len(node.args) == 1 and not isinstance(node.args[0], ast.Starred):
        return node.args[0]
    return None


def is_sub(node: ast.AST) -> bool:
    return isinstance(node, ast.BinOp) and isinstance(node.op, ast.Sub)


def is_add(node: ast.AST) -> bool:
    return isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add)


def is_square(node: ast.AST) -> ast.expr | None:
    """`x**2` or `x*x` (same text twice) -> x; else None."""
    if isinstance(node, ast.BinOp):
        if isinstance(node.op, ast.Pow) and is_number(node.right, 2):
            return node.left
        if isinstance(node.op, ast.Mult) and same_expr(node.left, node.right):
            return node.left
    return None


def same_expr(a: ast.AST, b: ast.AST) -> bool:
    """Structural equality of two expressions, ignoring positions."""
    return ast.dump(a) == ast.dump(b)


def text(ctx: Context, node: ast.AST) -> str:
    """The source text of `node` (falls back to ast.unparse)."""
    segment = ast.get_source_segment(ctx.source, node)
    return segment if segment is not None else ast.unparse(node)


def operand_text(ctx: Context, node: ast.AST) -> str:
    """Source text of a node, parenthesised when it would bind loosely inside a call or product."""
    s = text(ctx, node)
    if isinstance(node, (ast.BinOp, ast.BoolOp, ast.IfExp, ast.Compare, ast.Lambda, ast.UnaryOp)):
        return f"({s})" if not (s.startswith("(") and s.endswith(")")) else s
    return s


def sum_terms(node: ast.expr) -> Iterator[tuple[ast.expr, bool]]:
    """Flatten `a + b - c` into (a, False), (b, False), (c, True): (term, negated)."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        yield from sum_terms(node.left)
        for term, neg in sum_terms(node.right):
            yield term, neg != isinstance(node.op, ast.Sub)
    else:
        yield node, False


def module_alias(ctx: Context, module: str) -> str | None:
    """The local name under which `module` is imported (`np` for numpy), else None."""
    for local, qual in ctx.imports.bindings.items():
        if qual == module:
            return local
    return None


def spelled(ctx: Context, module: str, func: str) -> tuple[str, tuple[str, ...]]:
    """How to spell `module.func` in this file, and the import it needs if any.

    Uses an existing alias (`np.expm1`) or a from-import (`expm1`), else adds `import module`.
    """
    for local, qual in ctx.imports.bindings.items():
        if qual == f"{module}.{func}":
            return local, ()
    alias = module_alias(ctx, module)
    if alias is not None:
        return f"{alias}.{func}", ()
    return f"{module}.{func}", (f"import {module}",)


def callee_module(ctx: Context, call: ast.AST) -> str | None:
    """'numpy' for `np.exp(x)`, 'math' for `exp(x)` after `from math import exp`."""
    if not isinstance(call, ast.Call):
        return None
    q = ctx.qualname(call.func)
    if q is None or "." not in q:
        return None
    return q.rpartition(".")[0]


def is_integer_valued(ctx: Context, expr: ast.AST) -> bool:
    """Counts, sizes and indices: int literals, len(), .size/.shape/.ndim, int(), range loop variables."""
    if is_integer_literal(expr):
        return True
    if isinstance(expr, ast.Call) and isinstance(expr.func, ast.Name) and expr.func.id in ("len", "int", "round", "ord"):
        return True
    if isinstance(expr, ast.Attribute) and expr.attr in ("size", "ndim", "shape", "nbytes", "itemsize"):
        return True
    if isinstance(expr, ast.Subscript) and isinstance(expr.value, ast.Attribute) and expr.value.attr == "shape":
        return True
    if isinstance(expr, ast.Name):
        b = ctx.binding(expr)
        if b is not None and b.kind == "loop" and isinstance(b.value, ast.Call):
            if isinstance(b.value.func, ast.Name) and b.value.func.id in ("range", "enumerate"):
                return True
        if b is not None and b.kind in ("assign",) and b.value is not None and b.value is not expr:
            return is_integer_valued(ctx, b.value) if not isinstance(b.value, ast.Name) else False
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.FloorDiv, ast.Mod)):
        return is_integer_valued(ctx, expr.left) and is_integer_valued(ctx, expr.right)
    return False


def has_free_names(expr: ast.AST) -> bool:
    """True when an expression reads some variable (it is not a constant)."""
    return any(isinstance(n, ast.Name) for n in ast.walk(expr))
