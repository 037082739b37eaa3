"""Which import statements a set of rewrites still needs: module-level bindings read with `ast`."""
from __future__ import annotations

import ast
from collections.abc import Iterable


def import_bindings(statement: str) -> dict[str, str] | None:
    """{'np': 'numpy'} for 'import numpy as np'; None unless it is one plain import statement."""
    try:
        body = ast.parse(statement).body
    except SyntaxError:
        return None
    if len(body) != 1 or not isinstance(body[0], (ast.Import, ast.ImportFrom)):
        return None
    return _bindings_of(body[0])


def _bindings_of(node: ast.Import | ast.ImportFrom) -> dict[str, str]:
    if isinstance(node, ast.Import):
        out: dict[str, str] = {}
        for a in node.names:
            head = a.name.partition(".")[0]
            out[a.asname or head] = a.name if a.asname else head
            if not a.asname and a.name != head:
                out[a.name] = a.name  # `import scipy.special` also loads the submodule: remember it
        return out
    base = "." * node.level + (node.module or "")
    return {(a.asname or a.name): f"{base}.{a.name}" for a in node.names if a.name != "*"}


def module_bindings(tree: ast.Module) -> dict[str, str]:
    """Names bound by imports at module level (inside top-level if/try too, not in functions)."""
    out: dict[str, str] = {}
    stack: list[ast.AST] = [tree]
    while stack:
        for child in ast.iter_child_nodes(stack.pop()):
            if isinstance(child, (ast.Import, ast.ImportFrom)):
                for local, qual in _bindings_of(child).items():
                    out.setdefault(local, qual)
            elif isinstance(child, ast.stmt) and not isinstance(
                child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)
            ):
                stack.append(child)
    return out


def import_conflict(imports: Iterable[str], bound: dict[str, str]) -> str:
    """Why these imports cannot be added next to `bound` (they would rebind a name), or ""."""
    for statement in imports:
        names = import_bindings(statement)
        if names is None:
            return f"it asks for an unusable import {statement!r}"
        for local, qual in names.items():
            if bound.get(local, qual) != qual:
                return f"{statement!r} would rebind {local!r}, which means {bound[local]!r} here"
    return ""


def needed_imports(requests: Iterable[Iterable[str]], bound: dict[str, str]) -> list[str]:
    """The requested import statements not yet bound, each once, in request order."""
    needed: list[str] = []
    have = dict(bound)
    for imports in requests:
        for statement in imports:
            names = import_bindings(statement) or {}
            if any(have.get(local) != qual for local, qual in names.items()):
                needed.append(statement.strip())
                have.update(names)
    return needed
