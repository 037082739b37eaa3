"""Statements and function bodies for the shadow evaluator (assignments, if/else, for, while,
return, break, continue). Each statement compiles to a closure returning a control signal."""
from __future__ import annotations

import ast
from collections.abc import Callable
from typing import Any

from auditor.numerics.budget import MAX_CALL_DEPTH, BudgetExceeded, NotEvaluable
from auditor.numerics.calls import SILENT, CallCompiler
from auditor.numerics.interp import _BINARY, Env, Fn, describe

Stmt = Callable[[Env], Any]
BREAK, CONTINUE, RETURN = object(), object(), object()
RET = "<return>"  #: env key holding the return value (never a Python identifier)


class DomainError(Exception):
    """The code itself raised (an input check): the sample lies outside the unit's domain."""


def assigned_names(body: list[ast.stmt]) -> set[str]:
    """Names stored anywhere in a function body (nested scopes excluded): its locals."""
    names: set[str] = set()
    stack: list[ast.AST] = list(body)
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            continue
        if isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):
            names.add(node.id)
        stack.extend(ast.iter_child_nodes(node))
    return names


def _params(node: ast.FunctionDef) -> list[ast.arg]:
    args = node.args
    if args.vararg or args.kwarg:
        raise NotEvaluable(f"function {node.name} takes *args or **kwargs")
    return [*args.posonlyargs, *args.args, *args.kwonlyargs]


