"""Recognise which function a series loop or sum converges to, by a bounded arithmetic model.

The model interprets only assignments, `if`, `for k in range(...)`, `while`, `break` and
arithmetic over plain numbers (a whitelist of pure math functions), with a step cap. It never
imports, evaluates or executes the scanned code; anything outside that subset means "unknown".
"""
from __future__ import annotations

import ast
import functools
import math
import operator
from collections.abc import Callable
from typing import Any
from dataclasses import dataclass

from auditor.rule import Context

_STEPS = 20000
_PROBES = (0.3, 0.6)
_TERMS = 60  #: loop bounds given as parameters are modelled with this many terms

#: function key -> (reference, description); the keys are what rewrites are built from
KNOWN: dict[str, Callable[[float], float]] = {
    "exp_neg": lambda x: math.exp(-x),
    "exp_neg_sq": lambda x: math.exp(-x * x),
    "sin": math.sin,
    "cos": math.cos,
    "atan": math.atan,
    "log1p": math.log1p,
}


def _bessel_j0(x: float) -> float:
    """J0 for recognising its power series; scipy is imported on first use (it costs 0.4 s of
    start-up) and is optional: without it the series is simply not recognised."""
    try:
        from scipy.special import j0  # type: ignore[import-untyped]
    except ImportError:
        return math.nan
    return float(j0(x))


KNOWN["j0"] = _bessel_j0

_BINOPS: dict[type, Callable[[Any, Any], Any]] = {
    ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul, ast.Div: operator.truediv,
    ast.FloorDiv: operator.floordiv, ast.Mod: operator.mod, ast.BitAnd: operator.and_,
}
_CMPS: dict[type, Callable[[Any, Any], Any]] = {
    ast.Lt: operator.lt, ast.LtE: operator.le, ast.Gt: operator.gt, ast.GtE: operator.ge,
    ast.Eq: operator.eq, ast.NotEq: operator.ne,
}
_FUNCS: dict[str, Callable[..., object]] = {
    "factorial": lambda v: math.factorial(_small_int(v)), "gamma": math.gamma, "pow": lambda a, b: _power(a, b),
    "abs": abs, "sqrt": math.sqrt, "exp": math.exp, "log": math.log, "float": float, "int": int,
    "min": min, "max": max, "sin": math.sin, "cos": math.cos, "where": lambda c, a, b: a if c else b,
}


class Unknown(Exception):
    """The code leaves the modelled subset (or the arithmetic fails): nothing is concluded."""


class _Break(Exception):
    pass


class _Continue(Exception):
    pass


@dataclass(frozen=True, slots=True)
class Recognised:
    """A series identified by its values: `kind` is a key of KNOWN, `var` the variable name."""

    kind: str
    var: str
    negated: bool = False  #: the loop holds minus the function (`-log(1 + g)`)


def _small_int(v: object) -> int:
    if isinstance(v, float) and v.is_integer():
        v = int(v)
    if not isinstance(v, int) or not 0 <= v <= 1000:
        raise Unknown("factorial argument")
    return v


def _power(a: object, b: object) -> object:
    if isinstance(a, int) and isinstance(b, int) and abs(b) > 4000:
        raise Unknown("huge power")
    return a ** b  # type: ignore[operator]


