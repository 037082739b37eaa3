"""Import-alias resolution: turn a Name or Attribute into the qualified name it denotes."""
from __future__ import annotations

import ast
from dataclasses import dataclass, field

from auditor.nodes import children
from auditor.names import FAMILIES, NUMERIC_MODULES, SYNONYMS, family_of


@dataclass(slots=True)
class ImportTable:
    """What each imported name in one file stands for (best effort, file-wide)."""

    bindings: dict[str, str] = field(default_factory=dict)  #: local name -> qualified name
    star_modules: list[str] = field(default_factory=list)  #: modules imported with `*`
    modules: set[str] = field(default_factory=set)  #: every module imported, dotted

    def add(self, node: ast.Import | ast.ImportFrom) -> None:
        """Record one import statement."""
        if isinstance(node, ast.Import):
            for alias in node.names:
                self.modules.add(alias.name)
                if alias.asname:
                    self.bindings[alias.asname] = alias.name
                else:
                    head = alias.name.partition(".")[0]
                    self.bindings.setdefault(head, head)
            return
        if node.level or not node.module:
            return  # relative imports name project code, never a numeric library
        self.modules.add(node.module)
        for alias in node.names:
            if alias.name == "*":
                self.star_modules.append(node.module)
            else:
                self.bindings[alias.asname or alias.name] = f"{node.module}.{alias.name}"
                self.modules.add(f"{node.module}.{alias.name}")

    def qualname(self, node: ast.AST) -> str | None:
        """'np.exp' -> 'numpy.exp' when `import numpy as np`; None when unknown."""
        parts: list[str] = []
        while isinstance(node, ast.Attribute):
            parts.append(node.attr)
            node = node.value
        if not isinstance(node, ast.Name):
            return None
        base = self.bindings.get(node.id)
        if base is None:
            base = self._star_lookup(node.id)
            if base is None:
                return None
        parts.append(base)
        return ".".join(reversed(parts))

    def _star_lookup(self, name: str) -> str | None:
        canonical = SYNONYMS.get(name, name)
        for module in reversed(self.star_modules):
            if module in NUMERIC_MODULES and canonical in FAMILIES:
                return f"{module}.{name}"
        return None

    def imports_any(self, *prefixes: str) -> bool:
        """True when some module under one of `prefixes` is imported."""
        return any(m == p or m.startswith(p + ".") for m in self.modules for p in prefixes)


def collect_imports(tree: ast.Module) -> ImportTable:
    """Scan the statements of a module (and nested blocks) for imports."""
    table = ImportTable()
    stack: list[ast.AST] = [tree]
    while stack:
        node = stack.pop()
        for child in children(node):
            if isinstance(child, (ast.Import, ast.ImportFrom)):
                table.add(child)
            elif isinstance(child, ast.stmt):
                stack.append(child)
    return table


def family(table: ImportTable, func: ast.AST) -> str | None:
    """The canonical numeric family of a callee expression, e.g. `np.exp` -> 'exp'."""
    return family_of(table.qualname(func))
