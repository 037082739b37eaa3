"""Alternating series cancel: the sum is far smaller than its largest terms.

When the terms of a series change sign, partial sums can grow far beyond the final value
before they shrink back to it. Each partial sum carries a rounding error relative to its own
size, so the result loses about log10(max |partial sum| / |result|) digits. The Taylor series
of e^-x summed at x = 10 passes through terms near 2.7e3 to reach 4.5e-5, losing about seven of
sixteen digits (measured against mpmath). The same holds for a sign factor `(-1)**k`, a negative base
`(-x)**k`, a sign flipped each pass, a term recurrence with a negative ratio (`t *= -x / k`),
parity branches, sign arrays combined with `np.dot`, and for two positive partial sums (even
and odd terms) subtracted afterwards. Remedies: evaluate the library function; for e^-x sum the
positive series for e^x and invert it; regroup terms in pairs; or sum in higher precision.
Series that converge only for |x| < 1 (atan, log(1 + x)) lose little and are reported as notes.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor import series as s
from auditor.series import MAGNITUDE, loop_rewrite, severity_for, summed_term, vector_alternates
from auditor.series_growth import integer_items
from auditor.series_passes import pass_alternation
from auditor.nodes import walk


class AlternatingSeries(Rule):
    id = "alternating-series"
    title = "alternating series summed directly"
    severity = Severity.WARNING
    summary = "a sum of terms of alternating sign: large partial sums cancel and digits are lost"
    node_types = (ast.For, ast.While, ast.Call, ast.BinOp)
    method = (
        "Summation error bounds in N. J. Higham, Accuracy and Stability of Numerical Algorithms, "
        "2nd ed., SIAM 2002, chapter 4 (from memory); e^-x = 1/e^x from the positive series, a standard "
        "textbook remedy (common practice); library elementary functions per C99/IEEE 754 libm"
    )
    rewrite_template = "{acc} = math.exp(-{x})"
    examples = (
        Example(
            "import math\ndef exp_neg(x, n=60):\n    s = 0.0\n    t = 1.0\n    for k in range(1, n):\n"
            "        s += t\n        t *= -x / k\n    return s\n",
            True,
            rewrite="s = math.exp(-x)",
            inputs={"x": 10.0},
        ),
        Example(
            "import math\ndef f(x):\n    return sum((-1)**k * x**(2*k+1) / math.factorial(2*k+1) for k in range(20))\n",
            True,
            rewrite="math.sin(x)",
            inputs={"x": 20.0},
        ),
        Example(
            "import numpy as np\nfrom scipy.special import factorial\ndef cosine(x, n=30):\n    k = np.arange(n)\n"
            "    return np.sum((-1.0)**k * x**(2*k) / factorial(2*k))\n",
            True,
            rewrite="np.cos(x)",
        ),
        Example(
            "def g(x):\n    s, sign, p = 0.0, 1.0, x\n    for k in range(1, 40):\n        s += sign * p / k\n"
            "        sign = -sign\n        p *= x\n    return s\n",
            True,
            rewrite="s = math.log1p(x)",
            note="log(1 + x) series: a note, it only loses digits near |x| = 1",
        ),
        Example("import numpy as np\ndef h(x):\n    k = np.arange(30)\n    return np.sum((-x)**k / (k + 1))\n", True),
        Example(
            "import math\ndef sine(x):\n    s, t = 0.0, x\n    for k in range(1, 30):\n        s += t\n"
            "        t = -t * x * x / ((2*k) * (2*k + 1))\n    return s\n",
            True,
            rewrite="s = math.sin(x)",
        ),
        Example(
            "import math\ndef mirror_angle(r):\n    s = 0.0\n    for k in range(400):\n"
            "        s += (-1) ** k * r ** (2 * k + 1) / (2 * k + 1)\n    return s\n",
            True,
            rewrite="s = math.atan(r)",
            note="atan series: a note, it converges only for |r| <= 1",
        ),
        Example(
            "def exp_pos(x, n=60):\n    s = 0.0\n    t = 1.0\n    for k in range(1, n):\n"
            "        s += t\n        t *= x / k\n    return 1.0 / s\n",
            False,
            note="positive series, then inverted: the stable way to keep a series for e^-x",
        ),
        Example("def total(xs):\n    s = 0.0\n    for v in xs:\n        s += v\n    return s\n", False),
        Example(
            "from math import comb\ndef derangements(n):\n    return sum((-1)**k * comb(n, k) * (n - k) ** 3 for k in range(n + 1))\n",
            False,
            note="integer terms: Python ints are exact",
        ),
        Example(
            "def horner(c, x):\n    s = 0.0\n    for a in reversed(c):\n        s = s * (-x) + a\n    return s\n",
            False,
        ),
        Example(
            "import numpy as np\ndef copula_gen(u, theta):\n    return np.sum((-np.log(u)) ** theta)\n",
            False,
            note="a power with a shape-parameter exponent, not a sign flipping over the summed index (field trial)",
        ),
        Example(
            "import numpy as np\ndef selected(model, x, n):\n    coeff = (-1.0) ** np.arange(n)\n"
            "    fit = model.fit(x, coeff)\n    return np.sum(fit.stats >= 0.5)\n",
            False,
            note="a summed comparison counts booleans; signs are not followed through a model's call (field trial)",
        ),
        Example(
            "import numpy as np\ndef response(x, es, npos):\n    coeff = es * (-1) ** np.arange(npos)\n"
            "    return np.dot(x[:, 0:npos], coeff)\n",
            False,
            note="+-1 weights on data: the magnitudes do not change with the index, a contrast, not a series (field trial)",
        ),
        Example(
            "import numpy as np\ndef osc(x, n=40):\n    k = np.arange(n)\n    signs = (-1.0) ** k\n"
            "    return np.sum(signs * x**k / np.cumprod(np.maximum(k, 1)))\n",
            True,
            note="the sign array and the magnitude both read the index: a series",
        ),
        Example(
            "def euler_number(cells_by_dim):\n    counts = []\n    for cells in cells_by_dim:\n"
            "        counts.append(len(set(cells)))\n    return sum([(-1)**k * c for k, c in enumerate(counts)])\n",
            False,
            note="a list filled only with len() values holds Python ints: the signed sum is exact (field trial)",
        ),
        Example(
            "def euler_number(cells_by_dim):\n    counts = [1]\n    for cells in cells_by_dim:\n"
            "        counts.append(len(cells))\n    chi = 0\n    for k, c in enumerate(counts):\n"
            "        chi += (-1)**k * c\n    return chi\n",
            False,
            note="the same in a loop: enumerate counter and int items (field trial)",
        ),
        Example(
            "def signed_load(groups):\n    loads = []\n    for g in groups:\n        loads.append(len(g) / g.area)\n"
            "    return sum([(-1)**k * w for k, w in enumerate(loads)])\n",
            True,
            note="the list holds quotients, not ints",
        ),
        Example(
            "import numpy as np\ndef hit_rate(fit, n, npos, es, nrep):\n    rs = np.random.default_rng(4)\n"
            "    power = 0.0\n    for _ in range(nrep):\n        x = rs.normal(size=(n, npos))\n"
            "        coeff = es * (-1) ** np.arange(npos)\n        y = np.dot(x, coeff) + rs.normal(size=n)\n"
            "        stats = fit(y, x)\n        power += np.mean(stats[0:npos] >= 1.0)\n    return power / nrep\n",
            False,
            note="a sign vector rebuilt each pass goes into a model, not into the sign of the term added (field trial)",
        ),
        Example(
            "import numpy as np\ndef tail(x, n):\n    k = np.arange(n)\n    terms = (-1.0) ** k * x ** k / (k + 1)\n"
            "    s = 0.0\n    for j in range(n):\n        s += terms[j]\n    return s\n",
            True,
            note="the pass picks one element of a signed array: the term alternates",
        ),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, (ast.For, ast.While)):
            yield from self._loop(node, ctx)
        elif isinstance(node, ast.Call) or (isinstance(node, ast.BinOp) and isinstance(node.op, ast.MatMult)):
            yield from self._vectorised(node, ctx)

    def _loop(self, loop: ast.For | ast.While, ctx: Context) -> Iterator[Hit]:
        for acc in s.accumulations(loop):
            if ctx.enclosing_loops(acc.stmt)[:1] != [loop] or not s.carried(loop, acc) or acc.target in s.index_names(loop):
                continue
            if any(isinstance(n, (ast.GeneratorExp, ast.ListComp)) for n in walk(acc.term)):
                continue  # a summed comprehension inside the term is reported on its own call
            why = pass_alternation(ctx, loop, acc)
            if why is None or s.growth(ctx, loop, acc) is not None:
                continue
            if s.exact_arithmetic(ctx, loop, acc) or (isinstance(loop, ast.For) and s.is_integer_term(
                    ctx, acc.term, s.integer_names(ctx, loop) | integer_items(ctx, loop.target, loop.iter))):
                continue  # Python ints (counts appended to a list, enumerate counters) add exactly
            known = s.recognise_loop(ctx, loop, acc.target)
            rewrite, imports, fix = loop_rewrite(ctx, loop, acc.target, known)
            yield Hit(loop, _message(known, why, fix), severity_for(ctx, loop, acc, known), rewrite, imports)
            return
        twin = s.subtracted_twin(ctx, loop)
        if twin is not None:
            yield Hit(loop, _twin_message(ctx, twin))

    def _vectorised(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if not (ctx.mentions("**", "pow") or ctx.matches(r"%\s*2\b|&\s*1\b")):
            return  # no power and no parity test anywhere in the file: no sign can alternate (pre-filter)
        found = summed_term(ctx, node)
        if found is None:
            return
        term, idx, ints = found
        if isinstance(node, ast.Call) and node.args and isinstance(node.args[0], (ast.GeneratorExp, ast.ListComp)):
            ints = ints | {n for g in node.args[0].generators for n in integer_items(ctx, g.target, g.iter)}
        weight = s.factorial_weight(ctx, term, idx, s.vector_resolver(ctx, term))
        if vector_alternates(ctx, term, idx) and weight <= 0:
            if s.is_integer_term(ctx, term, ints) or not s.magnitude_reads_index(ctx, term, idx):
                return  # integer terms are exact; +-1 weights on data are a contrast, not a series
            known = _recognise_vector(ctx, node, idx)
            fix, rewrite = "use the closed form or library function", None
            imports: tuple[str, ...] = ()
            if known is not None:
                call = s.library_call(ctx, known.kind, known.var, _module(ctx, node), known.negated)
                if call is not None:
                    rewrite, imports = call
                    fix = f"use `{rewrite}`"
            severity = Severity.NOTE if known is not None and known.kind in ("atan", "log1p") else None
            if known is None and weight == 0:
                severity = Severity.NOTE
            yield Hit(node, _message(known, "an explicit sign factor", fix), severity, rewrite, imports)
        elif isinstance(node, ast.Call) and s.positive_sum_call(ctx, node):
            twin = s.subtracted_twin(ctx, node)
            if twin is not None:
                yield Hit(node, _twin_message(ctx, twin))


def _module(ctx: Context, node: ast.AST) -> str:
    """numpy for array reductions (`np.sum`, `@`, `.sum()`) when the file imports it, else the file's library."""
    array_form = not isinstance(node, ast.Call) or p.callee_module(ctx, node) == "numpy" or ctx.qualname(node.func) is None
    if array_form and not (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)) and ctx.imports.imports_any("numpy"):
        return "numpy"
    return s.module_for(ctx, node)


