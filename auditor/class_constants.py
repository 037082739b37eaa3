"""Constants the code sets itself: literal numbers and lists of them, seen through locals and class attributes.

`cls.xx = [0.95, 1.0, 1.1]` in `setup_class` (or `xx = ...` in the class body, or `self.xx = ...`
in `__init__`) makes `self.xx` in any method of that class a known constant, provided nothing else
in the file stores into an attribute of that name: a second store (another method, a subclass,
a mutation from outside) could hold anything.
"""
from __future__ import annotations

import ast

from auditor.nodes import walk
from auditor.rule import Context

#: at most this many numbers in a literal collection (a longer one is data, not a few chosen points)
MAX_NUMBERS = 64


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


def literal_numbers(ctx: Context, expr: ast.expr) -> tuple[float, ...] | None:
    """The numbers of a constant the code sets (a literal, a list or `np.array` of them, a grid, a
    local or a class attribute holding one), at most MAX_NUMBERS of them; None otherwise. The
    values themselves come from `auditor.values`, which reads class attributes through
    `class_attribute_value` below."""
    from auditor.values import known_values  # values reads class attributes from this module

    found = known_values(ctx, expr)
    return found if found is not None and len(found) <= MAX_NUMBERS else None
