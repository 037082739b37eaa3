"""A long running float sum in a loop, `for v in values: total += v`, grows its rounding error with n.

Recursive summation commits one rounding per addition, so the error bound grows like
n * eps * sum|v|: about 1e-10 relative after a million readings, and far worse when the terms
have mixed signs and the total is small. Pairwise summation (numpy's `np.sum` on contiguous
float arrays) grows like log2(n) * eps, Kahan's compensated summation keeps the error near
eps independent of n, and `math.fsum` returns the correctly rounded sum. Integer counters,
short fixed loops (a range the code bounds by a small number, a literal table a private helper
receives from every caller or a module-level one nothing rebinds or grows), loops over groups (a function's `*args`, the bins of a tally,
per-group partial sums, inner products over lagged tails of the data), passes that add a whole
slab of an array or need a matrix power, product or factorisation, iterations whose total flows
back into its own terms (Newton, optimisers), string or list building, series with a term
recurrence or sign factor (the series rules report those) and accumulators never read after
the loop are not flagged.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator
from dataclasses import dataclass

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.loopshape import group_loop, loop_dependencies
from auditor.passterms import matrix_work, scaled_reduction, slab_term
from auditor.tripcount import item_bound
from auditor.nodes import children

#: a `range(k)` or literal sequence at most this long is a short fixed loop
_SHORT = 64
_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
#: Neumaier's variant of Kahan summation, quoted in the advice (Neumaier, ZAMM 54, 1974, from memory)
NEUMAIER = "t = s + v; c += (s - t) + v if abs(s) >= abs(v) else (v - t) + s; s = t; the sum is s + c"


@dataclass(frozen=True, slots=True)
class Accumulation:
    """`s += term`, `s -= term` or `s = s + term` in a loop body."""

    target: str
    term: ast.expr
    subtract: bool
    stmt: ast.stmt


def loop_statements(loop: ast.For | ast.While) -> Iterator[ast.AST]:
    """Every node in the loop body, nested scopes excluded."""
    stack: list[ast.AST] = [*loop.body, *loop.orelse]
    while stack:
        node = stack.pop()
        yield node
        stack.extend(c for c in children(node) if not isinstance(c, _NESTED))


def accumulations(loop: ast.For) -> list[Accumulation]:
    """Additive updates of a single name inside the loop, in source order."""
    found = []
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and isinstance(node.op, (ast.Add, ast.Sub)):
            found.append(Accumulation(node.target.id, node.value, isinstance(node.op, ast.Sub), node))
        elif isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            v, name = node.value, node.targets[0].id
            if isinstance(v, ast.BinOp) and isinstance(v.op, (ast.Add, ast.Sub)) and isinstance(v.left, ast.Name) \
                    and v.left.id == name:
                found.append(Accumulation(name, v.right, isinstance(v.op, ast.Sub), node))
    return sorted(found, key=lambda a: (a.stmt.lineno, a.stmt.col_offset))


def rescaled_in_loop(loop: ast.For, name: str) -> bool:
    """`t *= r`, `t /= k`, `t = -t * x / k` or `sign = -sign`: a term recurrence or sign flip."""
    for node in loop_statements(loop):
        if isinstance(node, ast.AugAssign) and isinstance(node.target, ast.Name) and node.target.id == name \
                and isinstance(node.op, (ast.Mult, ast.Div)):
            return True
        if isinstance(node, ast.Assign) and any(isinstance(t, ast.Name) and t.id == name for t in node.targets):
            v = node.value
            if isinstance(v, ast.UnaryOp) and isinstance(v.op, ast.USub) or \
                    isinstance(v, ast.BinOp) and isinstance(v.op, (ast.Mult, ast.Div)):
                if name in p.names_in(v):
                    return True
    return False


def short_fixed(ctx: Context, loop: ast.For) -> bool:
    """`for k in range(3)`, `for w in (a, b, c)`, `range(1, min(3, n) + 1)`, `range(nrep)` after `nrep = 10`,
    a comprehension over such a range, `range(len(x))` where every caller passes a literal table: a length
    the code bounds by a small number, too few additions to matter."""
    bound = item_bound(ctx, loop.iter)
    return bound is not None and bound <= _SHORT


def loop_names(loop: ast.For) -> set[str]:
    """Names that change from pass to pass: the loop target and everything assigned in the body."""
    names = {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)}
    for node in loop_statements(loop):
        if isinstance(node, (ast.Assign, ast.AugAssign, ast.AnnAssign, ast.For)):
            targets = node.targets if isinstance(node, ast.Assign) else [node.target]
            for t in targets:  # rebound names only: `self.x = ...` does not make `self` vary
                elts = t.elts if isinstance(t, (ast.Tuple, ast.List)) else [t]
                names |= {e.id for e in elts if isinstance(e, ast.Name)}
    return names


#: numeric functions that map numbers to numbers; any other library call in a term is array algebra
_ELEMENTWISE = frozenset({
    "exp", "expm1", "exp2", "log", "log1p", "log10", "log2", "sqrt", "cbrt", "sin", "cos", "tan", "asin", "acos",
    "atan", "atan2", "sinh", "cosh", "tanh", "asinh", "acosh", "atanh", "hypot", "pow", "abs", "square", "erf",
    "erfc", "gamma", "lgamma", "gammaln", "copysign", "sign", "float64", "double",
})


def array_algebra(ctx: Context, term: ast.expr) -> bool:
    """`u += np.diag(...)`, `U += solve(...)`: a few matrix additions, not a long scalar sum."""
    return any(isinstance(n, ast.Call) and ctx.family(n) is not None and ctx.family(n) not in _ELEMENTWISE
               for n in ast.walk(term))


def float_evident(ctx: Context, expr: ast.expr) -> bool:
    """True when an expression visibly computes in floating point."""
    for n in ast.walk(expr):
        if isinstance(n, ast.BinOp) and isinstance(n.op, (ast.Div, ast.Pow)):
            return True
        if isinstance(n, ast.Constant) and isinstance(n.value, float):
            return True
        if isinstance(n, ast.Call) and (ctx.family(n) is not None or isinstance(n.func, ast.Name) and n.func.id == "float"):
            return True
    return False


def initial_value(ctx: Context, loop: ast.For, name: str) -> ast.expr | None:
    """The value assigned to `name` last before the loop starts."""
    before = [b for b in ctx.flow(ctx.scope(loop)).of(name) if (b.line, b.column) < (loop.lineno, loop.col_offset)]
    return before[-1].value if before and before[-1].kind == "assign" else None


def is_series(ctx: Context, loop: ast.For, term: ast.expr) -> bool:
    """Terms of a series (the series rules' business): a recurrence, a sign factor, a power of the index."""
    if any(rescaled_in_loop(loop, name) for name in p.names_in(term)):
        return True
    index = {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)}  # stored names: names_in sees loads only
    return any(
        isinstance(n, ast.BinOp) and isinstance(n.op, ast.Pow) and bool(p.names_in(n.right) & index)
        or isinstance(n, ast.BinOp) and isinstance(n.op, ast.Pow) and p.is_number(n.left, -1)
        or isinstance(n, ast.Call) and ctx.family(n) in ("factorial", "gamma")
        for n in ast.walk(term)
    )


