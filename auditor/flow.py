"""Local data flow within one scope: which expression a local name was last given."""
from __future__ import annotations

import ast
from dataclasses import dataclass, field

from auditor.nodes import CHILD_FIELDS, children

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
    effect: tuple[int, int] | None = None  #: (line, col) from which the binding is visible; None: (line, column)


Span = tuple[tuple[int, int], tuple[int, int]]


@dataclass(slots=True)
class ScopeFlow:
    """All bindings in one scope, in source order, nested scopes excluded."""

    bindings: dict[str, list[Binding]] = field(default_factory=dict)
    #: id of a binding made inside an `except` handler -> the handler's (start, end)
    handler_spans: dict[int, Span] = field(default_factory=dict)
    #: the handler being recorded, while `analyse_scope` walks one
    recording_handler: Span | None = None

    def add(self, binding: Binding) -> None:
        self.bindings.setdefault(binding.name, []).append(binding)
        if self.recording_handler is not None:
            self.handler_spans[id(binding)] = self.recording_handler

    def of(self, name: str) -> list[Binding]:
        return self.bindings.get(name, [])

    def reaching(self, name: str, line: int, column: int) -> Binding | None:
        """The last binding of `name` in effect at (line, column).

        A binding takes effect once its value has been evaluated, so in `a = a * 2` the `a` on
        the right sees the previous binding, not this one. Of the bindings written before the use,
        the last in the source wins, except that one made in an `except` handler only counts for
        uses inside that handler or when nothing else reaches: after `try: a = inv(m)` /
        `except: a = pinv(m)` the try body is the path normally taken.
        """
        here = (line, column)
        best: Binding | None = None
        fallback: Binding | None = None
        best_at = fallback_at = (-1, -1)
        for b in self.bindings.get(name, ()):
            at = b.effect or (b.line, b.column)
            if at > here:
                continue
            span = self.handler_spans.get(id(b))
            if span is not None and not span[0] <= here <= span[1]:
                if at >= fallback_at:
                    fallback, fallback_at = b, at
            elif at >= best_at:
                best, best_at = b, at
        return best if best is not None else fallback


def _end(node: ast.AST | None, fallback: ast.AST) -> tuple[int, int]:
    """Where evaluating `node` finishes: the point a binding from it takes effect."""
    node = node if node is not None and getattr(node, "end_lineno", None) is not None else fallback
    return (node.end_lineno or node.lineno, node.end_col_offset or 0)  # type: ignore[attr-defined]


def _targets(
    target: ast.expr, value: ast.expr | None, stmt: ast.AST, flow: ScopeFlow, kind: str,
    effect: tuple[int, int] | None = None,
) -> None:
    if isinstance(target, ast.Name):
        flow.add(Binding(target.id, kind, stmt.lineno, stmt.col_offset, value, stmt, effect=effect))  # type: ignore[attr-defined]
    elif isinstance(target, (ast.Tuple, ast.List)):
        elts = value.elts if isinstance(value, (ast.Tuple, ast.List)) and len(value.elts) == len(target.elts) else None
        for i, sub in enumerate(target.elts):
            inner = elts[i] if elts is not None else None
            _targets(sub, inner, stmt, flow, UNPACK if kind == ASSIGN else kind, effect)
    elif isinstance(target, ast.Starred):
        _targets(target.value, None, stmt, flow, OTHER, effect)


def _record(node: ast.AST, flow: ScopeFlow) -> None:
    if isinstance(node, ast.Assign):
        for target in node.targets:
            _targets(target, node.value, node, flow, ASSIGN, _end(node.value, node))
    elif isinstance(node, ast.AnnAssign) and node.value is not None:
        _targets(node.target, node.value, node, flow, ASSIGN, _end(node.value, node))
    elif isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name):
        flow.add(Binding(node.target.id, AUG, node.lineno, node.col_offset, node.value, node, node.op,
                         effect=_end(node.value, node)))
    elif isinstance(node, (ast.For, ast.AsyncFor)):
        _targets(node.target, node.iter, node, flow, LOOP, _end(node.iter, node))
    elif isinstance(node, ast.NamedExpr):
        flow.add(Binding(node.target.id, ASSIGN, node.lineno, node.col_offset, node.value, node,
                         effect=_end(node.value, node)))
    elif isinstance(node, (ast.With, ast.AsyncWith)):
        for item in node.items:
            if item.optional_vars is not None:
                _targets(item.optional_vars, None, node, flow, OTHER, _end(item.context_expr, node))


_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
#: Statement fields that hold nested blocks; bindings other than `:=` live only in statements.
_BLOCKS = ("body", "orelse", "finalbody", "handlers", "cases")


def _walrus_targets(node: ast.AST, flow: ScopeFlow) -> None:
    """Record `name := value` inside the expressions of one statement (not its nested blocks)."""
    stack = [child for _, child in _expression_children(node)]
    while stack:
        sub = stack.pop()
        if isinstance(sub, ast.NamedExpr):
            _record(sub, flow)
        if not isinstance(sub, _NESTED):
            stack.extend(children(sub))


def _expression_children(node: ast.AST) -> list[tuple[str, ast.AST]]:
    out = []
    for name in CHILD_FIELDS.get(type(node), ()):
        if name in _BLOCKS:
            continue
        value = getattr(node, name, None)
        for item in value if isinstance(value, list) else [value]:
            if isinstance(item, ast.AST):
                out.append((name, item))
    return out


def analyse_scope(scope: ast.AST, walrus: bool = True) -> ScopeFlow:
    """Collect the bindings of one scope without entering nested scopes.

    Only statements are visited (assignments, loops, `with`); expressions are searched for
    `:=` only when `walrus` is set, which the caller decides from the file's text.
    """
    flow = ScopeFlow()
    if isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        args = scope.args
        for a in (*args.posonlyargs, *args.args, *args.kwonlyargs, args.vararg, args.kwarg):
            if a is not None:
                flow.add(Binding(a.arg, OTHER, a.lineno, a.col_offset, None, a))
        if isinstance(scope, ast.Lambda):
            if walrus:
                _walrus_targets(scope, flow)
            return flow
    # a stack of (statement, the except handler it sits in); blocks are pushed last-field-first so
    # that statements are recorded in source order
    stack: list[tuple[ast.AST, Span | None]] = [(s, None) for s in reversed(getattr(scope, "body", []))]
    while stack:
        node, handler = stack.pop()
        if isinstance(node, ast.ExceptHandler):
            handler = ((node.lineno, node.col_offset), (node.end_lineno or node.lineno, node.end_col_offset or 0))
        flow.recording_handler = handler
        _record(node, flow)
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
            flow.add(Binding(node.name, OTHER, node.lineno, node.col_offset, None, node))
            continue
        if walrus:
            _walrus_targets(node, flow)
        for field_name in reversed(_BLOCKS):
            block = getattr(node, field_name, None)
            if block:
                stack.extend((child, handler) for child in reversed(block))
    flow.recording_handler = None
    return flow
