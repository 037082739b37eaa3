"""Compile a unit's `ast` once into closures over an environment dict, for one backend.

Only the node types handled here exist for the evaluator; anything else raises NotEvaluable at
compile time, naming what it met. Nothing of the scanned module is imported or executed: names
resolve to locals, to the allow-list (auditor.numerics.allow), to literal module constants, or
to other functions of the same file, which are compiled the same way (statements.py).
"""
from __future__ import annotations

import ast
import operator
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from auditor.numerics.allow import is_builtin
from auditor.numerics.backends import Backend
from auditor.numerics.budget import MAX_LENGTH, Budget, BudgetExceeded, NotEvaluable, checked_mul, checked_pow
from auditor.resolve import ImportTable

Env = dict[str, Any]
Fn = Callable[[Env], Any]

_BINARY: dict[type, Callable[[Any, Any], Any]] = {
    ast.Add: operator.add, ast.Sub: operator.sub, ast.Div: operator.truediv, ast.FloorDiv: operator.floordiv,
    ast.Mod: operator.mod, ast.BitAnd: operator.and_, ast.BitOr: operator.or_, ast.BitXor: operator.xor,
    ast.Mult: checked_mul, ast.Pow: checked_pow, ast.MatMult: operator.matmul,
}
_COMPARE: dict[type, Callable[[Any, Any], Any]] = {
    ast.Eq: operator.eq, ast.NotEq: operator.ne, ast.Lt: operator.lt, ast.LtE: operator.le,
    ast.Gt: operator.gt, ast.GtE: operator.ge, ast.Is: operator.is_, ast.IsNot: operator.is_not,
    ast.In: lambda a, b: a in b, ast.NotIn: lambda a, b: a not in b,
}
#: Attributes read from values (numbers and arrays only ever live in the evaluator).
_SAFE_ATTRS = {"real", "imag", "T", "shape", "size", "ndim"}


@dataclass(slots=True)
class SourceModule:
    """What a unit may refer to in its file: imports, literal constants, sibling functions."""

    imports: ImportTable
    functions: dict[str, ast.FunctionDef] = field(default_factory=dict)
    constants: dict[str, ast.expr] = field(default_factory=dict)


@dataclass(slots=True)
class Tracer:
    """Records the values of chosen expression nodes (series terms) while `log` is a list."""

    nodes: dict[int, bool] = field(default_factory=dict)  #: id(node) -> negate (for `s -= t`)
    log: list[Any] | None = None


def describe(node: ast.AST) -> str:
    """Short source text of a node for reasons ("calls self.model.predict")."""
    try:
        text = ast.unparse(node)
    except Exception:  # unparse cannot fail on parsed trees, but a reason must never crash
        text = type(node).__name__
    return text if len(text) <= 60 else text[:57] + "..."


