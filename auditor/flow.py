"""Local data flow within one scope: which expression a local name was last given."""
from __future__ import annotations

import ast
from dataclasses import dataclass, field

from auditor.nodes import children

Scope = ast.Module | ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda

#: Kinds of binding a name can receive.
ASSIGN, AUG, UNPACK, LOOP, OTHER = "assign", "aug", "unpack", "loop", "other"


@dataclass(frozen=True, slots=True)
class Binding:
    """One place a name receives a value."""

    name: str
    kind: str  #: ASSIGN, AUG, UNPACK, LOOP or OTHER
    line: int
    column: int
    value: ast.expr | None  #: the value expression (for AUG the right operand), when known
    stmt: ast.AST  #: the binding statement or comprehension
    op: ast.operator | None = None  #: the operator of an augmented assignment


@dataclass(slots=True)
class ScopeFlow:
    """All bindings in one scope, in source order, nested scopes excluded."""

    bindings: dict[str, list[Binding]] = field(default_factory=dict)

    def add(self, binding: Binding) -> None:
        self.bindings.setdefault(binding.name, []).append(binding)

    def of(self, name: str) -> list[Binding]:
        return self.bindings.get(name, [])

    def reaching(self, name: str, line: int, column: int) -> Binding | None:
        """The last binding of `name` that starts before (line, column)."""
        best: Binding | None = None
        for b in self.bindings.get(name, ()):
            if (b.line, b.column) < (line, column):
                best = b
        return best


def _targets(target: ast.expr, value: ast.expr | None, stmt: ast.AST, flow: ScopeFlow, kind: str) -> None:
    if isinstance(target, ast.Name):
        flow.add(Binding(target.id, kind, stmt.lineno, stmt.col_offset, value, stmt))  # type: ignore[attr-defined]
    elif isinstance(target, (ast.Tuple, ast.List)):
        elts = value.elts if isinstance(value, (ast.Tuple, ast.List)) and len(value.elts) == len(target.elts) else None
        for i, sub in enumerate(target.elts):
            inner = elts[i] if elts is not None else None
            _targets(sub, inner, stmt, flow, UNPACK if kind == ASSIGN else kind)
    elif isinstance(target, ast.Starred):
        _targets(target.value, None, stmt, flow, OTHER)


def _record(node: ast.AST, flow: ScopeFlow) -> None:
    if isinstance(node, ast.Assign):
        for target in node.targets:
            _targets(target, node.value, node, flow, ASSIGN)
    elif isinstance(node, ast.AnnAssign) and node.value is not None:
        _targets(node.target, node.value, node, flow, ASSIGN)
    elif isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name):
        flow.add(Binding(node.target.id, AUG, node.lineno, node.col_offset, node.value, node, node.op))
    elif isinstance(node, (ast.For, ast.AsyncFor)):
        _targets(node.target, node.iter, node, flow, LOOP)
    elif isinstance(node, ast.NamedExpr):
        flow.add(Binding(node.target.id, ASSIGN, node.lineno, node.col_offset, node.value, node))
    elif isinstance(node, (ast.With, ast.AsyncWith)):
        for item in node.items:
            if item.optional_vars is not None:
                _targets(item.optional_vars, None, node, flow, OTHER)


_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)


def analyse_scope(scope: ast.AST) -> ScopeFlow:
    """Collect the bindings of one scope without entering nested scopes."""
    flow = ScopeFlow()
    if isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        args = scope.args
        for a in (*args.posonlyargs, *args.args, *args.kwonlyargs, args.vararg, args.kwarg):
            if a is not None:
                flow.add(Binding(a.arg, OTHER, a.lineno, a.col_offset, None, a))
        body: list[ast.AST] = [scope.body] if isinstance(scope, ast.Lambda) else list(scope.body)
    else:
        body = list(getattr(scope, "body", []))
    stack = body[::-1]
    while stack:
        node = stack.pop()
        _record(node, flow)
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
            flow.add(Binding(node.name, OTHER, node.lineno, node.col_offset, None, node))
            continue
        stack.extend(reversed([c for c in children(node) if not isinstance(c, _NESTED)]))
    return flow
