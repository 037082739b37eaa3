"""Variance as the mean of squares minus the squared mean cancels catastrophically.

E[x^2] - E[x]^2 subtracts two numbers of size mean^2 to leave one of size std^2, so it loses
about 2 * log10(|mean| / std) digits: sensor readings near 1e4 with a spread of 1 lose eight
of sixteen digits, and at a ratio of 1e8 the result is noise and can come out negative. The
same holds for the textbook one-pass form (sum_sq - sum_x**2 / n) / (n - 1), for its loop
version accumulating s and s2, and for the covariance twin E[xy] - E[x]E[y]. Two passes
(subtract the mean, then average the squares: `np.var`, `statistics.pvariance`) or Welford's
streaming update keep the digits.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p

#: (kind, factors): kind "mean" or "sum"; factors are (key, node) of the averaged data, 1 or 2 of them
Moment = tuple[str, tuple[tuple[str, ast.expr], ...]]
#: Welford's streaming update, quoted in the advice where only running sums exist (Welford 1962)
WELFORD = "k += 1; d = x - mean; mean += d / k; m2 += d * (x - mean); variance = m2 / k, or m2 / (k - 1) for the sample variance"


def data_key(ctx: Context, expr: ast.expr) -> tuple[str, ast.expr]:
    """A comparable key for averaged data: a loop variable stands for what it iterates over."""
    if isinstance(expr, ast.Subscript) and isinstance(expr.slice, ast.Name) and p.is_integer_valued(ctx, expr.slice):
        return ast.dump(expr.value), expr.value
    if isinstance(expr, ast.Name):
        b = ctx.binding(expr)
        if b is not None and b.kind == "loop" and b.value is not None:
            return ast.dump(b.value), b.value
    return ast.dump(expr), expr


def comprehension_source(comp: ast.comprehension, e: ast.expr) -> ast.expr | None:
    """What a comprehension variable ranges over: `v in xs` -> xs; `x, y in zip(a, b)` -> a or b."""
    if not isinstance(e, ast.Name):
        return None
    if isinstance(comp.target, ast.Name):
        return comp.iter if e.id == comp.target.id else None
    it = comp.iter
    if isinstance(comp.target, ast.Tuple) and isinstance(it, ast.Call) and isinstance(it.func, ast.Name) \
            and it.func.id == "zip" and len(it.args) == len(comp.target.elts):
        for var, source in zip(comp.target.elts, it.args):
            if isinstance(var, ast.Name) and var.id == e.id:
                return source
    return None


def factors_of(ctx: Context, term: ast.expr, comp: ast.comprehension | None = None) -> tuple[tuple[str, ast.expr], ...]:
    """x**2 -> (x, x); x * y -> (x, y); x -> (x,). Comprehension targets stand for their iterable."""
    def key(e: ast.expr) -> tuple[str, ast.expr]:
        source = comprehension_source(comp, e) if comp is not None else None
        return (ast.dump(source), source) if source is not None else data_key(ctx, e)

    base = p.is_square(term)
    if base is None and isinstance(term, ast.Call) and ctx.family(term) == "square" and p.single_arg(term) is not None:
        base = term.args[0]
    if base is not None:
        return (key(base), key(base))
    if isinstance(term, ast.BinOp) and isinstance(term.op, ast.Mult):
        return tuple(sorted((key(term.left), key(term.right)), key=lambda f: f[0]))
    return (key(term),)


def accumulated(ctx: Context, name: ast.Name) -> ast.expr | None:
    """The term of `s += term` when `s` is a running sum built in a loop of this scope."""
    terms = []
    for b in ctx.flow(ctx.scope(name)).of(name.id):
        if b.kind == "aug" and isinstance(b.op, ast.Add) and b.value is not None:
            terms.append(b.value)
        elif b.kind == "assign" and isinstance(b.value, ast.BinOp) and isinstance(b.value.op, ast.Add) \
                and isinstance(b.value.left, ast.Name) and b.value.left.id == name.id:
            terms.append(b.value.right)
        elif not (b.kind == "assign" and b.value is not None and p.is_number(b.value, 0)):
            return None
    return terms[0] if len(terms) == 1 else None


def moment(ctx: Context, expr: ast.expr, depth: int = 3) -> Moment | None:
    """Recognise a sum or mean of data (or of products of data), through locals and loops."""
    if depth <= 0:
        return None
    if isinstance(expr, ast.Name):
        term = accumulated(ctx, expr)
        if term is not None:
            return "sum", factors_of(ctx, term)
        origin = ctx.origin(expr)
        return None if origin is expr else moment(ctx, origin, depth - 1)
    found = p.reduction(ctx, expr)
    if found is not None and found[0] in ("sum", "mean"):
        kind, data = found
        if isinstance(data, (ast.GeneratorExp, ast.ListComp)) and len(data.generators) == 1:
            return kind, factors_of(ctx, data.elt, data.generators[0])
        return kind, factors_of(ctx, data)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Div):
        inner = moment(ctx, expr.left, depth - 1)
        if inner is not None and inner[0] == "sum":
            return "mean", inner[1]
    return None


def moment_product(ctx: Context, expr: ast.expr, depth: int = 3) -> Moment | None:
    """M**2 or M1 * M2 for first moments M: ('mean' | 'sum', the two factors)."""
    expr = ctx.origin(expr) if isinstance(expr, ast.Name) else expr
    base = p.is_square(expr)
    if base is None and isinstance(expr, ast.Call) and ctx.family(expr) == "square" and p.single_arg(expr) is not None:
        base = expr.args[0]
    pair = (base, base) if base is not None else (
        (expr.left, expr.right) if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Mult) else None)
    if pair is None:
        return None
    m1, m2 = moment(ctx, pair[0], depth), moment(ctx, pair[1], depth)
    if m1 is None or m2 is None or m1[0] != m2[0] or len(m1[1]) != 1 or len(m2[1]) != 1:
        return None
    return m1[0], tuple(sorted((m1[1][0], m2[1][0]), key=lambda f: f[0]))


def same_factors(a: Moment, b: Moment) -> bool:
    return len(a[1]) == 2 and [k for k, _ in a[1]] == [k for k, _ in b[1]]


def simple_mean_call(ctx: Context, expr: ast.expr) -> tuple[str, ast.expr] | None:
    """(module, data) when `expr` is a plain mean call with no axis or other options."""
    call = ctx.origin(expr)
    found = p.reduction(ctx, call)
    if found is None or found[0] != "mean" or not isinstance(call, ast.Call) or call.keywords:
        return None
    if isinstance(call.func, ast.Attribute) and call.func.value is found[1]:
        return "numpy", found[1]  # method form x.mean(): numpy's var takes arrays and array-likes
    if len(call.args) != 1:
        return None
    module = "statistics" if (ctx.qualname(call.func) or "").startswith("statistics.") else p.callee_module(ctx, call)
    return (module, found[1]) if module in ("numpy", "statistics") else None


def two_pass_text(ctx: Context, left: ast.expr, m: Moment) -> tuple[str | None, tuple[str, ...]]:
    found = simple_mean_call(ctx, left)
    if found is None:
        return None, ()
    module, _ = found
    (k1, x), (k2, y) = m[1]
    if k1 == k2:
        func, imports = p.spelled_qualified(ctx, "statistics.pvariance" if module == "statistics" else "numpy.var")
        return f"{func}({p.text(ctx, x)})", imports
    if module != "numpy":
        return None, ()
    mean, imports = p.spelled(ctx, "numpy", "mean")
    xs, ys = p.text(ctx, x), p.text(ctx, y)
    return f"{mean}(({xs} - {mean}({xs})) * ({ys} - {mean}({ys})))", imports


def summing_loop(ctx: Context, name: ast.Name) -> ast.For | None:
    """The `for` loop whose every pass adds to the running sum `name` (a statement of its body, no break)."""
    adds = [b for b in ctx.flow(ctx.scope(name)).of(name.id) if b.kind in ("aug", "assign") and b.value is not None
            and not p.is_number(b.value, 0)]
    if len(adds) != 1:
        return None
    loop = ctx.parent(adds[0].stmt)
    if not isinstance(loop, ast.For) or adds[0].stmt not in loop.body or loop.orelse:
        return None
    return None if any(isinstance(n, ast.Break) for n in ast.walk(loop)) else loop


def passes_over(ctx: Context, node: ast.AST, data: ast.expr) -> bool:
    """Every loop-accumulated sum `node` reads is taken over all of `data`, one item per pass."""
    for name in (n for n in ast.walk(node) if isinstance(n, ast.Name)):
        if accumulated(ctx, name) is not None:
            loop = summing_loop(ctx, name)
            if loop is None or not p.same_expr(loop.iter, data):
                return False
    return True


def counts(ctx: Context, n: ast.expr, data: ast.expr) -> bool:
    """True when `n` (or its local) is len(data), data.size, data.shape[0] or a counter of a loop over data."""
    if isinstance(n, ast.Name) and accumulated(ctx, n) is not None:
        return p.is_one(accumulated(ctx, n)) and passes_over(ctx, n, data)  # type: ignore[arg-type]
    n = ctx.origin(n)
    if isinstance(n, ast.Call) and isinstance(n.func, ast.Name) and n.func.id == "len" and p.single_arg(n) is not None:
        return p.same_expr(n.args[0], data)
    if isinstance(n, ast.Attribute) and n.attr == "size":
        return p.same_expr(n.value, data)
    return isinstance(n, ast.Subscript) and isinstance(n.value, ast.Attribute) and n.value.attr == "shape" \
        and p.is_number(n.slice, 0) and p.same_expr(n.value.value, data)


def variance_func(ctx: Context, node: ast.AST) -> tuple[str, tuple[str, ...]]:
    """np.var where the sums are numpy's (or only numpy is imported), else statistics.pvariance;
    both divide by n (population variance)."""
    reads = [ctx.origin(n) if isinstance(n, ast.Name) else n for n in ast.walk(node)]
    numpy_sums = any(p.callee_module(ctx, c) == "numpy" for e in reads for c in ast.walk(e))
    uses_numpy = ctx.imports.imports_any("numpy") and (numpy_sums or not ctx.imports.imports_any("statistics"))
    return p.spelled_qualified(ctx, "numpy.var" if uses_numpy else "statistics.pvariance")


def whole_data(ctx: Context, node: ast.BinOp, x: ast.expr) -> bool:
    """The sums cover all of x: x is not a loop variable, and loop-accumulated sums run over x itself."""
    if any(isinstance(n, ast.Call) for n in ast.walk(x)):
        return False  # `for v in stream.readings()`: reading the data again may give other data, or none
    binding = ctx.binding(x) if isinstance(x, ast.Name) else None
    return (binding is None or binding.kind != "loop") and passes_over(ctx, node, x)


def scaled_variance_text(ctx: Context, node: ast.BinOp, m: Moment) -> tuple[str | None, tuple[str, ...]]:
    """The sum of squared deviations n * var(x) for sum_sq - sum**2 / n, and n**2 * var(x) for
    n * sum_sq - sum**2, when n is the length of x (equal in exact arithmetic)."""
    (k1, x), (k2, _) = m[1]
    left, right = node.left, node.right
    if k1 != k2 or not whole_data(ctx, node, x):
        return None, ()
    if isinstance(right, ast.BinOp) and isinstance(right.op, ast.Div) and counts(ctx, right.right, x):
        func, imports = variance_func(ctx, node)
        return f"{p.operand_text(ctx, right.right)} * {func}({p.text(ctx, x)})", imports
    if isinstance(left, ast.BinOp) and isinstance(left.op, ast.Mult):
        n = next((f for f in (left.left, left.right) if counts(ctx, f, x)), None)
        if n is not None:
            func, imports = variance_func(ctx, node)
            return f"{p.operand_text(ctx, n)} ** 2 * {func}({p.text(ctx, x)})", imports
    return None, ()


def divided_variance_text(ctx: Context, node: ast.BinOp, m: Moment) -> tuple[str | None, tuple[str, ...]]:
    """var(x) for s2 / n - (s / n) ** 2 when n counts x and every division is by that n."""
    (k1, x), (k2, _) = m[1]
    left = node.left
    if k1 != k2 or not isinstance(left, ast.BinOp) or not isinstance(left.op, ast.Div):
        return None, ()
    n = left.right
    right = [ctx.origin(e) if isinstance(e, ast.Name) else e for e in ast.walk(node.right)]
    divisions = [d for e in right for d in ast.walk(e) if isinstance(d, ast.BinOp) and isinstance(d.op, ast.Div)]
    if not divisions or not all(p.same_expr(d.right, n) for d in divisions):
        return None, ()
    if not counts(ctx, n, x) or not whole_data(ctx, node, x):
        return None, ()
    func, imports = variance_func(ctx, node)
    return f"{func}({p.text(ctx, x)})", imports


def covariance_text(ctx: Context, node: ast.BinOp) -> tuple[str | None, tuple[str, ...]]:
    """`mean([(x - ea) * (y - eb) for x, y in zip(a, b)])` for mean([x * y ...]) - ea * eb, where the
    locals ea and eb hold the means of a and b (two passes; equal in exact arithmetic)."""
    call = node.left
    data = call.args[0] if isinstance(call, ast.Call) and len(call.args) == 1 else None
    right = node.right
    if not isinstance(data, (ast.ListComp, ast.GeneratorExp)) or len(data.generators) != 1 \
            or data.generators[0].ifs or not isinstance(right, ast.BinOp) or not isinstance(right.op, ast.Mult):
        return None, ()
    comp, elt = data.generators[0], data.elt
    if not isinstance(elt, ast.BinOp) or not isinstance(elt.op, ast.Mult) or elt.lineno != elt.end_lineno:
        return None, ()
    means = {}
    for side in (right.left, right.right):
        found = moment(ctx, side) if isinstance(side, ast.Name) else None
        if found is None or found[0] != "mean" or len(found[1]) != 1:
            return None, ()
        means[found[1][0][0]] = side.id  # type: ignore[attr-defined]
    parts = []
    for factor in (elt.left, elt.right):
        source = comprehension_source(comp, factor)
        mean = means.get(ast.dump(source)) if source is not None else None
        if mean is None:
            return None, ()
        parts.append(f"({p.text(ctx, factor)} - {mean})")
    text, base = p.text(ctx, call), call.col_offset
    if call.lineno != elt.lineno:
        return None, ()
    lo, hi = elt.col_offset - base, elt.end_col_offset - base  # type: ignore[operator]
    return text[:lo] + " * ".join(parts) + text[hi:], ()


def matched(ctx: Context, node: ast.BinOp) -> tuple[str, Moment] | None:
    """('mean' | 'sum', second moment) when `node` is a one-pass variance or covariance."""
    left, right = node.left, node.right
    m2 = moment(ctx, left)
    if m2 is not None and m2[0] == "mean":
        prod = moment_product(ctx, right)
        if prod is not None and prod[0] == "mean" and same_factors(m2, prod):
            return "mean", m2
    if m2 is not None and m2[0] == "sum" and isinstance(right, ast.BinOp) and isinstance(right.op, ast.Div):
        prod = moment_product(ctx, right.left)
        if prod is not None and same_factors(m2, prod):
            return "sum", m2
    if isinstance(left, ast.BinOp) and isinstance(left.op, ast.Mult):
        for part in (left.left, left.right):
            scaled = moment(ctx, part)
            prod = moment_product(ctx, right)
            if scaled is not None and scaled[0] == "sum" and prod is not None and same_factors(scaled, prod):
                return "sum", scaled
    return None


class NaiveVariance(Rule):
    id = "naive-variance"
    title = "one-pass variance by mean of squares minus squared mean"
    severity = Severity.WARNING
    summary = "E[x^2] - E[x]^2 (or sum_sq - sum^2/n) cancels when the mean is large against the spread"
    node_types = (ast.BinOp,)
    method = (
        "Two-pass variance and Welford's update: B. P. Welford, Technometrics 4(3), 1962; T. F. Chan, G. H. Golub "
        "and R. J. LeVeque, Algorithms for computing the sample variance, The American Statistician 37(3), 1983 "
        "(from memory)"
    )
    rewrite_template = "np.var({x})"
    examples = (
        Example("import numpy as np\ndef spread(x):\n    return np.mean(x**2) - np.mean(x)**2\n", True, "np.var(x)",
                {"x": 1e4}),
        Example("def spread(x):\n    return (x*x).mean() - x.mean()**2\n", True, "numpy.var(x)"),
        Example("import statistics as st\ndef spread(v):\n    m = st.mean(v)\n    return st.mean([a * a for a in v]) - m * m\n",
                True, "st.pvariance(v)"),
        Example("def var(xs):\n    n = len(xs)\n    s = sum(xs)\n    sq = sum(v * v for v in xs)\n"
                "    return (sq - s**2 / n) / (n - 1)\n", True, "n * statistics.pvariance(xs)"),
        Example("def var(xs):\n    s = 0.0\n    s2 = 0.0\n    for v in xs:\n        s += v\n        s2 += v * v\n"
                "    n = len(xs)\n    return s2 / n - (s / n) ** 2\n", True, "statistics.pvariance(xs)"),
        Example("def var(xs):\n    s = s2 = 0.0\n    n = 0\n    for v in xs:\n        s += v\n        s2 += v * v\n"
                "        n += 1\n    return s2 / n - (s / n) ** 2\n", True, "statistics.pvariance(xs)", note="counted"),
        Example("import numpy as np\ndef var(xs):\n    n = len(xs)\n    sx = np.sum(xs)\n    sxx = np.sum(xs**2)\n"
                "    return (n * sxx - sx**2) / (n * (n - 1))\n", True, "n ** 2 * np.var(xs)"),
        Example("import statistics\ndef cov(a, b):\n    ea = statistics.mean(a)\n    eb = statistics.mean(b)\n"
                "    return statistics.mean([x * y for x, y in zip(a, b)]) - ea * eb\n", True,
                "statistics.mean([(x - ea) * (y - eb) for x, y in zip(a, b)])"),
        Example("def var(stream):\n    s = s2 = 0.0\n    n = 0\n    for v in stream.readings():\n        s += v\n"
                "        s2 += v * v\n        n += 1\n    return s2 / n - (s / n) ** 2\n", True,
                note="streaming: Welford's update is advice only, no rewrite"),
        Example("import numpy as np\ndef cov(x, y):\n    return np.mean(x * y) - np.mean(x) * np.mean(y)\n", True,
                "np.mean((x - np.mean(x)) * (y - np.mean(y)))"),
        Example("import numpy as np\ndef spread(x):\n    m = np.mean(x)\n    return np.mean((x - m) ** 2)\n", False,
                note="two-pass"),
        Example("import numpy as np\ndef f(x, y):\n    return np.mean(x**2) - np.mean(y)**2\n", False,
                note="different data"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.BinOp)
        if not isinstance(node.op, ast.Sub):
            return
        found = matched(ctx, node)
        if found is None:
            return
        form, m2 = found
        covariance = m2[1][0][0] != m2[1][1][0]
        rewrite, imports = two_pass_text(ctx, node.left, m2) if form == "mean" else scaled_variance_text(ctx, node, m2)
        if rewrite is None and form == "mean":
            rewrite, imports = divided_variance_text(ctx, node, m2) if not covariance else covariance_text(ctx, node)
        fix = rewrite or ("a two-pass form (subtract the mean first) where the data is kept, else Welford's "
                          "update (advice, not verified: " + WELFORD + ")")
        what = "E[xy] - E[x]E[y]" if covariance else "the mean of squares minus the squared mean"
        yield Hit(node, f"{what} cancels, losing about 2*log10(|mean|/spread) digits (8 at mean/spread = 1e4) "
                  f"and possibly going negative; use {fix}", rewrite=rewrite, imports=imports)
