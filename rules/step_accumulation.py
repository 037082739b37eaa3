"""Advancing a clock by repeated addition, `t += dt` in a loop, drifts away from `t0 + k*dt`.

A step like 0.1 is not a binary fraction, and each addition rounds again, so after k steps
t carries an error that grows like k * eps * |t|: adding 0.1 ten times gives
0.9999999999999999, a loop `while t < 1.0` then runs one step too many, and long runs put
sample times visibly off the grid. Computing t from the step count, t = t0 + k * dt, makes
one rounding per value, independent of k. Integer steps, steps that are exact binary
fractions (0.5, 0.25) and data-dependent increments are not flagged. A value is taken to be an
integer when it is a slice bound (`a[:n]` raises on a float) or an element of a shape tuple;
date steps (`timedelta`) count whole microseconds and are exact. A value that the loop also
advances by other amounts (`pos -= title_gap` beside `pos -= row_step`) is a running sum of
mixed increments, not a grid: no t0 + k*dt exists to compute it from.
"""
from __future__ import annotations

import ast
import re
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.nodes import children

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
#: names that say "this is a step or a clock" when no value is visible
_STEP_NAME = re.compile(r"^(d[a-z]{1,5}(_[a-z0-9]+)?|h|h_[a-z0-9]+|step|.*_step|step_.*|tstep|delta|delta_.*|increment|spacing)$")
#: shape tuples hold ints (`x.shape`, `grid_shape`, `shape`)
_SHAPE_NAME = re.compile(r"^(shape|.*_shape|shape_.*)$")
#: date and time steps are whole counts of a unit (microseconds, nanoseconds): exact
_DATE_STEPS = ("datetime.timedelta", "numpy.timedelta64", "pandas.Timedelta", "pandas.DateOffset")
_CLOCK_NAME = re.compile(r"^(t|time|.*_time|time_.*|elapsed|clock|now|t_.*|.*_t|epoch_t)$")


def body_nodes(loop: ast.For | ast.While) -> Iterator[ast.AST]:
    stack: list[ast.AST] = [*loop.body, *loop.orelse]
    while stack:
        node = stack.pop()
        yield node
        stack.extend(c for c in children(node) if not isinstance(c, _NESTED))


def changing_names(loop: ast.For | ast.While) -> set[str]:
    """Names that change from pass to pass (loop targets and anything assigned in the body)."""
    names = {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)} if isinstance(loop, ast.For) else set()
    for node in body_nodes(loop):
        if isinstance(node, (ast.Assign, ast.AugAssign, ast.AnnAssign, ast.For, ast.NamedExpr)):
            targets = node.targets if isinstance(node, ast.Assign) else [node.target]
            names |= {n.id for t in targets for n in _bound(t)}
    return names


def _bound(target: ast.AST) -> Iterator[ast.Name]:
    """Names a target rebinds (`t`, `a, b`), not the bases of `self.t` or `buf[i]`."""
    if isinstance(target, ast.Name):
        yield target
    elif isinstance(target, (ast.Tuple, ast.List)):
        for elt in target.elts:
            yield from _bound(elt)
    elif isinstance(target, ast.Starred):
        yield from _bound(target.value)


def step_update(node: ast.AST) -> tuple[ast.expr, ast.expr, bool] | None:
    """(target, step, subtract) for `t += dt`, `t -= dt`, `t = t + dt`, `t = dt + t`."""
    if isinstance(node, ast.AugAssign) and isinstance(node.op, (ast.Add, ast.Sub)):
        return node.target, node.value, isinstance(node.op, ast.Sub)
    if isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.value, ast.BinOp):
        target, v = node.targets[0], node.value
        if isinstance(v.op, (ast.Add, ast.Sub)) and ast.unparse(v.left) == ast.unparse(target):
            return target, v.right, isinstance(v.op, ast.Sub)
        if isinstance(v.op, ast.Add) and ast.unparse(v.right) == ast.unparse(target):
            return target, v.left, False
    return None


def integer_start(ctx: Context, loop: ast.For | ast.While, target: ast.expr) -> bool:
    """True when the value last assigned to `target` before the loop is an integer literal."""
    if not isinstance(target, ast.Name):
        return False
    before = [b for b in ctx.flow(ctx.scope(loop)).of(target.id) if (b.line, b.column) < (loop.lineno, loop.col_offset)]
    return bool(before) and before[-1].kind == "assign" and before[-1].value is not None \
        and p.is_integer_literal(before[-1].value)


