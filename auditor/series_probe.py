"""Set up model runs of a series: the statements before it, parameters, probe variables."""
from __future__ import annotations

import ast
from collections.abc import Callable

from auditor import patterns as p
from auditor.rule import Context
from auditor.series_model import _TERMS, Machine, Recognised, Unknown, _Break, _Continue, recognise
from auditor.nodes import walk

_FUNCS = (ast.FunctionDef, ast.AsyncFunctionDef)


def preamble(ctx: Context, node: ast.AST) -> tuple[ast.AST | None, list[ast.stmt]]:
    """The enclosing function and the statements that run before `node` in it, outermost first."""
    chunks: list[list[ast.stmt]] = []
    child: ast.AST = node
    for anc in ctx.ancestors(node):
        for field in ("body", "orelse", "finalbody"):
            block = getattr(anc, field, None)
            if isinstance(block, list) and any(s is child for s in block):
                chunks.append(block[: next(i for i, s in enumerate(block) if s is child)])
        if isinstance(anc, _FUNCS):
            return anc, [s for chunk in reversed(chunks) for s in chunk]
        if isinstance(anc, (ast.Lambda, ast.ClassDef, ast.Module)):
            return None, []
        child = anc
    return None, []


def _tests_reading(nodes: list[ast.AST]) -> set[str]:
    """Names read in loop conditions and `if` tests (tolerances, limits)."""
    out: set[str] = set()
    for top in nodes:
        for n in walk(top):
            if isinstance(n, (ast.While, ast.If)):
                out |= p.names_in(n.test)
    return out


def _range_reading(nodes: list[ast.AST]) -> set[str]:
    out: set[str] = set()
    for top in nodes:
        for n in walk(top):
            if isinstance(n, ast.Call) and isinstance(n.func, (ast.Name, ast.Attribute)):
                name = n.func.id if isinstance(n.func, ast.Name) else n.func.attr
                if name in ("range", "arange"):
                    out |= {m for a in n.args for m in p.names_in(a)}
    return out


def parameters(func: ast.AST, nodes: list[ast.AST]) -> tuple[dict[str, object], list[str]]:
    """Model values for the parameters, and the ones that may be the series variable."""
    args = func.args  # type: ignore[attr-defined]
    positional = [*args.posonlyargs, *args.args]
    defaults: dict[str, ast.expr] = dict(zip([a.arg for a in positional][len(positional) - len(args.defaults):], args.defaults))
    defaults.update({a.arg: d for a, d in zip(args.kwonlyargs, args.kw_defaults) if d is not None})
    counts, tests = _range_reading(nodes), _tests_reading(nodes)
    env: dict[str, object] = {}
    candidates: list[str] = []
    for a in [*positional, *args.kwonlyargs]:
        default = p.literal_number(defaults[a.arg]) if a.arg in defaults else None
        if a.arg in counts:
            env[a.arg] = max(_TERMS, default) if isinstance(default, int) else _TERMS
        elif isinstance(default, (int, float)):
            env[a.arg] = default
        elif a.arg in tests and a.arg not in {n for top in nodes for n in _read_in_arithmetic(top)}:
            env[a.arg] = 1e-17
        else:
            candidates.append(a.arg)
    return env, candidates


def _read_in_arithmetic(node: ast.AST) -> set[str]:
    """Names read inside arithmetic (not only in comparisons)."""
    out: set[str] = set()
    for n in walk(node):
        if isinstance(n, ast.BinOp):
            out |= p.names_in(n)
    return out


def _machine(ctx: Context, stmts: list[ast.stmt], env: dict[str, object]) -> Machine:
    """A machine after the preamble; statements it cannot model leave their targets unknown."""
    m = Machine(ctx, env)
    for stmt in stmts:
        try:
            m.statement(stmt)
        except (_Break, _Continue):
            raise Unknown("the function leaves before the series") from None
        except (Unknown, ArithmeticError, ValueError, TypeError):
            for n in walk(stmt):
                if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Store):
                    m.env.pop(n.id, None)
    return m


def _runner(ctx: Context, anchor: ast.AST, body: Callable[[Machine], object]) -> Recognised | None:
    func, stmts = preamble(ctx, anchor)
    if func is None:
        return None
    env, params = parameters(func, [anchor, *stmts])
    local = _local_arguments(anchor, stmts)

    def run(var: str, x: float) -> object:
        start = dict(env)
        start.update({c: 0.5 for c in params})
        if var in params:
            start[var] = x
        m = _machine(ctx, stmts, start)
        if var in local:
            m.env[var] = x  # a local argument (`x = t / tau`) is probed after the lines that compute it
        return body(m)

    return recognise(run, [*local, *params])


def _local_arguments(anchor: ast.AST, stmts: list[ast.stmt]) -> list[str]:
    """Locals the series reads but does not change, computed before it from other variables."""
    stored = {n.id for n in walk(anchor) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Store)}
    read = p.names_in(anchor) - stored
    out = []
    for stmt in stmts:
        if isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], ast.Name):
            name = stmt.targets[0].id
            if name in read and p.has_free_names(stmt.value) and name not in out:
                out.append(name)
    return out


def recognise_loop(ctx: Context, loop: ast.For | ast.While, acc: str) -> Recognised | None:
    """Which known function the accumulator holds after the loop, if any."""

    def body(m: Machine) -> object:
        m.statement(loop)
        return m.env.get(acc)

    return _runner(ctx, loop, body)


def recognise_generator(ctx: Context, call: ast.Call, gen: ast.GeneratorExp | ast.ListComp) -> Recognised | None:
    """`sum(term for k in range(...))`: which known function the sum equals, if any."""
    if len(gen.generators) != 1 or gen.generators[0].ifs or not isinstance(gen.generators[0].target, ast.Name):
        return None
    index = gen.generators[0].target.id
    anchor = _statement_of(ctx, call)

    def body(m: Machine) -> object:
        total: object = 0
        for k in m.range_of(gen.generators[0].iter):
            m.env[index] = k
            total = total + m.value(gen.elt)  # type: ignore[operator]
        return total

    return _runner(ctx, anchor, body) if anchor is not None else None


def recognise_array(
    ctx: Context, call: ast.AST, term: ast.expr, aranges: dict[str, ast.Call], inline: list[ast.Call]
) -> Recognised | None:
    """`np.sum(term)` over index arrays (`k = np.arange(...)` or inline): which known function, if any."""
    anchor = _statement_of(ctx, call)

    def body(m: Machine) -> object:
        m.arrays = {name: m.range_of(c) for name, c in aranges.items()}
        m.array_mode = True
        sizes = {len(r) for r in m.arrays.values()} | {len(m.range_of(c)) for c in inline}
        if len(sizes) != 1:
            raise Unknown("array sizes")
        total: object = 0
        for i in range(sizes.pop()):
            m.position = i
            total = total + m.value(term)  # type: ignore[operator]
        return total

    return _runner(ctx, anchor, body) if anchor is not None and (aranges or inline) else None


def _statement_of(ctx: Context, node: ast.AST) -> ast.stmt | None:
    if isinstance(node, ast.stmt):
        return node
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.stmt):
            return anc
    return None
