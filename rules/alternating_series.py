"""Alternating series cancel: the sum is far smaller than its largest terms.

When the terms of a series change sign, partial sums can grow far beyond the final value
before they shrink back to it. Each partial sum carries a rounding error relative to its own
size, so the result loses about log10(max |partial sum| / |result|) digits. The Taylor series
of e^-x summed at x = 10 passes through terms near 2.7e3 to reach 4.5e-5, losing about eight of
sixteen digits (common practice). Remedies: evaluate the library function; for e^-x sum the
positive series for e^x and invert it; regroup terms in pairs; or sum in higher precision.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor.series import accumulations, contains_sign_power, term_alternates

_SUMS = ("sum", "fsum", "nansum")


class AlternatingSeries(Rule):
    id = "alternating-series"
    title = "alternating series summed directly"
    severity = Severity.WARNING
    summary = "a sum of terms of alternating sign: large partial sums cancel and digits are lost"
    node_types = (ast.For, ast.While, ast.Call)
    method = (
        "Summation error bounds in N. J. Higham, Accuracy and Stability of Numerical Algorithms, "
        "2nd ed., SIAM 2002, chapter 4; e^-x = 1/e^x from the positive series, a standard textbook "
        "remedy (common practice)"
    )
    examples = (
        Example(
            "def exp_neg(x, n=60):\n    s = 0.0\n    t = 1.0\n    for k in range(1, n):\n"
            "        s += t\n        t *= -x / k\n    return s\n",
            True,
            inputs={"x": 10.0},
        ),
        Example("import math\ndef f(x):\n    return sum((-1)**k * x**(2*k+1) / math.factorial(2*k+1) for k in range(20))\n", True),
        Example(
            "def g(x):\n    s, sign, p = 0.0, 1.0, x\n    for k in range(1, 40):\n        s += sign * p / k\n"
            "        sign = -sign\n        p *= x\n    return s\n",
            True,
        ),
        Example("import numpy as np\ndef h(x):\n    k = np.arange(30)\n    return np.sum((-x)**k / (k + 1))\n", True),
        Example(
            "def exp_pos(x, n=60):\n    s = 0.0\n    t = 1.0\n    for k in range(1, n):\n"
            "        s += t\n        t *= x / k\n    return s\n",
            False,
            note="positive series: no cancellation",
        ),
        Example("def total(xs):\n    s = 0.0\n    for v in xs:\n        s += v\n    return s\n", False),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.Call):
            yield from self._vectorised(node, ctx)
            return
        assert isinstance(node, (ast.For, ast.While))
        for acc in accumulations(node):
            why = term_alternates(ctx, node, acc.term)
            if why is not None:
                yield Hit(node, f"alternating series ({why}): partial sums larger than the result cancel, "
                          "losing about log10(max partial sum / result) digits; use the closed form or library "
                          "function, or sum a positive series and invert it")
                return

    def _vectorised(self, node: ast.Call, ctx: Context) -> Iterator[Hit]:
        is_sum = ctx.family(node) in _SUMS or (isinstance(node.func, ast.Name) and node.func.id == "sum")
        if not is_sum or not node.args:
            return
        arg = node.args[0]
        inner = arg.elt if isinstance(arg, (ast.GeneratorExp, ast.ListComp)) else ctx.origin(arg)
        if contains_sign_power(ctx, inner):
            yield Hit(node, "alternating series (an explicit sign factor): terms of both signs cancel and the "
                      "result loses about log10(max partial sum / result) digits; use the closed form or library function")
