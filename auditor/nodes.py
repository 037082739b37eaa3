"""Fast child iteration over `ast` nodes (which fields can hold nodes, per node class)."""
from __future__ import annotations

import ast
from collections.abc import Iterator

#: Fields that never hold child nodes worth visiting: names, flags, and the shared singleton
#: context and operator nodes (setting a parent on a shared singleton would be wrong).
_LEAF_FIELDS = frozenset(
    {"ctx", "op", "id", "attr", "arg", "name", "names", "level", "module", "kind", "conversion",
     "is_async", "type_comment", "simple", "type_ignores"}
)


def _child_fields() -> dict[type, tuple[str, ...]]:
    table: dict[type, tuple[str, ...]] = {}
    for name in dir(ast):
        cls = getattr(ast, name)
        if isinstance(cls, type) and issubclass(cls, ast.AST):
            table[cls] = () if cls is ast.Constant else tuple(f for f in cls._fields if f not in _LEAF_FIELDS)
    return table


CHILD_FIELDS = _child_fields()


def children(node: ast.AST) -> Iterator[ast.AST]:
    """Child nodes worth visiting (no contexts, operators or names), like ast.iter_child_nodes."""
    for name in CHILD_FIELDS.get(type(node), ()):
        value = getattr(node, name, None)
        if type(value) is list:
            for item in value:
                if item is not None and type(item) is not str:
                    yield item
        elif value is not None:
            yield value


def walk(node: ast.AST) -> Iterator[ast.AST]:
    """Every node under `node` (itself included), like ast.walk but without contexts, operators
    and import aliases, and several times faster. Check `node.op` rather than looking for
    operator nodes in the walk."""
    stack = [node]
    pop, push, fields = stack.pop, stack.append, CHILD_FIELDS
    while stack:
        current = pop()
        yield current
        for name in fields.get(type(current), ()):
            value = getattr(current, name, None)
            if type(value) is list:
                for item in value:
                    if item is not None and type(item) is not str:
                        push(item)
            elif value is not None:
                push(value)


def link_parents(tree: ast.AST) -> dict[int, ast.AST]:
    """id(child) -> parent for every node under `tree` (no attributes set on the nodes)."""
    parents: dict[int, ast.AST] = {}
    for node in walk(tree):
        for child in children(node):
            parents[id(child)] = node
    return parents