def compensated(loop: ast.For, acc: Accumulation) -> bool:
    """Kahan/Neumaier-style loops subtract the running total to recover the lost low part."""
    for node in loop_statements(loop):
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Sub) and acc.target in p.names_in(node):
            if not any(node is n for n in ast.walk(acc.stmt)):
                return True
    return False


def read_after(ctx: Context, loop: ast.For, name: str) -> bool:
    """True when the accumulator is read outside the loop (returned, stored, printed)."""
    end = loop.end_lineno or loop.lineno
    return any(
        isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load) and not loop.lineno <= n.lineno <= end
        for n in ast.walk(ctx.scope(loop))
    )


def moments_loop(loop: ast.For, accs: list[Accumulation]) -> bool:
    """`s += v; s2 += v * v`: a one-pass moments loop, which the naive-variance rule reports."""
    terms = [ast.dump(a.term) for a in accs]
    return any(p.is_square(a.term) is not None and ast.dump(p.is_square(a.term)) in terms for a in accs)  # type: ignore[arg-type]


def feeds_back(ctx: Context, acc: Accumulation) -> bool:
    """True when the total flows, through the assignments of the loops around it, into its own
    terms: Newton's `x = x - f(x) / df(x)`, or an optimiser whose steps read the iterate."""
    outer = ctx.enclosing_loops(acc.stmt)[-1]
    deps = ctx.cached("naive-accumulation:deps", outer, lambda: loop_dependencies(outer))
    seen, todo = set(), list(p.names_in(acc.term))
    while todo:
        name = todo.pop()
        if name == acc.target:
            return True
        if name not in seen:
            seen.add(name)
            todo.extend(deps.get(name, ()))
    return False


