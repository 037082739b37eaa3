"""The rule API: what a rule declares, what it yields, and the per-file facts it is given."""
from __future__ import annotations

import ast
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any, ClassVar, TypeVar

from auditor.flow import Binding, ScopeFlow, analyse_scope
from auditor.model import Severity
from auditor.names import family_of
from auditor.nodes import link_parents
from auditor.resolve import ImportTable, collect_imports

T = TypeVar("T")
_FUNCTIONS = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)
_NEWLINE = re.compile(r"\r\n|\r|\n")  # the line ends the tokenizer counts (not form feeds)


@dataclass(frozen=True, slots=True)
class Hit:
    """What a rule's `check` yields; the engine adds path, span and snippet."""

    node: ast.AST  #: the flagged node (its span is reported)
    message: str  #: consequence and fix in one sentence
    severity: Severity | None = None  #: overrides the rule's default when set
    rewrite: str | None = None  #: replacement source text for the node, if a stable form exists
    imports: tuple[str, ...] = ()  #: imports the rewrite needs, e.g. ("import math",)
    #: set when the rewrite changes what the code computes (a different test, a different step):
    #: it is shown as advice and never verified or applied
    advice: str = ""


@dataclass(frozen=True, slots=True)
class Example:
    """A snippet the tests run: `flagged` says whether the rule must fire on it."""

    code: str
    flagged: bool
    rewrite: str | None = None  #: expected rewrite text, when the rule offers one
    inputs: dict[str, float] = field(default_factory=dict)  #: where measuring shows the gain
    note: str = ""


def text_mentions(source: str, words: tuple[str, ...]) -> bool:
    """True when `source` contains one of `words` (identifiers as whole words)."""
    return any(_has_word(source, w) if w.isidentifier() else w in source for w in words)


def _has_word(source: str, word: str) -> bool:
    """`word` occurs not inside a longer identifier (str.find is far cheaper than a regex here)."""
    start, n, end = 0, len(word), len(source)
    while True:
        i = source.find(word, start)
        if i < 0:
            return False
        before = source[i - 1] if i else " "
        after = source[i + n] if i + n < end else " "
        if not (before.isalnum() or before == "_") and not (after.isalnum() or after == "_"):
            return True
        start = i + 1


class Rule:
    """Base of every rule in `rules/`; subclasses set the class attributes and `check`."""

    id: ClassVar[str]
    title: ClassVar[str]
    severity: ClassVar[Severity]
    summary: ClassVar[str]
    node_types: ClassVar[tuple[type[ast.AST], ...]]
    #: published method behind the fix, with its source ("from memory" where recalled)
    method: ClassVar[str] = ""
    #: rewrite template in `str.format` syntax, e.g. "math.expm1({x})", or "" when none
    rewrite_template: ClassVar[str] = ""
    examples: ClassVar[tuple[Example, ...]]
    rationale: ClassVar[str] = ""  #: filled by the catalog from the module docstring
    #: words one of which a file must spell for the rule to run there (e.g. ("det",)): a sound
    #: pre-filter that spares the per-node work in files the rule cannot concern; () runs always
    requires: ClassVar[tuple[str, ...]] = ()

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        raise NotImplementedError