class UnitCompiler(CallCompiler):
    """Compiles whole functions (and expressions) for one backend."""

    def compile_function(self, node: ast.FunctionDef) -> Callable[..., Any]:
        """A callable `f(*args, **kwargs)` running the body in a fresh environment."""
        if node.decorator_list:
            raise NotEvaluable(f"function {node.name} is decorated")
        params = _params(node)
        names = [p.arg for p in params]
        defaults = self._defaults(node)
        saved, self.locals = self.locals, set(names) | assigned_names(node.body)
        try:
            body = self.block(node.body)
        finally:
            self.locals = saved
        budget = self.budget

        def call(*args: Any, **kwargs: Any) -> Any:
            env: Env = dict(defaults)
            env.update(zip(names, args))
            env.update(kwargs)
            budget.depth += 1
            try:
                if budget.depth > MAX_CALL_DEPTH:
                    raise BudgetExceeded("calls nested too deeply (recursion)")
                if body(env) is RETURN:
                    return env[RET]
                return None
            finally:
                budget.depth -= 1

        return call

    def _defaults(self, node: ast.FunctionDef) -> dict[str, Any]:
        args = node.args
        positional = [*args.posonlyargs, *args.args]
        out: dict[str, Any] = {}
        pairs = list(zip(positional[len(positional) - len(args.defaults):], args.defaults))
        pairs += [(a, d) for a, d in zip(args.kwonlyargs, args.kw_defaults) if d is not None]
        for arg, default in pairs:
            try:
                out[arg.arg] = self.expr(default)({})
            except NotEvaluable:
                continue  # a default we cannot evaluate is only a problem if the parameter is not given
        return out

    def block(self, stmts: list[ast.stmt]) -> Stmt:
        parts = [s for s in (self.stmt(s) for s in stmts) if s is not None]
        if len(parts) == 1:
            return parts[0]

        def run(env: Env) -> Any:
            for part in parts:
                signal = part(env)
                if signal is not None:
                    return signal
            return None

        return run

    def stmt(self, node: ast.stmt) -> Stmt | None:
        method = getattr(self, "_s_" + type(node).__name__, None)
        if method is None:
            raise NotEvaluable(f"uses a {type(node).__name__} statement (line {node.lineno})")
        result: Stmt | None = method(node)
        return result

    # -- simple statements -------------------------------------------------------
    def _s_Assign(self, node: ast.Assign) -> Stmt:
        value = self.expr(node.value)
        stores = [self.bind_target(t) for t in node.targets]
        if len(stores) == 1:
            store = stores[0]

            def assign(env: Env) -> None:
                store(env, value(env))

            return assign

        def assign_many(env: Env) -> None:
            result = value(env)
            for s in stores:
                s(env, result)

        return assign_many

    def _s_AnnAssign(self, node: ast.AnnAssign) -> Stmt | None:
        if node.value is None:
            return None
        value, store = self.expr(node.value), self.bind_target(node.target)
        return lambda env: store(env, value(env))

    def _s_AugAssign(self, node: ast.AugAssign) -> Stmt:
        op = _BINARY.get(type(node.op))
        if op is None:
            raise NotEvaluable(f"uses the operator {type(node.op).__name__}=")
        load = ast.copy_location(ast.fix_missing_locations(_as_load(node.target)), node.target)
        current, value, store = self.expr(load), self.expr(node.value), self.bind_target(node.target)

        def update(env: Env) -> None:
            store(env, op(current(env), value(env)))

        return update

    def _s_Return(self, node: ast.Return) -> Stmt:
        value = self.expr(node.value) if node.value is not None else (lambda env: None)

        def ret(env: Env) -> Any:
            env[RET] = value(env)
            return RETURN

        return ret

    def _s_Expr(self, node: ast.Expr) -> Stmt | None:
        v = node.value
        if isinstance(v, ast.Constant):
            return None  # docstring or a bare literal
        if isinstance(v, ast.Call) and isinstance(v.func, ast.Name) and v.func.id in SILENT:
            return None  # output only; the call itself is not made
        value = self.expr(v)
        return lambda env: (value(env), None)[1]

    def _s_Pass(self, node: ast.Pass) -> None:
        return None

    def _s_Assert(self, node: ast.Assert) -> None:
        return None  # checks, not numbers (and `python -O` drops them too)

    def _s_Break(self, node: ast.Break) -> Stmt:
        return lambda env: BREAK

    def _s_Continue(self, node: ast.Continue) -> Stmt:
        return lambda env: CONTINUE

    def _s_Raise(self, node: ast.Raise) -> Stmt:
        text = describe(node)

        def fail(env: Env) -> None:
            raise DomainError(f"the code raised ({text})")

        return fail

    # -- control flow ------------------------------------------------------------
    def _s_If(self, node: ast.If) -> Stmt:
        test, body = self.expr(node.test), self.block(node.body)
        other = self.block(node.orelse) if node.orelse else None

        def branch(env: Env) -> Any:
            if test(env):
                return body(env)
            return other(env) if other is not None else None

        return branch

    def _s_For(self, node: ast.For) -> Stmt:
        iterable, store = self.expr(node.iter), self.bind_target(node.target)
        body = self.block(node.body)
        other = self.block(node.orelse) if node.orelse else None
        tick = self.budget.tick

        def loop(env: Env) -> Any:
            for item in iterable(env):
                tick()
                store(env, item)
                signal = body(env)
                if signal is not None:
                    if signal is BREAK:
                        return None
                    if signal is RETURN:
                        return RETURN
            return other(env) if other is not None else None

        return loop

    def _s_While(self, node: ast.While) -> Stmt:
        test, body = self.expr(node.test), self.block(node.body)
        other = self.block(node.orelse) if node.orelse else None
        tick = self.budget.tick

        def loop(env: Env) -> Any:
            while test(env):
                tick()
                signal = body(env)
                if signal is not None:
                    if signal is BREAK:
                        return None
                    if signal is RETURN:
                        return RETURN
            return other(env) if other is not None else None

        return loop


def _as_load(target: ast.expr) -> ast.expr:
    """The load form of an augmented-assignment target (`s` in `s += t`)."""
    if isinstance(target, ast.Name):
        return ast.Name(id=target.id, ctx=ast.Load())
    if isinstance(target, ast.Subscript):
        return ast.Subscript(value=target.value, slice=target.slice, ctx=ast.Load())
    raise NotEvaluable(f"augmented assignment to {describe(target)}")


def compile_expression(compiler: UnitCompiler, node: ast.expr, inputs: list[str]) -> Callable[..., Any]:
    """A callable of the inputs (by keyword) evaluating one expression."""
    compiler.locals = set(inputs)
    fn: Fn = compiler.expr(node)

    def call(**kwargs: Any) -> Any:
        return fn(kwargs)

    return call