def wanted(ctx: Context, loop: ast.For, acc: Accumulation) -> bool:
    if ctx.enclosing_loops(acc.stmt)[:1] != [loop]:
        return False  # reported on the loop that performs the addition
    if feeds_back(ctx, acc):
        return False  # `x = x - f(x) / df(x)`, an optimiser step: an iteration, not a running sum
    init = initial_value(ctx, loop, acc.target)
    if isinstance(init, (ast.List, ast.Tuple, ast.Dict, ast.Set, ast.JoinedStr)) or \
            isinstance(init, ast.Constant) and isinstance(init.value, (str, bytes)):
        return False
    if ctx.family(init) in ("zeros", "zeros_like", "ones", "empty", "full") if isinstance(init, ast.Call) else False:
        return False  # an array of sums over a loop: compensating each element is not the cheap fix assumed here
    varying, index = loop_names(loop), {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)}
    if scaled_reduction(ctx, acc.term, varying) or slab_term(acc.term, index) or matrix_work(ctx, acc.term):
        return False  # per-group partial sums, a walk along an array axis, a few heavy matrix terms
    floaty = isinstance(init, ast.Constant) and isinstance(init.value, float) or float_evident(ctx, acc.term)
    if not floaty or p.is_integer_valued(ctx, acc.term) or p.reduction(ctx, acc.term) is not None \
            or array_algebra(ctx, acc.term):
        return False  # a sum of sums (`grand += math.fsum(row)`) has only one addition per row
    if not p.names_in(acc.term) & varying:
        return False  # a fixed step: the step-accumulation rule's pattern
    return not is_series(ctx, loop, acc.term) and not compensated(loop, acc) and read_after(ctx, loop, acc.target)


def inlined(ctx: Context, loop: ast.For, temps: list[ast.stmt], acc: Accumulation) -> str | None:
    """The term's text with each per-pass temporary (`t_mid = ...` before the addition, read once
    by the term and nowhere else) replaced by its value; None when that is not possible."""
    term, text = acc.term, p.text(ctx, acc.term)
    if term.lineno != term.end_lineno:
        return None if temps else text
    edits = []
    for stmt in temps:
        if not (isinstance(stmt, ast.Assign) and len(stmt.targets) == 1 and isinstance(stmt.targets[0], ast.Name)):
            return None
        name = stmt.targets[0].id
        uses = [n for n in ast.walk(term) if isinstance(n, ast.Name) and n.id == name]
        reads = [n for n in ast.walk(ctx.scope(loop)) if isinstance(n, ast.Name) and n.id == name
                 and isinstance(n.ctx, ast.Load)]
        if name == acc.target or len(uses) != 1 or len(reads) != 1 or p.names_in(stmt.value) & {acc.target}:
            return None
        edits.append((uses[0].col_offset - term.col_offset, uses[0].end_col_offset - term.col_offset,  # type: ignore[operator]
                      p.operand_text(ctx, stmt.value)))
    for lo, hi, value in sorted(edits, reverse=True):
        text = text[:lo] + value + text[hi:]
    return text