def slice_bound(scope: ast.AST, key: str) -> bool:
    """True when `key` is read in a slice bound (`a[:n]`, `a[j*n:(j+1)*n]`): lists and arrays accept only ints there."""
    for node in ast.walk(scope):
        if isinstance(node, ast.Slice):
            for bound in (node.lower, node.upper, node.step):
                if bound is not None and key in _integer_arithmetic_names(bound):
                    return True
    return False


def _integer_arithmetic_names(expr: ast.AST) -> set[str]:
    """Names (as source text) combined only by + - * // % with other names and int literals."""
    if isinstance(expr, (ast.Name, ast.Attribute)):
        return {ast.unparse(expr)}
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.FloorDiv, ast.Mod)):
        return _integer_arithmetic_names(expr.left) | _integer_arithmetic_names(expr.right)
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, ast.USub):
        return _integer_arithmetic_names(expr.operand)
    return set()


def shape_element(ctx: Context, step: ast.expr) -> bool:
    """`for dim in x.shape` / `for k, dim in enumerate(grid_shape)`: the step is one entry of a shape tuple."""
    if not isinstance(step, ast.Name):
        return False
    b = ctx.binding(step)
    if b is None or b.kind != "loop" or not isinstance(b.stmt, (ast.For, ast.comprehension)):
        return False
    loop, it = b.stmt, b.stmt.iter
    if isinstance(it, ast.Call) and ctx.qualname(it.func) is None and isinstance(it.func, ast.Name) \
            and it.func.id == "enumerate" and it.args:
        elts = loop.target.elts if isinstance(loop.target, ast.Tuple) else []
        if len(elts) != 2 or not isinstance(elts[1], ast.Name) or elts[1].id != step.id:
            return False
        it = it.args[0]
    elif not (isinstance(loop.target, ast.Name) and loop.target.id == step.id):
        return False
    name = it.attr if isinstance(it, ast.Attribute) else it.id if isinstance(it, ast.Name) else ""
    return bool(_SHAPE_NAME.match(name))


def integer_typed(ctx: Context, scope: ast.AST, target: ast.expr, step: ast.expr) -> bool:
    """The code itself says the clock or its step is an int (or an exact date step)."""
    if shape_element(ctx, step) or slice_bound(scope, ast.unparse(step)) or slice_bound(scope, ast.unparse(target)):
        return True
    origin = ctx.origin(step)
    return isinstance(origin, ast.Call) and ctx.qualname(origin.func) in _DATE_STEPS


def mixed_increments(loop: ast.For | ast.While, stmt: ast.stmt, target: ast.expr, step: ast.expr) -> bool:
    """True when the loop also moves the value by a different amount (or scales it): a running sum, not a grid."""
    key, amount = ast.unparse(target), ast.unparse(step)
    for node in body_nodes(loop):
        if node is stmt or not isinstance(node, (ast.AugAssign, ast.Assign)):
            continue
        targets = node.targets if isinstance(node, ast.Assign) else [node.target]
        if key not in {ast.unparse(t) for t in targets}:
            continue
        other = step_update(node)
        if other is not None and ast.unparse(other[1]) == amount:
            continue  # the same step, maybe the other direction (`pos -= dpos` / `pos += dpos`)
        if isinstance(node, ast.AugAssign) or any(ast.unparse(n) == key for n in ast.walk(node.value)):
            return True  # a second increment, or the old value rescaled; plain resets are a new t0
    return False


def drifting_step(ctx: Context, target: ast.expr, step: ast.expr) -> bool:
    """True when the step is visibly a float that is not an exact binary fraction."""
    value = p.constant_value(ctx, step)
    if value is not None:
        return not float(value * 2**20).is_integer()
    if p.is_integer_valued(ctx, step):
        return False
    if any(isinstance(n, ast.BinOp) and isinstance(n.op, ast.Div) for n in ast.walk(ctx.origin(step))):
        return True
    name = step.attr if isinstance(step, ast.Attribute) else step.id if isinstance(step, ast.Name) else ""
    clock = target.attr if isinstance(target, ast.Attribute) else target.id if isinstance(target, ast.Name) else ""
    return bool(_STEP_NAME.match(name)) and bool(_CLOCK_NAME.match(clock) or name.startswith("d"))


def read_elsewhere(ctx: Context, stmt: ast.stmt, target: ast.expr) -> bool:
    """The clock is used (in the loop or after), not only advanced."""
    key = ast.unparse(target)
    for n in ast.walk(ctx.scope(stmt)):
        if isinstance(n, (ast.Name, ast.Attribute)) and isinstance(n.ctx, ast.Load) and ast.unparse(n) == key:
            if not any(n is m for m in ast.walk(stmt)):
                return True
    return False