def _recognise_vector(ctx: Context, node: ast.AST, idx: set[str]) -> s.Recognised | None:
    if isinstance(node, ast.Call) and node.args and isinstance(node.args[0], (ast.GeneratorExp, ast.ListComp)):
        return s.recognise_generator(ctx, node, node.args[0])
    found = summed_term(ctx, node)
    if found is None:
        return None
    aranges = {}
    for name in idx:
        origin = _arange_of(ctx, node, name)
        if origin is not None:
            aranges[name] = origin
    inline = [c for c in s.expressions_through(ctx, found[0]) if isinstance(c, ast.Call) and ctx.family(c) == "arange"]
    return s.recognise_array(ctx, node, found[0], aranges, inline)


def _arange_of(ctx: Context, node: ast.AST, name: str) -> ast.Call | None:
    b = ctx.flow(ctx.scope(node)).reaching(name, getattr(node, "lineno", 0), getattr(node, "col_offset", 0))
    if b is not None and isinstance(b.value, ast.Call) and ctx.family(b.value) == "arange":
        return b.value
    return None


def _message(known: s.Recognised | None, why: str, fix: str) -> str:
    if known is None:
        return (f"alternating series ({why}): partial sums larger than the result cancel, losing about "
                f"log10(largest term / |sum|) digits; {fix}")
    extra = ""
    if known.kind == "exp_neg":
        extra = f" (or, to keep a series, sum the positive series {known.var}**k/k! and take 1/s)"
    return f"{s.DESCRIBED[known.kind]} summed directly: {MAGNITUDE[known.kind]}; {fix}{extra}"


def _twin_message(ctx: Context, twin: ast.BinOp) -> str:
    return (f"two positive series are summed and then subtracted (`{p.text(ctx, twin)}`, line {twin.lineno}), which "
            "cancels exactly as the alternating series would, losing log10(largest partial sum / |difference|) "
            "digits; use the library function or add the alternating terms in pairs")