class Machine:
    """Interpreter state for one model run: the environment and the step budget."""

    def __init__(self, ctx: Context, env: dict[str, object], arrays: dict[str, range] | None = None) -> None:
        self.ctx, self.env, self.steps = ctx, env, 0
        self.arrays = arrays or {}
        self.array_mode = False  #: evaluate element-wise: `np.arange(...)` yields its element at `position`
        self.position = 0

    def value(self, node: ast.AST) -> object:
        if isinstance(node, ast.Constant) and isinstance(node.value, (int, float, complex)):
            return node.value
        if isinstance(node, ast.Name):
            return self._name(node)
        if isinstance(node, ast.BinOp):
            left, right = self.value(node.left), self.value(node.right)
            if isinstance(node.op, ast.Pow):
                return _power(left, right)
            op = _BINOPS.get(type(node.op))
            if op is None:
                raise Unknown("operator")
            return op(left, right)
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd, ast.Not)):
            v = self.value(node.operand)
            return (not v) if isinstance(node.op, ast.Not) else (-v if isinstance(node.op, ast.USub) else v)  # type: ignore[operator]
        if isinstance(node, ast.IfExp):
            return self.value(node.body) if self.value(node.test) else self.value(node.orelse)
        if isinstance(node, ast.Compare):
            return self._compare(node)
        if isinstance(node, ast.BoolOp):
            values = [self.value(v) for v in node.values]
            return all(values) if isinstance(node.op, ast.And) else any(values)
        if isinstance(node, ast.Call):
            return self._call(node)
        raise Unknown(type(node).__name__)

    def _name(self, node: ast.Name) -> object:
        if node.id in self.arrays:
            return self.arrays[node.id][self.position]
        if node.id in self.env:
            return self.env[node.id]
        if self.array_mode and hasattr(node, "lineno"):
            origin = self.ctx.origin(node)
            if origin is not node:
                return self.value(origin)
        raise Unknown(node.id)

    def _compare(self, node: ast.Compare) -> bool:
        left = self.value(node.left)
        for op, comp in zip(node.ops, node.comparators):
            right = self.value(comp)
            fn = _CMPS.get(type(op))
            if fn is None or not fn(left, right):
                return False
            left = right
        return True

    def _call(self, node: ast.Call) -> object:
        fam = self.ctx.family(node)
        if fam == "arange" and self.array_mode:
            return self.range_of(node)[self.position]
        if fam is None and isinstance(node.func, ast.Name):
            fam = node.func.id
        fn = _FUNCS.get(fam or "")
        if fn is None or node.keywords:
            raise Unknown("call")
        return fn(*(self.value(a) for a in node.args))

    # -- statements ------------------------------------------------------
    def run(self, stmts: list[ast.stmt]) -> None:
        for stmt in stmts:
            self.steps += 1
            if self.steps > _STEPS:
                raise Unknown("step budget")
            self.statement(stmt)

    def statement(self, stmt: ast.stmt) -> None:
        if isinstance(stmt, ast.Assign):
            value = self.value(stmt.value) if not isinstance(stmt.value, ast.Tuple) else None
            for target in stmt.targets:
                self._bind(target, stmt.value, value)
        elif isinstance(stmt, ast.AnnAssign) and stmt.value is not None:
            self._bind(stmt.target, stmt.value, self.value(stmt.value))
        elif isinstance(stmt, ast.AugAssign) and isinstance(stmt.target, ast.Name):
            fake = ast.BinOp(ast.Name(stmt.target.id, ast.Load()), stmt.op, stmt.value)
            self.env[stmt.target.id] = self.value(fake)
        elif isinstance(stmt, ast.If):
            self.run(stmt.body if self.value(stmt.test) else stmt.orelse)
        elif isinstance(stmt, (ast.Break, ast.Return)):
            raise _Break
        elif isinstance(stmt, ast.Continue):
            raise _Continue
        elif isinstance(stmt, ast.For):
            self.loop_for(stmt)
        elif isinstance(stmt, ast.While):
            self.loop_while(stmt)
        elif not isinstance(stmt, ast.Pass) and not (isinstance(stmt, ast.Expr) and isinstance(stmt.value, ast.Constant)):
            raise Unknown(type(stmt).__name__)

    def _bind(self, target: ast.AST, node: ast.expr, value: object) -> None:
        if isinstance(target, ast.Name):
            self.env[target.id] = value
        elif isinstance(target, ast.Tuple) and isinstance(node, ast.Tuple) and len(node.elts) == len(target.elts):
            values = [self.value(v) for v in node.elts]
            for t, v in zip(target.elts, values):
                if not isinstance(t, ast.Name):
                    raise Unknown("target")
                self.env[t.id] = v
        else:
            raise Unknown("target")

    def range_of(self, call: ast.AST) -> range:
        if not isinstance(call, ast.Call) or not (
            (isinstance(call.func, ast.Name) and call.func.id == "range") or self.ctx.family(call) == "arange"
        ):
            raise Unknown("iterable")
        args = [self.value(a) for a in call.args]
        ints = [a for a in args if isinstance(a, int)]
        if not ints or len(ints) != len(args) or len(ints) > 3:
            raise Unknown("range")
        r = range(*ints)
        if len(r) > 2000:
            raise Unknown("long range")
        return r

    def loop_for(self, loop: ast.For) -> None:
        if not isinstance(loop.target, ast.Name) or loop.orelse:
            raise Unknown("for")
        for k in self.range_of(loop.iter):
            self.env[loop.target.id] = k
            if self._pass(loop.body):
                return

    def loop_while(self, loop: ast.While) -> None:
        while self.value(loop.test):
            if self._pass(loop.body):
                return

    def _pass(self, body: list[ast.stmt]) -> bool:
        """Run one pass; True when it broke out."""
        try:
            self.run(body)
        except _Break:
            return True
        except _Continue:
            pass
        return False


def _matches(values: list[tuple[float, object]]) -> tuple[str, bool] | None:
    if not all(isinstance(v, (int, float, complex)) for _, v in values):
        return None
    for kind, ref in KNOWN.items():
        for sign in (1, -1):
            if all(abs(v - sign * ref(x)) <= 1e-9 * abs(ref(x)) for x, v in values):  # type: ignore[operator]
                return kind, sign < 0
    return None


def _guarded(run: Callable[[float], object], x: float) -> object:
    try:
        return run(x)
    except (Unknown, _Break, _Continue, ArithmeticError, ValueError, TypeError, RecursionError, IndexError):
        return None


def recognise(run: Callable[[str, float], object], candidates: list[str]) -> Recognised | None:
    """Try each candidate variable at the probe points; the first known function that fits wins."""
    for var in candidates:
        values = [(x, _guarded(functools.partial(run, var), x)) for x in _PROBES]
        if any(v is None for _, v in values):
            continue
        found = _matches(values)
        if found is not None:
            return Recognised(found[0], var, found[1])
    return None