def fsum_text(ctx: Context, loop: ast.For, acc: Accumulation) -> tuple[str | None, tuple[str, ...]]:
    """`total += math.fsum(term for item in values [if cond])` when each pass adds one term: the body
    is the addition, under at most one `if` without `else`, after per-pass temporaries it inlines."""
    body, cond = loop.body, None
    first = body[0] if len(body) == 1 else None
    if isinstance(first, ast.If) and not first.orelse and first.body == [acc.stmt]:
        body, cond = [acc.stmt], first.test
    if body[-1] is not acc.stmt or loop.orelse or not isinstance(loop, ast.For):
        return None, ()
    if any(read_after(ctx, loop, name) for name in {n.id for n in ast.walk(loop.target) if isinstance(n, ast.Name)} | {
            t.id for s in body[:-1] if isinstance(s, ast.Assign) for t in s.targets if isinstance(t, ast.Name)}):
        return None, ()  # the loop variable (or a temporary) is still read after the loop
    term = inlined(ctx, loop, body[:-1], acc)
    if term is None:
        return None, ()
    fsum, imports = p.spelled(ctx, "math", "fsum")
    target, it = p.text(ctx, loop.target), p.text(ctx, loop.iter)
    if cond is None and not body[:-1] and isinstance(acc.term, ast.Name) and isinstance(loop.target, ast.Name) \
            and acc.term.id == loop.target.id:
        call = f"{fsum}({it})"
    else:
        call = f"{fsum}({term} for {target} in {it}{f' if {p.text(ctx, cond)}' if cond is not None else ''})"
    return f"{acc.target} {'-' if acc.subtract else '+'}= {call}", imports