class ExprCompiler:
    """Turns expressions into closures `env -> value` for one backend."""

    def __init__(self, backend: Backend, module: SourceModule, budget: Budget, tracer: Tracer | None = None) -> None:
        self.backend = backend
        self.module = module
        self.budget = budget
        self.tracer = tracer or Tracer()
        self.locals: set[str] = set()
        self.user_functions: dict[str, Callable[..., Any]] = {}

    # -- dispatch ----------------------------------------------------------
    def expr(self, node: ast.expr) -> Fn:
        method = getattr(self, "_" + type(node).__name__, None)
        if method is None:
            raise NotEvaluable(f"uses {type(node).__name__} syntax ({describe(node)})")
        fn: Fn = method(node)
        if id(node) in self.tracer.nodes:
            fn = self._traced(fn, self.tracer.nodes[id(node)])
        return fn

    def _traced(self, fn: Fn, negate: bool) -> Fn:
        tracer = self.tracer

        def run(env: Env) -> Any:
            value = fn(env)
            if tracer.log is not None:
                tracer.log.append(-value if negate else value)
            return value

        return run

    # -- leaves --------------------------------------------------------------
    def _Constant(self, node: ast.Constant) -> Fn:
        if isinstance(node.value, str | bytes) or node.value is Ellipsis:
            raise NotEvaluable(f"uses a non-numeric constant {describe(node)}")
        value = self.backend.literal(node.value)
        return lambda env: value

    def _Name(self, node: ast.Name) -> Fn:
        name = node.id
        if name in self.locals:
            def load(env: Env) -> Any:
                try:
                    return env[name]
                except KeyError:
                    raise NameError(f"local {name!r} used before assignment") from None
            return load
        if name in self.module.constants:
            const = self._module_constant(name)
            return lambda env: const
        qual = self.module.imports.qualname(node)
        if qual is not None and self.backend.constant(qual) is not None:
            value = self.backend.constant(qual)
            return lambda env: value
        raise NotEvaluable(f"uses {name!r}, which is not a local, a parameter or a literal constant")

    def _module_constant(self, name: str) -> Any:
        saved, self.locals = self.locals, set()
        try:
            return self.expr(self.module.constants[name])({})
        except NotEvaluable:
            raise
        except Exception as exc:
            raise NotEvaluable(f"module constant {name} cannot be evaluated ({type(exc).__name__})") from None
        finally:
            self.locals = saved

    def _Attribute(self, node: ast.Attribute) -> Fn:
        if node.attr.startswith("__"):
            raise NotEvaluable(f"uses the dunder attribute {describe(node)}")
        qual = self.module.imports.qualname(node)
        if qual is not None:
            value = self.backend.constant(qual)
            if value is not None:
                return lambda env: value
        if node.attr in _SAFE_ATTRS and not (qual and "." in qual):
            inner, attr = self.expr(node.value), node.attr
            return lambda env: getattr(inner(env), attr)
        raise NotEvaluable(f"reads {describe(node)}")

    # -- operators -----------------------------------------------------------
    def _BinOp(self, node: ast.BinOp) -> Fn:
        op = _BINARY.get(type(node.op))
        if op is None:
            raise NotEvaluable(f"uses the operator {type(node.op).__name__}")
        left, right = self.expr(node.left), self.expr(node.right)
        kind = type(node.op)
        if kind is ast.Add:
            return lambda env: left(env) + right(env)
        if kind is ast.Sub:
            return lambda env: left(env) - right(env)
        if kind is ast.Div:
            return lambda env: left(env) / right(env)
        if kind is ast.Mult:
            def mul(env: Env) -> Any:
                a, b = left(env), right(env)
                if a.__class__ is int or b.__class__ is int or a.__class__ in (list, tuple):
                    return checked_mul(a, b)
                return a * b
            return mul
        if kind is ast.Pow and isinstance(node.right, ast.Constant) and type(node.right.value) is int and abs(node.right.value) <= 64:
            power = node.right.value
            return lambda env: left(env) ** power
        return lambda env: op(left(env), right(env))

    def _UnaryOp(self, node: ast.UnaryOp) -> Fn:
        inner = self.expr(node.operand)
        if isinstance(node.op, ast.USub):
            return lambda env: -inner(env)
        if isinstance(node.op, ast.UAdd):
            return lambda env: +inner(env)
        if isinstance(node.op, ast.Not):
            return lambda env: not inner(env)
        return lambda env: ~inner(env)

    def _BoolOp(self, node: ast.BoolOp) -> Fn:
        parts = [self.expr(v) for v in node.values]
        is_and = isinstance(node.op, ast.And)

        def run(env: Env) -> Any:
            value = None
            for part in parts:
                value = part(env)
                if bool(value) != is_and:
                    return value
            return value

        return run

    def _Compare(self, node: ast.Compare) -> Fn:
        first = self.expr(node.left)
        rest = [(_COMPARE[type(op)], self.expr(c)) for op, c in zip(node.ops, node.comparators)]
        if len(rest) == 1:
            op, right = rest[0]
            return lambda env: op(first(env), right(env))

        def chain(env: Env) -> bool:
            left = first(env)
            for op, comp in rest:
                right = comp(env)
                if not op(left, right):
                    return False
                left = right
            return True

        return chain

    def _IfExp(self, node: ast.IfExp) -> Fn:
        test, body, other = self.expr(node.test), self.expr(node.body), self.expr(node.orelse)
        return lambda env: body(env) if test(env) else other(env)

    def _Tuple(self, node: ast.Tuple) -> Fn:
        parts = [self.expr(e) for e in node.elts]
        return lambda env: tuple(p(env) for p in parts)

    def _List(self, node: ast.List) -> Fn:
        parts = [self.expr(e) for e in node.elts]
        return lambda env: [p(env) for p in parts]

    def _Subscript(self, node: ast.Subscript) -> Fn:
        value, index = self.expr(node.value), self.expr(node.slice)
        return lambda env: value(env)[index(env)]

    def _Slice(self, node: ast.Slice) -> Fn:
        lo, hi, step = (self.expr(p) if p is not None else (lambda env: None) for p in (node.lower, node.upper, node.step))
        return lambda env: slice(lo(env), hi(env), step(env))

    def _NamedExpr(self, node: ast.NamedExpr) -> Fn:
        name = node.target.id
        self.locals.add(name)
        value = self.expr(node.value)

        def run(env: Env) -> Any:
            env[name] = result = value(env)
            return result

        return run
