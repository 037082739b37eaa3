"""Rewrite texts for series findings: the library call a series sums to, or a smallest-term stop."""
from __future__ import annotations

import ast

from auditor import patterns as p
from auditor.rule import Context
from auditor.nodes import walk

#: known series -> (function name per module, argument template)
LIBRARY: dict[str, tuple[str, str]] = {
    "exp_neg": ("exp", "-{x}"),
    "exp_neg_sq": ("exp", "-{x} * {x}"),
    "sin": ("sin", "{x}"),
    "cos": ("cos", "{x}"),
    "atan": ("atan", "{x}"),
    "log1p": ("log1p", "{x}"),
    "j0": ("j0", "{x}"),
}
#: series whose library function lives in one module only
_ONLY_IN = {"j0": "scipy.special"}
_NUMPY_NAMES = {"atan": "arctan"}
_CMATH_HAS = {"exp", "sin", "cos", "atan"}
#: what each series is, for messages
DESCRIBED: dict[str, str] = {
    "exp_neg": "the Taylor series of e^-x",
    "exp_neg_sq": "the Taylor series of e^(-x^2)",
    "sin": "the Taylor series of sin x",
    "cos": "the Taylor series of cos x",
    "atan": "the Maclaurin series of atan x",
    "log1p": "the Mercator series of log(1 + x)",
    "j0": "the power series of the Bessel function J0",
}


def module_for(ctx: Context, node: ast.AST) -> str:
    """The library the file computes with: cmath when the code is complex, else math, else numpy."""
    scope = ctx.scope(node)
    complex_literal = any(isinstance(n, ast.Constant) and isinstance(n.value, complex) for n in walk(scope))
    if complex_literal or any(p.callee_module(ctx, n) == "cmath" for n in walk(scope)):
        return "cmath"
    if ctx.imports.imports_any("math"):
        return "math"
    if ctx.imports.imports_any("numpy"):
        return "numpy"
    return "cmath" if ctx.imports.imports_any("cmath") else "math"


def library_call(ctx: Context, kind: str, var: str, module: str, negated: bool = False) -> tuple[str, tuple[str, ...]] | None:
    """`math.exp(-x)` (in the file's own import style) for a recognised series, with imports needed."""
    func, template = LIBRARY[kind]
    module = _ONLY_IN.get(kind, module)
    if module == "numpy":
        func = _NUMPY_NAMES.get(func, func)
    elif module == "cmath" and func not in _CMATH_HAS:
        return None
    spelling, imports = p.spelled(ctx, module, func)
    return f"{'-' if negated else ''}{spelling}({template.format(x=var)})", imports


def read_after(ctx: Context, loop: ast.stmt, names: set[str]) -> bool:
    """True when code after the loop (in its scope) reads one of `names`."""
    end = (loop.end_lineno or loop.lineno, loop.end_col_offset or 0)
    for n in walk(ctx.scope(loop)):
        if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load) and n.id in names:
            if (n.lineno, n.col_offset) >= end:
                return True
    return False


def fresh(ctx: Context, node: ast.AST, base: str) -> str:
    """A name not used anywhere in the scope of `node`."""
    used = {n.id for n in walk(ctx.scope(node)) if isinstance(n, ast.Name)}
    name, i = base, 2
    while name in used:
        name, i = f"{base}_{i}", i + 1
    return name


def _whole_lines(ctx: Context, stmt: ast.stmt) -> bool:
    """The statement sits alone on its lines (no `;` neighbours), so lines can be swapped."""
    lines = ctx.source.splitlines()
    first, last = lines[stmt.lineno - 1], lines[(stmt.end_lineno or stmt.lineno) - 1]
    after = last[stmt.end_col_offset or 0 :].strip()
    return first[: stmt.col_offset].strip() == "" and (after == "" or after.startswith("#"))


def splice(ctx: Context, loop: ast.stmt, stmt: ast.stmt, new: list[str]) -> str | None:
    """The loop's text with `stmt`'s lines replaced by `new` (lines without indentation)."""
    if not _whole_lines(ctx, stmt):
        return None
    lines = ctx.source.splitlines()
    indent = lines[stmt.lineno - 1][: stmt.col_offset]
    out = lines[loop.lineno - 1 : stmt.lineno - 1]
    out += [indent + line for line in new]
    out += lines[(stmt.end_lineno or stmt.lineno) : loop.end_lineno]
    out[0] = out[0][loop.col_offset :]
    if loop.end_lineno == (stmt.end_lineno or stmt.lineno):
        return "\n".join(out)
    out[-1] = out[-1][: loop.end_col_offset]
    return "\n".join(out)


def guard_recurrence(ctx: Context, loop: ast.stmt, stmt: ast.stmt, term: str) -> str | None:
    """Replace `t *= r` by `t_next = t * r; if abs(t_next) > abs(t): break; t = t_next`."""
    if isinstance(stmt, ast.AugAssign) and isinstance(stmt.op, (ast.Mult, ast.Div)):
        op = "*" if isinstance(stmt.op, ast.Mult) else "/"
        value = f"{term} {op} {p.operand_text(ctx, stmt.value)}"
    elif isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], ast.Name):
        value = p.text(ctx, stmt.value)
    else:
        return None
    nxt = fresh(ctx, loop, f"{term}_next")
    return splice(ctx, loop, stmt, [f"{nxt} = {value}", f"if abs({nxt}) > abs({term}):", "    break", f"{term} = {nxt}"])


def guard_explicit(ctx: Context, loop: ast.stmt, stmt: ast.stmt, acc: str, term: ast.expr, subtract: bool) -> str | None:
    """Name the term, stop before adding one larger than the previous term, keep the accumulation."""
    if isinstance(term, ast.Name):
        name, lines = term.id, []
    else:
        name = fresh(ctx, loop, "term")
        lines = [f"{name} = {p.text(ctx, term)}"]
    prev = fresh(ctx, loop, "prev_term")
    lines += [f"if abs({name}) > abs({prev}):", "    break", f"{prev} = {name}", f"{acc} {'-' if subtract else '+'}= {name}"]
    body = splice(ctx, loop, stmt, lines)
    if body is None:
        return None
    indent = " " * loop.col_offset
    return f'{prev} = float("inf")\n{indent}{body}'