def step_count(loop: ast.For) -> str | None:
    """How many steps have been taken after this pass: `i + 1` for range(n), `i` for range(1, ...)."""
    it, target = loop.iter, loop.target
    if not isinstance(it, ast.Call) or not isinstance(it.func, ast.Name) or any(k.arg != "start" for k in it.keywords):
        return None
    if it.func.id == "range" and isinstance(target, ast.Name) and 1 <= len(it.args) <= 2:
        start = p.literal_number(it.args[0]) if len(it.args) == 2 else 0
        index = target.id
    elif it.func.id == "enumerate" and isinstance(target, ast.Tuple) and isinstance(target.elts[0], ast.Name):
        given = it.args[1] if len(it.args) > 1 else next((k.value for k in it.keywords if k.arg == "start"), None)
        start = p.literal_number(given) if given is not None else 0
        index = target.elts[0].id
    else:
        return None
    if start == 0:
        return f"({index} + 1)"
    if start == 1:
        return index
    return None


def simple_start(expr: ast.expr) -> bool:
    """Numbers, names and arithmetic on them: the same value when re-read inside the loop."""
    return all(isinstance(n, (ast.Constant, ast.Name, ast.Load, ast.BinOp, ast.UnaryOp, ast.operator, ast.unaryop))
               for n in ast.walk(expr))


def counted_text(ctx: Context, stmt: ast.stmt, loop: ast.For | ast.While, target: ast.expr, step: ast.expr,
                 subtract: bool) -> str | None:
    """`t = t0 + (i + 1) * dt` when the loop index counts the steps and t starts from a fixed t0."""
    if not isinstance(loop, ast.For) or not isinstance(target, ast.Name) or stmt not in loop.body:
        return None
    count = step_count(loop)
    if count is None or any(isinstance(n, (ast.Continue, ast.Break)) for n in body_nodes(loop)):
        return None
    index = count.strip("()").split(" ")[0]
    if index in changing_names(loop) - {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)}:
        return None
    flow = ctx.flow(ctx.scope(stmt))
    inside = [b for b in flow.of(target.id) if loop.lineno <= b.line <= (loop.end_lineno or loop.lineno)]
    before = [b for b in flow.of(target.id) if (b.line, b.column) < (loop.lineno, loop.col_offset)]
    if len(inside) != 1 or not before or before[-1].kind != "assign" or before[-1].value is None:
        return None
    start = before[-1].value
    if ctx.enclosing_loops(before[-1].stmt) != ctx.enclosing_loops(loop) or p.names_in(start) & changing_names(loop):
        return None
    rebound = any(before[-1].line < b.line <= loop.lineno for n in p.names_in(start) for b in flow.of(n))
    if not simple_start(start) or target.id in p.names_in(start) or rebound:
        return None  # `t = clock()` would be called again on every pass: t0 must be a plain value
    sign = "-" if subtract else "+"
    scaled = f"{count} * {p.operand_text(ctx, step)}" if count != "1" else p.text(ctx, step)
    if p.is_number(start, 0) and not subtract:
        return f"{target.id} = {scaled}"
    return f"{target.id} = {p.operand_text(ctx, start)} {sign} {scaled}"


