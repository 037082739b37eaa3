"""Names a package imports from itself (`from .matrix_utilities import rotation_matrix`), matched by the file's folders.

The import table leaves relative imports out (they name project code). A library's own modules use
them for its documented functions, so a rule that knows such a function by its qualified name can
still recognise it: the folders above the file spell the package, with no file system access.
"""
from __future__ import annotations

import ast
from pathlib import PurePath

from auditor.rule import Context


def _relative_source(ctx: Context, name: str) -> tuple[int, list[str]] | None:
    """(level, dotted parts of the imported object) for the one module-level relative import binding `name`."""
    found = []
    for stmt in ctx.tree.body:
        if isinstance(stmt, ast.ImportFrom) and stmt.level:
            for alias in stmt.names:
                if (alias.asname or alias.name) == name:
                    found.append((stmt.level, [*(stmt.module or "").split("."), alias.name]))
        elif isinstance(stmt, (ast.Import, ast.ImportFrom)) and any((a.asname or a.name) == name for a in stmt.names):
            return None  # also bound by another import: which one reaches the call is not known here
    if len(found) != 1:
        return None
    level, parts = found[0]
    return level, [part for part in parts if part]


def relative_qualname(ctx: Context, node: ast.expr, known: frozenset[str]) -> str | None:
    """The name in `known` that `node` (a plain name imported relatively) refers to, judged by the file's
    folders; None when it is not such a name or matches none."""
    if not isinstance(node, ast.Name) or ctx.flow(ctx.tree).of(node.id) or ctx.flow(ctx.scope(node)).of(node.id):
        return None
    source = _relative_source(ctx, node.id)
    if source is None:
        return None
    level, tail = source
    folders = list(PurePath(ctx.path).parent.parts)
    package = folders[: len(folders) - (level - 1)] if level > 1 else folders
    for qualname in known:
        parts = qualname.split(".")
        prefix = parts[: len(parts) - len(tail)]
        if prefix and parts[len(prefix):] == tail and package[-len(prefix):] == prefix:
            return qualname
    return None