class Context:
    """Facts about one file, computed once and shared by every rule."""

    def __init__(self, tree: ast.Module, path: str, source: str, parents: dict[int, ast.AST] | None = None) -> None:
        self.tree = tree
        self._parents = parents if parents is not None else link_parents(tree)
        self._scopes: dict[int, ast.AST] = {}
        self._mentions: dict[Any, bool] = {}
        self.path = path
        self.source = source
        self._imports: ImportTable | None = None
        self._flows: dict[int, ScopeFlow] = {}
        self._values: dict[int, ast.expr | None] = {}
        self._memo: dict[tuple[str, int], Any] = {}
        self._qualnames: dict[int, tuple[ast.AST, str | None]] = {}
        self._families: dict[int, tuple[ast.AST, str | None]] = {}
        self._line_starts: list[int] | None = None
        self._ascii = True

    def cached(self, kind: str, node: ast.AST, compute: Callable[[], T]) -> T:
        """Compute a fact about `node` once per file and share it with every rule.

        Rules and shared helpers use this for anything costlier than a glance at one node
        (e.g. the updates inside a loop), so that no rule re-walks what another already did.
        """
        key = (kind, id(node))
        if key not in self._memo:
            self._memo[key] = (node, compute())  # keep node alive so its id stays unique
        return self._memo[key][1]  # type: ignore[no-any-return]

    def segment(self, node: ast.AST) -> str:
        """Source text of `node` (like ast.get_source_segment, without re-splitting the file)."""
        if self._line_starts is None:
            self._ascii = self.source.isascii()
            starts = [0]
            for match in _NEWLINE.finditer(self.source):
                starts.append(match.end())
            self._line_starts = starts
        try:
            first, last = node.lineno, node.end_lineno  # type: ignore[attr-defined]
            col, end_col = node.col_offset, node.end_col_offset  # type: ignore[attr-defined]
        except AttributeError:
            return ""
        if last is None or end_col is None:
            return ""
        starts = self._line_starts
        if first > len(starts) or last > len(starts):
            return ""
        if not self._ascii:  # ast columns are UTF-8 byte offsets: convert on the two end lines only
            col = self._char_column(first, col)
            end_col = self._char_column(last, end_col)
        return self.source[starts[first - 1] + col : starts[last - 1] + end_col]

    def _char_column(self, line: int, byte_col: int) -> int:
        starts = self._line_starts or [0]
        start = starts[line - 1]
        end = starts[line] if line < len(starts) else len(self.source)
        return len(self.source[start:end].encode("utf-8")[:byte_col].decode("utf-8", "replace"))

    def mentions(self, *words: str) -> bool:
        """True when the file's text contains one of `words` (as whole words when they are
        identifiers, e.g. `det` but not `determine`), memoised per file.

        A sound pre-filter, never a detector: a rule about `det` cannot fire in a file whose text
        never spells `det`, whatever the aliases. Detection itself stays on the AST.
        """
        known = self._mentions
        found = known.get(words)
        if found is None:
            found = known[words] = text_mentions(self.source, words)
        return found

    def matches(self, pattern: str) -> bool:
        """True when the regular expression `pattern` occurs in the file's text (memoised)."""
        known = self._mentions
        if pattern not in known:
            known[pattern] = re.search(pattern, self.source) is not None
        return known[pattern]

    # -- structure -------------------------------------------------------
    def parent(self, node: ast.AST) -> ast.AST | None:
        """The syntactic parent (recorded by the engine's walk)."""
        return self._parents.get(id(node))

    def ancestors(self, node: ast.AST) -> Iterator[ast.AST]:
        current = self.parent(node)
        while current is not None:
            yield current
            current = self.parent(current)

    def scope(self, node: ast.AST) -> ast.AST:
        """The enclosing function (or lambda), else the module; memoised along the path walked."""
        memo, parents = self._scopes, self._parents
        path: list[ast.AST] = []
        current, result = node, None
        while result is None:
            result = memo.get(id(current))
            if result is not None:
                break
            parent = parents.get(id(current))
            if parent is None:
                result = self.tree
                if current is not self.tree:
                    path = []  # a node outside the tree (made by a rule): do not memoise its id
                break
            path.append(current)
            if isinstance(parent, _FUNCTIONS):
                result = parent
            current = parent
        for visited in path:
            memo[id(visited)] = result
        return result

    def enclosing_loops(self, node: ast.AST) -> list[ast.For | ast.While]:
        """Loops around `node` inside its scope, innermost first."""
        loops: list[ast.For | ast.While] = []
        for anc in self.ancestors(node):
            if isinstance(anc, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
                break
            if isinstance(anc, (ast.For, ast.While)):
                loops.append(anc)
        return loops

    # -- names -----------------------------------------------------------
    @property
    def imports(self) -> ImportTable:
        if self._imports is None:
            self._imports = collect_imports(self.tree)
        return self._imports

    def qualname(self, node: ast.AST) -> str | None:
        """'np.linalg.inv' -> 'numpy.linalg.inv' under `import numpy as np` (memoised per node)."""
        key = id(node)
        names = self._qualnames
        if key not in names:
            names[key] = (node, self.imports.qualname(node))  # keep node alive so its id stays unique
        return names[key][1]

    def family(self, node: ast.AST) -> str | None:
        """Canonical numeric family of a call (or callee): `np.exp(x)` -> 'exp' (memoised per node)."""
        key = id(node)
        known = self._families.get(key)
        if known is not None:
            return known[1]
        callee = node.func if isinstance(node, ast.Call) else node
        result = family_of(self.qualname(callee)) if isinstance(callee, (ast.Name, ast.Attribute)) else None
        self._families[key] = (node, result)  # keep node alive so its id stays unique
        return result

    def is_call(self, node: ast.AST, *families: str) -> bool:
        """True when `node` calls a numeric function of one of `families`."""
        return isinstance(node, ast.Call) and self.family(node) in families

    # -- data flow -------------------------------------------------------
    def flow(self, scope: ast.AST) -> ScopeFlow:
        try:
            return self._flows[id(scope)]
        except KeyError:
            found = self._flows[id(scope)] = analyse_scope(scope, walrus=":=" in self.source)
            return found

    def binding(self, name: ast.Name) -> Binding | None:
        """The binding of `name` that reaches this use in its scope (last one before it)."""
        return self.flow(self.scope(name)).reaching(name.id, name.lineno, name.col_offset)

    def value_of(self, name: ast.Name) -> ast.expr | None:
        """The expression last assigned to `name`, when a plain assignment reaches it (memoised for
        the tree's own nodes: rules ask about the same names many times)."""
        key = id(name)
        if key in self._values:
            return self._values[key]
        value = self._value_of(name)
        if key in self._parents:  # a node of this tree, alive as long as the context: its id is stable
            self._values[key] = value
        return value

    def _value_of(self, name: ast.Name) -> ast.expr | None:
        b = self.binding(name)
        if b is None or b.kind not in ("assign", "unpack") or b.value is None:
            return None
        if len(self.flow(self.scope(name)).of(name.id)) > 1 and self.enclosing_loops(name):
            return None  # reassigned inside a loop: the reaching value is ambiguous
        return b.value

    def origin(self, expr: ast.expr, depth: int = 4) -> ast.expr:
        """See through local variables: `e = np.exp(x); e - 1` -> origin of `e` is `np.exp(x)`."""
        while depth > 0 and isinstance(expr, ast.Name):
            value = self.value_of(expr)
            if value is None:
                break
            expr, depth = value, depth - 1
        return expr