class NaiveAccumulation(Rule):
    id = "naive-accumulation"
    title = "long running float sum in a loop"
    severity = Severity.NOTE
    summary = "total += v over many items: error grows like n * eps; use math.fsum, np.sum or Kahan summation"
    node_types = (ast.For,)
    method = (
        "Compensated summation (W. Kahan, Further remarks on reducing truncation errors, CACM 8(1), 1965) and "
        "pairwise summation; error bounds in N. J. Higham, Accuracy and Stability of Numerical Algorithms, "
        "2nd ed., SIAM 2002, chapter 4 (from memory)"
    )
    rewrite_template = "{total} += math.fsum({values})"
    examples = (
        Example("def total(values):\n    s = 0.0\n    for v in values:\n        s += v\n    return s\n", True,
                "s += math.fsum(values)"),
        Example("def energy(x, w):\n    e = 0.0\n    for i in range(len(x)):\n        e = e + w[i] * x[i]\n    return e\n",
                True, "e += math.fsum(w[i] * x[i] for i in range(len(x)))"),
        Example("def mean_flow(rows):\n    acc = 0\n    for r in rows:\n        if r.ok:\n            acc += r.flow / r.area\n"
                "    return acc / len(rows)\n", True, "acc += math.fsum(r.flow / r.area for r in rows if r.ok)"),
        Example("from math import fsum\ndef heat(t0, t1, n):\n    w = (t1 - t0) / n\n    q = 0.0\n    for i in range(n):\n"
                "        t = t0 + (i + 0.5) * w\n        q += 2.5 * t**1.5 * w\n    return q\n", True,
                "q += fsum(2.5 * (t0 + (i + 0.5) * w)**1.5 * w for i in range(n))", note="midpoint rule, temporary inlined"),
        Example("def total(values, log):\n    s = 0.0\n    for v in values:\n        log.append(s)\n        s += v\n"
                "    return s\n", True, note="the loop does more than add: Neumaier advice, no rewrite"),
        Example("def total(values):\n    s = 0.0\n    for v in values:\n        s += v\n    return s, v\n", True,
                note="the loop variable is read after the loop: no rewrite"),
        Example("def count(rows):\n    n = 0\n    for r in rows:\n        n += 1\n    return n\n", False),
        Example("def f(a, b, c):\n    s = 0.0\n    for v in (a, b, c):\n        s += v\n    return s\n", False,
                note="short fixed loop"),
        Example("import math\ndef total(values):\n    return math.fsum(values)\n", False),
        Example("def kahan(xs):\n    s = c = 0.0\n    for v in xs:\n        y = v - c\n        t = s + y\n"
                "        c = (t - s) - y\n        s = t\n    return s\n", False, note="compensated"),
        # field trial regressions (docs/field-trial.md): Newton iteration, sums over groups, array accumulators
        Example("def root(f, df, maxit):\n    x = 0.5\n    for i in range(maxit):\n        x = x - f(x) / df(x)\n"
                "    return x\n", False,
                note="an iteration reads its own value"),
        Example("def between(groups, n):\n    total = 0.0\n    for g in groups:\n        total += g.sum() / n\n"
                "    return total\n", False, note="one scaled partial sum per group"),
        Example("def spread(xp, clusters, mean):\n    d = 0.0\n    for c in clusters:\n"
                "        d += c.shape[0] * xp.sum((c - mean) ** 2)\n    return d\n", False),
        Example("import numpy as np\ndef spread(models, x, n):\n    z = np.zeros(n)\n    for m in models:\n"
                "        z += (m(x) - x) ** 2\n    return z\n", False, note="array accumulator"),
        Example("def horner_free(c, w, k):\n    res = 0.0\n    for i in range(k):\n        res += c[i] * w ** (k - 1 - i)\n"
                "    return res\n", False, note="field trial regression: a power of the loop index is a series term"),
        Example("def exp_series(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 200):\n        s += t\n        t *= x / k\n"
                "    return s\n", False, note="a series: the series rules decide"),
        Example("def between_runs(*runs):\n    runs = [list(r) for r in runs]\n    peaks = [max(r) for r in runs]\n"
                "    spread = 0.0\n    for k, _ in enumerate(runs):\n        spread += peaks[k] / len(runs[k])\n"
                "    return spread\n", False, note="a loop over the function's *args runs over groups (field trial)"),
        Example("def band(u, b, i, n):\n    width = min(3, n - i - 1)\n    acc = 0.0\n    for k in range(1, width + 1):\n"
                "        acc -= u[i + k] * b[i + k] / 2.0\n    return acc\n", False,
                note="the range stop is at most min(3, ...) + 1: a short fixed loop (field trial)"),
        Example("def fit_offset(samples, rate, slope):\n    offset = 0.0\n    grad_sum = 0.0\n"
                "    for n, (x, y) in enumerate(samples, 1):\n        g = slope(x + offset, y)\n        grad_sum += g\n"
                "        offset -= rate * grad_sum / n\n    return offset\n", False,
                note="an optimiser: the totals flow back into their own steps, an iteration (field trial)"),
        Example("def false_share(draw):\n    nrep = 10\n    share = 0.0\n    for _ in range(nrep):\n"
                "        wrong, picked = draw()\n        share += wrong / max(picked, 1)\n    return share / nrep\n", False,
                note="the range stop is a local constant: a short fixed loop (field trial)"),
        Example("import numpy as np\ndef label_entropy(labels):\n    n = len(labels)\n    h = 0.0\n"
                "    for count in np.bincount(labels):\n        q = count / n\n        if q > 0:\n"
                "            h -= q * np.log2(q)\n    return h\n", False,
                note="a loop over the bins of a tally runs over classes, not data items (field trial)"),
        Example("def dose(rate, t0, dt, n):\n    t = t0\n    total = 0.0\n    for _ in range(n):\n        t += dt\n"
                "        total += rate(t) * dt\n    return total\n", True,
                note="a carried grid coordinate that does not depend on the total: still a long sum"),
        Example("def scatter(xs, m):\n    s = 0.0\n    for x in xs:\n        d = x - m\n        s += d * d / 2.0\n"
                "    return s\n", True, note="per-pass temporaries are not a recurrence"),
        Example("import numpy as np\ndef between(bays):\n    sums = [np.asarray(b.sum(axis=0)) for b in bays]\n"
                "    squares = [s ** 2 for s in sums]\n    sizes = [len(b) for b in bays]\n    ss = 0.0\n"
                "    for k in range(len(bays)):\n        ss += squares[k] / sizes[k]\n    return ss\n", False,
                note="the term is a squared per-group sum built by comprehensions: a loop over groups (field trial)"),
        Example("import numpy as np\ndef entropy(counts):\n    total = counts.sum()\n    h = 0.0\n    for c in counts:\n"
                "        h -= (c / total) * np.log(c / total)\n    return h\n", True,
                note="items scaled by one grand total are still one addition per item"),
        Example("import numpy as np\ndef pair_excess(batches, gain):\n    excess = 0.0\n    for k in range(len(batches)):\n"
                "        r = batches[k] / gain[k]\n        sq = np.sum(r * r)\n        excess += (r.sum() ** 2 - sq) / 2\n"
                "    return excess\n", False,
                note="a difference of per-group sums, one held in a temporary of the pass: a loop over groups (field trial)"),
        Example("def pair_excess(readings, gain):\n    excess = 0.0\n    for k in range(len(readings)):\n"
                "        r = readings[k] / gain[k]\n        sq = r * r\n        excess += (r - sq) / 2\n    return excess\n",
                True, note="a temporary holding plain element arithmetic is no group sum"),
        Example("import numpy as np\ndef response_gain(A, shocks, horizon):\n    G = 0.0\n    for m in range(horizon):\n"
                "        apow = np.linalg.matrix_power(A, horizon - 1 - m)\n        piece = np.kron(apow, shocks[m])\n"
                "        G = G + piece\n    return G\n", False,
                note="each pass adds a whole matrix from a kron held in a temporary: a few heavy terms (field trial)"),
        Example("import numpy as np\ndef spread_fit(proj, covs, sizes):\n    f = 0.0\n    for j, c in enumerate(covs):\n"
                "        c = proj.T @ c @ proj\n        _, ldet = np.linalg.slogdet(c)\n        f -= sizes[j] * ldet / 2\n"
                "    return f\n", False,
                note="one log-determinant per covariance: each term is itself a factorisation (field trial)"),
        Example("import math\ndef leave_one_out(x, h):\n    npts = 6\n    cv = 0.0\n    for ll in range(npts):\n"
                "        rest = [i for i in range(npts) if i != ll]\n        g = 0.0\n        for i in rest:\n"
                "            g += math.exp(-((x[i] - x[ll]) / h) ** 2)\n        cv += g / npts\n    return cv\n", False,
                note="a list built by a comprehension over a range a local literal bounds: a short fixed loop (field trial)"),
        Example("import math\ndef leave_one_out(x, h):\n    npts = len(x)\n    cv = 0.0\n    for ll in range(npts):\n"
                "        rest = [i for i in range(npts) if i != ll]\n        g = 0.0\n        for i in rest:\n"
                "            g += math.exp(-((x[i] - x[ll]) / h) ** 2)\n        cv += g / npts\n    return cv\n", True,
                note="the same comprehension over the data length is long"),
        Example("def joint_loglik(margins, y):\n    total = 0.0\n    for i in range(len(margins)):\n"
                "        total += margins[i].logpdf(y[..., i])\n    return total\n", False,
                note="the loop index picks a whole slab y[..., i]: each element gets one addition per axis entry (field trial)"),
        Example("def event_score(X, events, centre):\n    grad = 0.0\n    for t in range(len(events)):\n        rows = events[t]\n"
                "        grad += (X[rows, :] - centre).sum(0)\n    return grad\n", True,
                note="rows picked per pass and reduced: one term per event, still a long sum"),
        # Gauss-Legendre 3-point nodes +-sqrt(3/5), 0 and weights 5/9, 8/9 (Abramowitz & Stegun table 25.4, from memory)
        Example("def _weighted(f, nodes, weights):\n    s = 0.0\n    for i in range(len(nodes)):\n"
                "        s += weights[i] * f(nodes[i])\n    return s\n\n\ndef gauss3(f):\n"
                "    nodes = (-0.7745966692414834, 0.0, 0.7745966692414834)\n"
                "    weights = (0.5555555555555556, 0.8888888888888888, 0.5555555555555556)\n"
                "    return _weighted(f, nodes, weights)\n", False,
                note="every call of the private helper passes a literal table of 3 nodes: a short fixed loop (field trial)"),
        Example("def _weighted(f, nodes, weights):\n    s = 0.0\n    for i in range(len(nodes)):\n"
                "        s += weights[i] * f(nodes[i])\n    return s\n\n\ndef gauss3(f):\n"
                "    return _weighted(f, (-0.7745966692414834, 0.0, 0.7745966692414834),\n"
                "                     (0.5555555555555556, 0.8888888888888888, 0.5555555555555556))\n\n\n"
                "def tabulated(f, xs, ws):\n    return _weighted(f, xs, ws)\n", True,
                note="one caller passes data of any length: not a fixed loop"),
        Example("import numpy as np\ndef scatter(rows, m):\n    S = 0.0\n    for x in rows:\n        d = np.outer(x - m, x - m)\n"
                "        S = S + d / 2.0\n    return S\n", True,
                note="an outer product of each data row, held in a temporary, is light work: a long sum of matrices"),
        Example("import numpy as np\ndef long_run_variance(resids, nobs, lags):\n    s_hat = np.sum(resids**2)\n"
                "    for i in range(1, lags + 1):\n        prod = np.dot(resids[i:], resids[: nobs - i])\n"
                "        s_hat += 2 * prod * (1.0 - i / (lags + 1.0))\n    return s_hat / nobs\n", False,
                note="each pass adds an inner product over a lagged tail of the data: a loop over lags (field trial)"),
        Example("import numpy as np\ndef window_energy(x, w, n):\n    e = 0.0\n    for i in range(n):\n"
                "        d = np.dot(x[i:i + 4], w)\n        e += d / 4.0\n    return e\n", True,
                note="a short window that moves with the pass is one term per item: still a long sum"),
        # Gauss-Legendre 3-point weights and nodes (Abramowitz & Stegun table 25.4, from memory)
        Example("import numpy as np\nGL3 = [[0.5555555555555556, -0.7745966692414834], [0.8888888888888888, 0.0],\n"
                "       [0.5555555555555556, 0.7745966692414834]]\n\n\nclass Smoother:\n    def grad(self, h, x):\n"
                "        g = 0.0\n        for w in GL3:\n            g += w[0] * h(w[1]) * x\n        return g\n", False,
                note="a module-level literal table of 3 nodes, never rebound or grown: a short fixed loop (field trial)"),
        Example("GL3 = [0.5555555555555556, 0.8888888888888888, 0.5555555555555556]\n\n\ndef extend(more):\n"
                "    GL3.extend(more)\n\n\ndef total(x):\n    s = 0.0\n    for w in GL3:\n        s += w * x\n    return s\n",
                True, note="a module-level list another function grows has no fixed length"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.For)
        accs = accumulations(node)  # cheap and usually empty: the loop-length facts below walk whole scopes
        if not accs or moments_loop(node, accs) or short_fixed(ctx, node) or group_loop(ctx, node):
            return
        for acc in accs:
            if wanted(ctx, node, acc):
                rewrite, imports = fsum_text(ctx, node, acc)
                fix = rewrite or ("math.fsum or np.sum (pairwise) over the terms, or, where the loop must stay, "
                                  f"Neumaier's compensated update (advice, not verified: {NEUMAIER})")
                yield Hit(node, f"the running sum `{acc.target}` commits one rounding per item, so its error can grow "
                          f"like n*eps*sum|v| (1e-10 relative after 1e6 items, worse when terms cancel); use {fix}",
                          rewrite=rewrite, imports=imports)
                return
