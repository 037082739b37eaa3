"""Cut a measurable unit out of a parsed file: an expression (locals inlined) or the enclosing
function of a loop; compile it for both backends into a Shadow."""
from __future__ import annotations

import ast
import copy
from collections.abc import Callable, Sequence
from typing import Any
from dataclasses import dataclass, field

from auditor.model import Span
from auditor.numerics.backends import FAST, FLOAT, REFERENCE
from auditor.numerics.batch import compile_batch
from auditor.numerics.dual import compile_dual
from auditor.numerics.budget import Budget, NotEvaluable
from auditor.numerics.interp import SourceModule, Tracer
from auditor.numerics.run import Shadow
from auditor.numerics.statements import UnitCompiler, compile_expression
from auditor.resolve import collect_imports
from auditor.rule import Context
from auditor.series import accumulations

#: Rules whose unit is the enclosing function (loops and series), not the flagged expression.
SERIES_RULES = frozenset({"alternating-series", "divergent-series"})
FUNCTION_RULES = frozenset({
    "alternating-series", "divergent-series", "naive-accumulation", "step-accumulation",
    "low-precision-accumulator",
})
_INLINE_DEPTH = 6
_SELF = ("self", "cls")


@dataclass(slots=True)
class Unit:
    """What gets measured: an expression over its free names, or a function over its parameters."""

    node: ast.expr | ast.FunctionDef
    inputs: list[str]  #: free names of the expression, or the function's parameters
    function: ast.FunctionDef | None  #: the enclosing function (domains, call sites, defaults)
    trace: dict[int, bool] = field(default_factory=dict)  #: series term nodes -> negate

    @property
    def is_function(self) -> bool:
        return isinstance(self.node, ast.FunctionDef)


def source_module(tree: ast.Module) -> SourceModule:
    """Imports, module-level functions and module-level literal constants of a file."""
    module = SourceModule(collect_imports(tree))
    counts: dict[str, int] = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):
            counts[node.id] = counts.get(node.id, 0) + 1
    for stmt in tree.body:
        if isinstance(stmt, ast.FunctionDef):
            module.functions[stmt.name] = stmt
        elif isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], ast.Name):
            name = stmt.targets[0].id
            if counts.get(name) == 1 and _constant_like(stmt.value):
                module.constants[name] = stmt.value
    return module


def _constant_like(expr: ast.expr) -> bool:
    """Numbers and arithmetic on numbers and constant attributes (math.pi), no calls of names."""
    for node in ast.walk(expr):
        if isinstance(node, ast.Constant) and not isinstance(node.value, (int, float, complex)):
            return False
        if isinstance(node, (ast.Lambda, ast.Await, ast.Yield, ast.Starred)):
            return False
    return True


def char_span(node: ast.AST, lines: Sequence[str]) -> Span | None:
    """The 1-based character span of a node (ast columns are UTF-8 byte offsets)."""
    if not hasattr(node, "lineno") or getattr(node, "end_lineno", None) is None:
        return None

    def chars(line_no: int, byte_col: int) -> int:
        text = lines[line_no - 1] if 1 <= line_no <= len(lines) else ""
        return len(text.encode("utf-8")[:byte_col].decode("utf-8", "replace")) + 1

    return Span(node.lineno, chars(node.lineno, node.col_offset), node.end_lineno,  # type: ignore[attr-defined]
                chars(node.end_lineno, node.end_col_offset))  # type: ignore[attr-defined]


def locate(tree: ast.Module, span: Span, lines: Sequence[str], inside: bool = False) -> ast.AST | None:
    """The outermost node whose span is exactly `span`; with `inside`, failing that, the
    outermost node lying within it (a rewrite in parentheses, or several statements)."""
    for node in ast.walk(tree):  # breadth first: outer nodes come first
        if getattr(node, "lineno", None) == span.line and char_span(node, lines) == span:
            return node
    if not inside:
        return None
    for node in ast.walk(tree):
        got = char_span(node, lines) if hasattr(node, "lineno") else None
        if got is not None and (got.line, got.column) >= (span.line, span.column) \
                and (got.end_line, got.end_column) <= (span.end_line, span.end_column):
            return node
    return None


