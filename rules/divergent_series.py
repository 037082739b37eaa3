"""Divergent (asymptotic) series summed past their smallest term.

An asymptotic expansion such as E1(x) ~ e^-x/x * sum (-1)^k k!/x^k, erfc(x) ~ e^-x²/(x√π) *
sum (-1)^k (2k-1)!!/(2x²)^k, or a Stirling-type series has terms whose ratio grows with the index
(|t_k+1 / t_k| = k/x): they shrink while k < x and then grow without bound. Summed to its
smallest term the series is as accurate as that term (optimal truncation, error of the order of
the first omitted term); summed for a fixed count regardless of x, every term past the smallest
adds error, and for x smaller than the count the result is garbage (at x = 2 the 20th term of the
E1 series is 20!/2^20 ≈ 2.3e12). Stop when |term| starts to grow (`if abs(t_next) > abs(t):
break`), or switch to a convergent method (continued fraction, library function) for small x.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor import series as s
from auditor.nodes import walk

_SMALL_COUNT = 4  #: a literal count up to this many terms needs unusual inputs to go wrong


class DivergentSeries(Rule):
    id = "divergent-series"
    title = "divergent series summed past its smallest term"
    severity = Severity.WARNING
    summary = "terms whose ratio grows with the index (an asymptotic expansion) summed with no smallest-term stop"
    node_types = (ast.For, ast.While, ast.Call)
    method = (
        "optimal truncation of asymptotic series: terms summed up to the smallest one, error of the order of "
        "the first omitted term - DLMF §2.1 and C. M. Bender & S. A. Orszag, Advanced Mathematical Methods for "
        "Scientists and Engineers, ch. 3 (from memory)"
    )
    rewrite_template = "the same loop with `if abs(t_next) > abs(t): break` before the term is updated"
    examples = (
        Example(
            "def e1_tail(x, n=20):\n    s, t = 0.0, 1.0\n    for k in range(1, n):\n        s += t\n"
            "        t *= -k / x\n    return s / x\n",
            True,
            rewrite=(
                "for k in range(1, n):\n        s += t\n        t_next = t * (-k / x)\n"
                "        if abs(t_next) > abs(t):\n            break\n        t = t_next"
            ),
            inputs={"x": 3.0},
        ),
        Example(
            "import math\ndef tail(x):\n    s = 0.0\n    for k in range(30):\n"
            "        s += (-1)**k * math.factorial(k) / x**(k + 1)\n    return s\n",
            True,
            rewrite=(
                'prev_term = float("inf")\n    for k in range(30):\n        term = (-1)**k * math.factorial(k) / x**(k + 1)\n'
                "        if abs(term) > abs(prev_term):\n            break\n        prev_term = term\n        s += term"
            ),
        ),
        Example(
            "def e1_tail(x, n=20):\n    s, t = 0.0, 1.0\n    for k in range(1, n):\n        s += t\n"
            "        t_next = t * (-k / x)\n        if abs(t_next) > abs(t):\n            break\n        t = t_next\n"
            "    return s / x\n",
            False,
            note="smallest-term stop: optimal truncation",
        ),
        Example(
            "def exp_pos(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s += t\n        t *= x / k\n    return s\n",
            False,
            note="convergent: the ratio x/k shrinks",
        ),
        Example(
            "def tail(x):\n    if x < 40:\n        return None\n    s, t = 0.0, 1.0\n    for k in range(1, 8):\n"
            "        s += t\n        t *= -k / x\n    return s / x\n",
            False,
            note="8 terms and x >= 40: the terms shrink throughout",
        ),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.Call):
            yield from self._vectorised(node, ctx)
            return
        assert isinstance(node, (ast.For, ast.While))
        idx = s.index_names(node)
        for acc in s.accumulations(node):
            if ctx.enclosing_loops(acc.stmt)[:1] != [node] or not s.carried(node, acc) or acc.target in idx:
                continue
            g = s.growth(ctx, node, acc)
            if g is None:
                continue
            terms = {g.name} if g.name else set(p.names_in(acc.term)) - idx
            if s.smallest_term_stop(node, terms, idx, set(g.xnames)):
                return
            bounded = s.bounded_below_x(ctx, node, set(g.xnames))
            if bounded is True:
                return
            yield self._hit(ctx, node, acc, g)
            return
        if isinstance(node, ast.For):
            yield from self._table(node, ctx)

    def _table(self, loop: ast.For, ctx: Context) -> Iterator[Hit]:
        """A literal coefficient table with Bernoulli-type growth, summed over every entry."""
        table = s.coefficient_table(ctx, loop)
        if table is None or not s.grows_like_asymptotic(table):
            return
        idx = s.index_names(loop)
        for acc in s.accumulations(loop):
            names = p.names_in(acc.term)
            if table.element not in names or not any(isinstance(n, ast.BinOp) and isinstance(n.op, ast.Div)
                                                     for n in walk(acc.term)):
                continue
            xnames = names - idx - {table.element, acc.target}
            if s.smallest_term_stop(loop, names - idx, idx, xnames):
                return
            rewrite = s.guard_explicit(ctx, loop, acc.stmt, acc.target, acc.term, acc.subtract)
            x = ", ".join(sorted(xnames)) or "x"
            yield Hit(loop, f"coefficients of `{table.name}` grow like an asymptotic expansion (neighbour ratio "
                      f"{table.ratios[0]:.2g} rising to {table.ratios[-1]:.2g}) and all are summed whatever {x} is, "
                      f"so for small |{x}| the terms past the smallest one add error; stop at the smallest term "
                      "or shift the argument up first (recurrence) before using the expansion",
                      Severity.NOTE, rewrite)
            return

    def _hit(self, ctx: Context, loop: ast.For | ast.While, acc: s.Accumulation, g: s.Growth) -> Hit:
        x = _argument(g) or "x"
        count = _count(loop)
        if g.name is not None and g.stmt is not None:
            rewrite = s.guard_recurrence(ctx, loop, g.stmt, g.name)
        else:
            rewrite = s.guard_explicit(ctx, loop, acc.stmt, acc.target, acc.term, acc.subtract)
        if isinstance(loop, ast.While) and count is None:
            what = "past the smallest term the terms grow again, so a tolerance test alone may never stop"
        elif isinstance(count, int):
            what = f"{count} terms are summed whatever {x} is, so for |{x}| below about {count} terms past the smallest one are added"
        else:
            what = f"the term count does not depend on {x}, so for |{x}| below the count terms past the smallest one are added"
        severity = Severity.NOTE if isinstance(count, int) and count <= _SMALL_COUNT else None
        return Hit(loop, f"divergent series (term ratio grows with the index): {what} and the error grows like those "
                   "terms; stop at the smallest term (`if abs(t_next) > abs(t): break`) or use a convergent method for "
                   f"small |{x}|", severity, rewrite)

    def _vectorised(self, node: ast.Call, ctx: Context) -> Iterator[Hit]:
        found = s.summed_term(ctx, node)
        if found is None:
            return
        term, idx, _ = found
        if idx and s.factorial_weight(ctx, term, idx, s.vector_resolver(ctx, term)) > 0:
            yield Hit(node, "divergent series (factorial over a power): every term is summed whatever the argument, "
                      "so past the smallest term the error grows factorially; sum in a loop that stops at the "
                      "smallest term, or use a convergent method")


def _count(loop: ast.For | ast.While) -> int | None:
    """The number of passes of `for k in range(a, b)` with literal bounds, else None."""
    if not (isinstance(loop, ast.For) and isinstance(loop.iter, ast.Call) and isinstance(loop.iter.func, ast.Name)):
        return None
    bounds = [p.literal_number(a) for a in loop.iter.args]
    if loop.iter.func.id != "range" or not bounds or len(bounds) > 2 or not all(isinstance(b, int) for b in bounds):
        return None
    return len(range(*bounds))  # type: ignore[arg-type]


def _argument(g: s.Growth) -> str:
    """The series argument: variables in a denominator, outside function calls (`x` in `k! / x**k`)."""
    names: set[str] = set()
    for node in walk(g.expr):
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
            inside_calls = {id(n) for c in walk(node.right) if isinstance(c, ast.Call) for n in walk(c)}
            names |= {n.id for n in walk(node.right) if isinstance(n, ast.Name) and id(n) not in inside_calls}
    names &= set(g.xnames)
    return ", ".join(sorted(names or g.xnames))
