"""Constants the code sets itself: literal numbers and lists of them, seen through locals and class attributes.

`cls.xx = [0.95, 1.0, 1.1]` in `setup_class` (or `xx = ...` in the class body, or `self.xx = ...`
in `__init__`) makes `self.xx` in any method of that class a known constant, provided nothing else
in the file stores into an attribute of that name: a second store (another method, a subclass,
a mutation from outside) could hold anything.
"""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.nodes import walk
from auditor.rule import Context

#: at most this many numbers in a literal collection (a longer one is data, not a few chosen points)
MAX_NUMBERS = 64
#: array constructors that keep the numbers of a literal list (numpy API)
_ARRAY_FAMILIES = frozenset({"array", "asarray", "asanyarray"})


def _enclosing_class(ctx: Context, node: ast.AST) -> ast.ClassDef | None:
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.ClassDef):
            return anc
    return None


def _receiver_is_instance(ctx: Context, attr: ast.Attribute) -> bool:
    """`self.x` / `cls.x` inside a method: the receiver is the method's first parameter."""
    if not isinstance(attr.value, ast.Name):
        return False
    scope = ctx.scope(attr)
    if not isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef)):
        return False
    params = [*scope.args.posonlyargs, *scope.args.args]
    return bool(params) and params[0].arg == attr.value.id and isinstance(ctx.parent(scope), ast.ClassDef)


def _stores(ctx: Context, name: str) -> list[tuple[ast.AST, ast.expr | None]]:
    """Every store into an attribute `name` in the file, and every class-body assignment to `name`,
    with the value assigned when it is a plain single-target assignment."""
    out: list[tuple[ast.AST, ast.expr | None]] = []
    for node in walk(ctx.tree):
        if isinstance(node, ast.Attribute) and node.attr == name and isinstance(node.ctx, (ast.Store, ast.Del)):
            parent = ctx.parent(node)
            plain = isinstance(parent, ast.Assign) and parent.targets == [node]
            out.append((node, parent.value if isinstance(parent, ast.Assign) and plain else None))
        elif isinstance(node, ast.ClassDef):
            out.extend(_class_body_stores(node, name))
    return out


def _class_body_stores(cls: ast.ClassDef, name: str) -> list[tuple[ast.AST, ast.expr | None]]:
    out: list[tuple[ast.AST, ast.expr | None]] = []
    for stmt in cls.body:
        targets: list[ast.expr] = []
        if isinstance(stmt, ast.Assign):
            targets = stmt.targets
        elif isinstance(stmt, (ast.AnnAssign, ast.AugAssign)):
            targets = [stmt.target]
        for t in targets:
            if any(isinstance(n, ast.Name) and n.id == name for n in walk(t)):
                plain = isinstance(stmt, ast.Assign) and stmt.targets == [t] and isinstance(t, ast.Name)
                out.append((t, stmt.value if isinstance(stmt, ast.Assign) and plain else None))
    return out


def class_attribute_value(ctx: Context, attr: ast.Attribute) -> ast.expr | None:
    """The value of `self.name` / `cls.name` when the file assigns that attribute exactly once,
    in the same class (its body or one of its methods through self/cls); else None."""
    if not isinstance(attr.ctx, ast.Load) or not _receiver_is_instance(ctx, attr):
        return None
    owner = _enclosing_class(ctx, attr)
    stores = ctx.cached("class-attr-stores:" + attr.attr, ctx.tree, lambda: _stores(ctx, attr.attr))
    if owner is None or len(stores) != 1:
        return None
    target, value = stores[0]
    if value is None or _enclosing_class(ctx, target) is not owner:
        return None
    if isinstance(target, ast.Attribute) and not _receiver_is_instance(ctx, target):
        return None
    return value


def literal_numbers(ctx: Context, expr: ast.expr, depth: int = 4) -> tuple[float, ...] | None:
    """The numbers of a constant the code sets: a literal (or constant expression), a list or tuple of
    them, `np.array([...])` of them; seen through locals and class attributes. None otherwise."""
    if depth <= 0:
        return None
    expr = ctx.origin(expr)
    if isinstance(expr, ast.Attribute):
        value = class_attribute_value(ctx, expr)
        return None if value is None else literal_numbers(ctx, value, depth - 1)
    if isinstance(expr, (ast.List, ast.Tuple)):
        if not 0 < len(expr.elts) <= MAX_NUMBERS:
            return None
        items = [literal_numbers(ctx, e, depth - 1) for e in expr.elts]
        if any(i is None for i in items):
            return None
        return tuple(x for i in items if i is not None for x in i)
    if isinstance(expr, ast.Call) and ctx.family(expr) in _ARRAY_FAMILIES and len(expr.args) == 1:
        return literal_numbers(ctx, expr.args[0], depth - 1)
    number = _fold(ctx, expr, depth)
    return None if number is None else (number,)


def _fold(ctx: Context, expr: ast.expr, depth: int) -> float | None:
    """A literal number or arithmetic on literals and locals holding them; a parameter is never a constant
    here (its default says nothing about what callers pass)."""
    if depth <= 0:
        return None
    expr = ctx.origin(expr)
    value = p.literal_number(expr)
    if value is not None:
        return float(value) if not isinstance(value, complex) else None
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.Div)):
        a, b = _fold(ctx, expr.left, depth - 1), _fold(ctx, expr.right, depth - 1)
        if a is None or b is None or (isinstance(expr.op, ast.Div) and b == 0):
            return None
        if isinstance(expr.op, ast.Div):
            return a / b
        return a + b if isinstance(expr.op, ast.Add) else a - b if isinstance(expr.op, ast.Sub) else a * b
    return None