def enclosing_function(ctx: Context, node: ast.AST) -> ast.FunctionDef | None:
    if isinstance(node, ast.FunctionDef):
        return node
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.FunctionDef):
            return anc
        if isinstance(anc, (ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            return None
    return None


def _bound_inside(expr: ast.AST) -> set[str]:
    """Names bound within an expression (comprehension targets, walrus)."""
    out: set[str] = set()
    for node in ast.walk(expr):
        if isinstance(node, ast.comprehension):
            out |= {n.id for n in ast.walk(node.target) if isinstance(n, ast.Name)}
        elif isinstance(node, ast.NamedExpr):
            out.add(node.target.id)
    return out


def _known(module: SourceModule, name: str) -> bool:
    """Resolvable without an input: module constant or function, import, or builtin."""
    from auditor.numerics.allow import is_builtin

    return (name in module.constants or name in module.functions or name in module.imports.bindings
            or is_builtin(name) or module.imports.qualname(ast.Name(id=name)) is not None)


def _compiles(value: ast.expr, module: SourceModule) -> bool:
    compiler = UnitCompiler(FLOAT, module, Budget())
    free = {n.id for n in ast.walk(value) if isinstance(n, ast.Name)}
    try:
        compile_expression(compiler, value, sorted(free))
        return True
    except (NotEvaluable, KeyError, RecursionError):
        return False


def inline(ctx: Context, expr: ast.expr, module: SourceModule, depth: int = _INLINE_DEPTH) -> ast.expr:
    """A copy of `expr` with single-assignment locals replaced by their values (ctx.value_of),
    so `e = np.exp(x); e - 1` is measured as `np.exp(x) - 1` over x."""
    skip = _bound_inside(expr)

    def rebuild(node: ast.AST, depth: int) -> ast.AST:
        if isinstance(node, ast.Name) and isinstance(node.ctx, ast.Load) and node.id not in skip and depth > 0:
            if not _known(module, node.id):
                value = ctx.value_of(node)
                if value is not None and _compiles(value, module):
                    return rebuild(value, depth - 1)
            return copy.copy(node)
        new = copy.copy(node)
        for name, value in ast.iter_fields(node):
            if isinstance(value, list):
                setattr(new, name, [rebuild(v, depth) if isinstance(v, ast.AST) else v for v in value])
            elif isinstance(value, ast.AST):
                setattr(new, name, rebuild(value, depth))
        return new

    return rebuild(expr, depth)  # type: ignore[return-value]


def free_names(expr: ast.expr, module: SourceModule) -> list[str]:
    skip = _bound_inside(expr)
    callees = {id(n.func) for n in ast.walk(expr) if isinstance(n, ast.Call)}
    names = {
        n.id for n in ast.walk(expr)
        if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load) and n.id not in skip
        and id(n) not in callees and not _known(module, n.id)
    }
    return sorted(names)


def _sum_terms(ctx: Context, expr: ast.expr) -> dict[int, bool]:
    """For `sum(generator)` / `np.sum(array)`, the node whose values are the series terms."""
    if not isinstance(expr, ast.Call) or not expr.args:
        return {}
    family = ctx.family(expr)
    if not (family in ("sum", "fsum") or (isinstance(expr.func, ast.Name) and expr.func.id == "sum")):
        return {}
    arg = expr.args[0]
    return {id(arg.elt if isinstance(arg, (ast.GeneratorExp, ast.ListComp)) else arg): False}


def _loop_terms(loop: ast.For | ast.While) -> dict[int, bool]:
    found = accumulations(loop)
    if not found:
        return {}
    target = found[0].target
    return {id(a.term): a.subtract for a in found if a.target == target}


def build_unit(ctx: Context, node: ast.AST, module: SourceModule, rule: str = "") -> Unit:
    """The unit for a flagged node, or NotEvaluable saying why there is none. Expressions are
    their own unit, except for loop rules (the enclosing function is); series rules trace terms."""
    function = enclosing_function(ctx, node)
    series = rule in SERIES_RULES or not rule
    if isinstance(node, ast.expr) and (rule not in FUNCTION_RULES or function is None or _sum_terms(ctx, node)):
        expr = inline(ctx, node, module)
        return Unit(expr, free_names(expr, module), function, _sum_terms(ctx, expr) if series else {})
    if function is None:
        raise NotEvaluable("the flagged statement is not inside a function (nothing to call it with)")
    loops = [node] if isinstance(node, (ast.For, ast.While)) else [a for a in ctx.ancestors(node) if isinstance(a, (ast.For, ast.While))][:1]
    trace = _loop_terms(loops[0]) if loops and series else {}
    params = [a.arg for a in (*function.args.posonlyargs, *function.args.args, *function.args.kwonlyargs)]
    return Unit(function, params, function, trace)


def compile_shadow(unit: Unit, module: SourceModule, seconds: float = 2.0) -> Shadow:
    """Compile the unit once per backend (NotEvaluable when something is not allowed)."""
    budget = Budget(seconds)
    tracers = Tracer(dict(unit.trace)), Tracer(dict(unit.trace))
    fns = [_compiled(unit, UnitCompiler(backend, module, budget, tracer)) for backend, tracer in zip((FLOAT, REFERENCE), tracers)]
    try:
        fast = _compiled(unit, UnitCompiler(FAST, module, budget, Tracer()))
    except (NotEvaluable, RecursionError):
        fast = None  # something without an MPFR twin: the mpmath reference alone
    return Shadow(fns[0], fns[1], tuple(unit.inputs), budget, tracers[0], tracers[1], fast_fn=fast,
                  batches=_batches(unit, module, budget, fast is not None))


def _batches(unit: Unit, module: SourceModule, budget: Budget, fast: bool) -> tuple[Any, Any, Any, Any] | None:
    """Column-wise twins of an expression unit: float, mpmath, MPFR, MPFR with gradients
    (none for functions, traced sums, other syntax; no gradient twin without derivative rules)."""
    if isinstance(unit.node, ast.FunctionDef) or unit.trace:
        return None
    try:
        float_fn, ref_fn = (compile_batch(UnitCompiler(b, module, budget), unit.node, unit.inputs) for b in (FLOAT, REFERENCE))
        fast_fn = compile_batch(UnitCompiler(FAST, module, budget), unit.node, unit.inputs) if fast else None
    except (NotEvaluable, RecursionError):
        return None
    try:
        dual_fn = compile_dual(UnitCompiler(FAST, module, budget), unit.node, unit.inputs, unit.inputs) if fast else None
    except (NotEvaluable, RecursionError):
        dual_fn = None
    return float_fn, ref_fn, fast_fn, dual_fn


def _compiled(unit: Unit, compiler: UnitCompiler) -> Callable[..., Any]:
    if isinstance(unit.node, ast.FunctionDef):
        return compiler.compile_function(unit.node)
    return compile_expression(compiler, unit.node, unit.inputs)
