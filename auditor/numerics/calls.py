"""Calls and comprehensions for the shadow evaluator: allowed functions, sibling functions,
generator expressions and list comprehensions (materialised, bounded)."""
from __future__ import annotations

import ast
from collections.abc import Callable
from typing import Any

from auditor.numerics.allow import METHODS, is_builtin
from auditor.numerics.budget import MAX_LENGTH, BudgetExceeded, NotEvaluable
from auditor.numerics.interp import Env, ExprCompiler, Fn, describe

#: Calls that are skipped as statements (output only, no effect on the numbers).
SILENT = {"print"}


class CallCompiler(ExprCompiler):
    """Adds calls and comprehensions; statements.py adds statements and function bodies."""

    def compile_function(self, node: ast.FunctionDef) -> Callable[..., Any]:
        raise NotImplementedError  # provided by statements.UnitCompiler

    def callee(self, func: ast.expr) -> Callable[..., Any]:
        """The implementation a call site reaches, or NotEvaluable naming it."""
        if isinstance(func, ast.Name):
            name = func.id
            if name in self.locals:
                raise NotEvaluable(f"calls the local value {name}")
            if name in self.module.functions:
                return self._user_function(name)
            bound = self.module.imports.qualname(func)
            if bound is not None and is_builtin(name):
                # an import (`from numpy import *` binds sum) shadows the builtin, as in Python
                found = self.backend.function(bound)
                if found is None:
                    raise NotEvaluable(f"calls {name} ({bound})")
                return found  # type: ignore[no-any-return]
            builtin = self.backend.function(name) if is_builtin(name) else None
            if builtin is not None:
                return builtin  # type: ignore[no-any-return]
        text = describe(func)
        if "__" in text:
            raise NotEvaluable(f"uses a dunder name ({text})")
        qual = self.module.imports.qualname(func)
        impl = self.backend.function(qual) if qual else None
        if impl is None:
            raise NotEvaluable(f"calls {text}" + (f" ({qual})" if qual and qual != text else ""))
        return impl  # type: ignore[no-any-return]

    def _user_function(self, name: str) -> Callable[..., Any]:
        if name not in self.user_functions:
            holder: list[Callable[..., Any]] = []
            # Recursion: register a trampoline first, compile the body once.
            self.user_functions[name] = lambda *a, **k: holder[0](*a, **k)
            holder.append(self.compile_function(self.module.functions[name]))
        return self.user_functions[name]

    def _Call(self, node: ast.Call) -> Fn:
        if any(isinstance(a, ast.Starred) for a in node.args) or any(k.arg is None for k in node.keywords):
            raise NotEvaluable(f"uses * or ** arguments ({describe(node)})")
        if isinstance(node.func, ast.Attribute) and self.module.imports.qualname(node.func) is None:
            return self._method_call(node, node.func)
        fn = self.callee(node.func)
        args = [self.expr(a) for a in node.args]
        keywords = [(str(k.arg), self.expr(k.value)) for k in node.keywords]
        if self.backend.reference and keywords:
            keywords = [(k, v) for k, v in keywords if k != "dtype"]  # reference arrays are object arrays
        if not keywords:
            if len(args) == 1:
                (a,) = args
                return lambda env: fn(a(env))
            if len(args) == 2:
                a, b = args
                return lambda env: fn(a(env), b(env))
            return lambda env: fn(*[g(env) for g in args])
        return lambda env: fn(*[g(env) for g in args], **{k: g(env) for k, g in keywords})

    def _method_call(self, node: ast.Call, func: ast.Attribute) -> Fn:
        """`v.sum()`, `A.dot(b)`, ...: allowed array methods on a value (never on a module)."""
        impl = METHODS.get(func.attr)
        if impl is None:
            raise NotEvaluable(f"calls {describe(func)} (not an allowed array method)")
        method = impl[1] if self.backend.reference else impl[0]
        obj = self.expr(func.value)
        args = [self.expr(a) for a in node.args]
        keywords = [(str(k.arg), self.expr(k.value)) for k in node.keywords if not (self.backend.reference and k.arg == "dtype")]
        return lambda env: method(obj(env), *[g(env) for g in args], **{k: g(env) for k, g in keywords})

    # -- comprehensions --------------------------------------------------------
    def _comprehension(self, elt: ast.expr, generators: list[ast.comprehension]) -> Fn:
        for gen in generators:
            if gen.is_async:
                raise NotEvaluable("uses an async comprehension")
        loops = []
        for gen in generators:
            iterable = self.expr(gen.iter)
            assign = self.bind_target(gen.target)
            conditions = [self.expr(c) for c in gen.ifs]
            loops.append((iterable, assign, conditions))
        element = self.expr(elt)
        budget = self.budget

        def run(env: Env) -> list[Any]:
            out: list[Any] = []

            def level(i: int) -> None:
                if i == len(loops):
                    out.append(element(env))
                    if len(out) > MAX_LENGTH:
                        raise BudgetExceeded("comprehension too long")
                    return
                iterable, assign, conditions = loops[i]
                for item in iterable(env):
                    budget.tick()
                    assign(env, item)
                    if all(c(env) for c in conditions):
                        level(i + 1)

            level(0)
            return out

        return run

    def _GeneratorExp(self, node: ast.GeneratorExp) -> Fn:
        return self._comprehension(node.elt, node.generators)

    def _ListComp(self, node: ast.ListComp) -> Fn:
        return self._comprehension(node.elt, node.generators)

    def bind_target(self, target: ast.expr) -> Callable[[Env, Any], None]:
        """A store into a Name, a tuple of targets, or a subscript."""
        if isinstance(target, ast.Name):
            name = target.id
            self.locals.add(name)

            def store(env: Env, value: Any) -> None:
                env[name] = value

            return store
        if isinstance(target, (ast.Tuple, ast.List)):
            parts = [self.bind_target(t) for t in target.elts]

            def unpack(env: Env, value: Any) -> None:
                values = list(value)
                if len(values) != len(parts):
                    raise ValueError("wrong number of values to unpack")
                for store, item in zip(parts, values):
                    store(env, item)

            return unpack
        if isinstance(target, ast.Subscript):
            container, index = self.expr(target.value), self.expr(target.slice)

            def set_item(env: Env, value: Any) -> None:
                container(env)[index(env)] = value

            return set_item
        raise NotEvaluable(f"assigns to {describe(target)}")
