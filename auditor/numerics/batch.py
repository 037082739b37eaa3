"""Column-wise evaluation of simple expressions: one pass over all samples at once.

The per-sample interpreter (interp.py) pays several Python calls per node and sample. For an
expression made only of inputs, constants, arithmetic and calls of allowed functions, each
node here maps its operation over whole columns (one list per node, `map` over the samples),
so the interpretive cost is paid once per batch. Element by element the operations are exactly
those of the per-sample run (same operator, same function, same order), in either backend.
Anything else (conditionals, comparisons, subscripts, keyword arguments, the file's own
functions) raises NotEvaluable and the unit runs sample by sample.
"""
from __future__ import annotations

import ast
import operator
from collections.abc import Callable
from typing import Any

from auditor.numerics.budget import NotEvaluable, checked_mul, checked_pow
from auditor.numerics.statements import UnitCompiler

Columns = dict[str, list[Any]]
BatchFn = Callable[[Columns, int], list[Any]]

_BINARY: dict[type, Callable[[Any, Any], Any]] = {
    ast.Add: operator.add, ast.Sub: operator.sub, ast.Div: operator.truediv, ast.Mult: checked_mul,
    ast.Pow: checked_pow,
}
_UNARY: dict[type, Callable[[Any], Any]] = {ast.USub: operator.neg, ast.UAdd: operator.pos}


def _mul(a: Any, b: Any) -> Any:
    """`a * b`, guarded only where the per-sample run guards it (ints, sequences)."""
    if a.__class__ is int or b.__class__ is int or a.__class__ in (list, tuple):
        return checked_mul(a, b)
    return a * b


_GUARDED = (int, list, tuple)


def _times(a: list[Any], b: list[Any]) -> list[Any]:
    """Elementwise product; the guarded `_mul` only where an int or a sequence takes part."""
    kinds = set(map(type, a)) | set(map(type, b))
    if any(k in kinds for k in _GUARDED):
        return list(map(_mul, a, b))
    return list(map(operator.mul, a, b))


class BatchCompiler:
    """Compiles an expression over `inputs` into `fn(columns, n) -> list of n values`."""

    def __init__(self, scalar: UnitCompiler, inputs: list[str]) -> None:
        self.scalar = scalar  #: resolves names and callees exactly as the per-sample run does
        self.inputs = set(inputs)
        scalar.locals = set(inputs)

    def compile(self, node: ast.expr) -> BatchFn:
        if not any(isinstance(n, ast.Name) and n.id in self.inputs for n in ast.walk(node)):
            return self._constant(node)
        method = getattr(self, "_" + type(node).__name__, None)
        if method is None:
            raise NotEvaluable(f"{type(node).__name__} is evaluated sample by sample")
        fn: BatchFn = method(node)
        return fn

    def _constant(self, node: ast.expr) -> BatchFn:
        value_of = self.scalar.expr(node)  # evaluated per batch: the reference depends on the precision

        def run(columns: Columns, n: int) -> list[Any]:
            return [value_of({})] * n

        return run

    def _Name(self, node: ast.Name) -> BatchFn:
        name = node.id
        return lambda columns, n: columns[name]

    def _BinOp(self, node: ast.BinOp) -> BatchFn:
        kind = type(node.op)
        if kind not in _BINARY:
            raise NotEvaluable(f"the operator {kind.__name__} is evaluated sample by sample")
        left, right = self.compile(node.left), self.compile(node.right)
        if kind is ast.Pow and isinstance(node.right, ast.Constant) and type(node.right.value) is int \
                and abs(node.right.value) <= 64:
            power = node.right.value
            return lambda columns, n: [a ** power for a in left(columns, n)]
        if kind is ast.Mult:
            return lambda columns, n: _times(left(columns, n), right(columns, n))
        op = _BINARY[kind]
        return lambda columns, n: list(map(op, left(columns, n), right(columns, n)))

    def _UnaryOp(self, node: ast.UnaryOp) -> BatchFn:
        op = _UNARY.get(type(node.op))
        if op is None:
            raise NotEvaluable("`not` and `~` are evaluated sample by sample")
        inner = self.compile(node.operand)
        return lambda columns, n: list(map(op, inner(columns, n)))

    def _Call(self, node: ast.Call) -> BatchFn:
        if node.keywords or any(isinstance(a, ast.Starred) for a in node.args) or not node.args:
            raise NotEvaluable("calls with keywords are evaluated sample by sample")
        if isinstance(node.func, ast.Name) and node.func.id in self.scalar.module.functions:
            raise NotEvaluable("the file's own functions are evaluated sample by sample (loop budget)")
        fn = self.scalar.callee(node.func)
        args = [self.compile(a) for a in node.args]
        if len(args) == 1:
            (a,) = args
            return lambda columns, n: list(map(fn, a(columns, n)))
        return lambda columns, n: list(map(fn, *[g(columns, n) for g in args]))


def compile_batch(scalar: UnitCompiler, node: ast.expr, inputs: list[str]) -> BatchFn:
    """The column-wise twin of an expression unit, or NotEvaluable when it has no such form."""
    return BatchCompiler(scalar, inputs).compile(node)