class StepAccumulation(Rule):
    id = "step-accumulation"
    title = "time or position advanced by repeated addition"
    severity = Severity.NOTE
    summary = "t += dt in a loop drifts from t0 + k*dt; compute t from the step count"
    node_types = (ast.AugAssign, ast.Assign)
    method = (
        "Compute grid points from the index, t_k = t0 + k*h, instead of by recurrence (common practice; error "
        "growth of recursive summation in N. J. Higham, Accuracy and Stability of Numerical Algorithms, "
        "2nd ed., SIAM 2002, section 4.2, from memory)"
    )
    rewrite_template = "{t} = {t0} + (i + 1) * {dt}"
    examples = (
        Example("import math\ndef trace(n, dt):\n    t = 0.0\n    out = []\n    for i in range(n):\n        t += dt\n"
                "        out.append(math.sin(t))\n    return out\n", True, "t = (i + 1) * dt"),
        Example("def ticks(t0, n):\n    t = t0\n    for k in range(1, n + 1):\n        t = t + 0.1\n        print(t)\n",
                True, "t = t0 + k * 0.1"),
        Example("def log(clock, n, dt):\n    t = clock.now()\n    for i in range(n):\n        t += dt\n        print(t)\n",
                True, note="t0 is a call: re-reading it each pass would not be t0; advice only"),
        Example("def run(sim, t_end, dt):\n    t = 0.0\n    while t < t_end:\n        sim.advance(dt)\n"
                "        t += dt\n    return sim\n", True),
        Example("def f(xs):\n    i = 0\n    for x in xs:\n        i += 1\n    return i\n", False),
        Example("def f(n, dt):\n    out = []\n    for i in range(n):\n        out.append(i * dt)\n    return out\n", False),
        Example("def f(n):\n    t = 0.0\n    for i in range(n):\n        t += 0.5\n        print(t)\n", False,
                note="0.5 is exact in binary"),
        Example("def probe(run, losses):\n    for beta in losses:\n        run(beta)\n        beta -= 1.0e-5\n"
                "        run(beta)\n", False, note="field trial regression: the loop variable is rebound each pass"),
        Example("def pages(table, max_lines, n_header, keys):\n    delta_lines = max_lines - n_header\n    i0 = 0\n"
                "    for key in keys:\n        print(table[i0:i0 + delta_lines])\n        i0 += delta_lines\n", False,
                note="field trial regression: an integer row index"),
        Example("def layout(ax, groups, top, bottom, title_gap, n_rows):\n    row_step = (top - bottom) / n_rows\n"
                "    y = top\n    for g in groups:\n        y -= title_gap\n        for label in g:\n"
                "            ax.text(0.0, y, label)\n            y -= row_step\n", False,
                note="also moved by a second amount: a running sum of mixed increments, no t0 + k*dt (field trial)"),
        Example("def sweep(n, lo, hi, up):\n    dy = (hi - lo) / n\n    y = lo\n    for i in range(n):\n        if up:\n"
                "            y += dy\n        else:\n            y -= dy\n        print(y)\n", True,
                note="the same step in either direction is still a clock"),
        Example("def extent(arr, origin, reps):\n    for k, dim in enumerate(arr.shape):\n        edge = origin\n"
                "        for r in range(reps):\n            edge += dim\n            print(k, edge)\n", False,
                note="an entry of a shape tuple is an int (field trial)"),
        Example("def windows(signal, first, dlen, n):\n    out = []\n    stop = first\n    for i in range(n):\n"
                "        stop += dlen\n        out.append(signal[first:stop])\n    return out\n", False,
                note="a slice bound must be an int, so the sum is exact (field trial)"),
        Example("import datetime\ndef stamps(start, n):\n    t = start\n    step = datetime.timedelta(minutes=5)\n"
                "    out = []\n    for i in range(n):\n        out.append(t)\n        t += step\n    return out\n", False,
                note="a timedelta counts whole microseconds: exact"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        found = step_update(node)
        loops = ctx.enclosing_loops(node)
        if found is None or not loops or not isinstance(node, ast.stmt):
            return
        target, step, subtract = found
        if not isinstance(target, (ast.Name, ast.Attribute)) or p.names_in(step) & changing_names(loops[0]):
            return
        if isinstance(target, ast.Name) and any(
            isinstance(loop, ast.For) and any(isinstance(n, ast.Name) and n.id == target.id for n in ast.walk(loop.target))
            for loop in loops
        ):
            return  # `for x in xs: x -= h`: the loop rebinds x every pass, nothing accumulates
        if p.constant_value(ctx, step) is None and integer_start(ctx, loops[-1], target):
            return  # `i0 = 0 ... i0 += delta`: an integer position stepped by an unknown (integer) amount
        if not drifting_step(ctx, target, step) or not read_elsewhere(ctx, node, target):
            return
        if integer_typed(ctx, ctx.scope(node), target, step) or mixed_increments(loops[-1], node, target, step):
            return
        loop = loops[0]
        rewrite = counted_text(ctx, node, loop, target, step, subtract)
        guard = isinstance(loop, ast.While) and ast.unparse(target) in {ast.unparse(n) for n in ast.walk(loop.test)}
        fix = rewrite or ("t = t0 + k * dt with a step counter k, t0 the value before the loop "
                          "(advice, not verified: the loop has no index counting the steps, or t0 is not a plain value)")
        extra = "; `while` tests on the drifting value can take one step too many or too few" if guard else ""
        yield Hit(node, f"each addition rounds again, so after k steps the value is off by up to k*eps*|t| "
                  f"(0.1 added ten times gives 0.9999999999999999){extra}; use {fix}",
                  severity=Severity.WARNING if guard else None, rewrite=rewrite)
