"""`log(1 + x)` loses the digits of a small x.

Forming 1 + x rounds away every digit of x below the unit roundoff of 1: for |x| = 1e-10 only
about six significant digits of x survive, and for |x| < 1.1e-16 the sum is exactly 1 and the
logarithm returns 0 instead of about x. `log(1 - x)` has the same flaw. log1p(x) takes x
itself and keeps full relative accuracy; `log1p(-x)` covers `log(1 - x)`.

Counts are left alone: integers (`len(xs)`, `np.arange(n)`, histogram and bincount results) and
quantities named as counts by the trade's conventions (`nobs`, `n_samples`, `df_resid`, `dof`,
`num_items`, `hit_count`): 1 + a count rounds nothing away, and a count (or degrees of freedom)
is never a small fraction.

Two uses are left alone because they see only the absolute error of the logarithm, which is what
forming 1 + x costs: a product computed in log space (`exp(cumsum(log(1 - h)))`, as long as the
product is not then set against 1), and a term of a sum beside a constant at least as large
(`-n*log(2*pi)/2 - n*sum(log(1 - lam))/2`).
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.counts import count_named
from auditor.log_space import beside_large_constant, exponentiated_only
from auditor.positions import seeds_iteration
from auditor.values import known_values

#: |x| at or above this keeps log(1 + x) within about one digit of log1p(x) (the loss is log10(1/|x|) digits)
_SAFE = 0.1
_HAS_LOG1P = ("math", "numpy", "scipy.special", "mpmath", "torch", "jax.numpy", "cupy")


def one_plus(ctx: Context, expr: ast.expr) -> tuple[ast.expr, bool] | None:
    """(x, negated) when `expr` is 1 + x, x + 1 or 1 - x (directly or through a local)."""
    expr = ctx.origin(expr)
    if not isinstance(expr, ast.BinOp) or not isinstance(expr.op, (ast.Add, ast.Sub)):
        return None
    if p.is_one(expr.left):
        other, negated = expr.right, isinstance(expr.op, ast.Sub)
    elif p.is_one(expr.right) and isinstance(expr.op, ast.Add):
        other, negated = expr.left, False
    else:
        return None
    if not p.has_free_names(other) or p.is_integer_valued(ctx, other) or counts(ctx, other) or count_named(ctx, other):
        return None
    values = known_values(ctx, other)
    if values is not None and min(abs(v) for v in values) >= _SAFE:
        return None  # the code spells out every x, none small: 1 + x rounds away less than a digit of it
    return other, negated


def counts(ctx: Context, expr: ast.expr) -> bool:
    """Integer arrays: `np.arange(n)` of integers, `np.histogram(...)[0]`, `np.bincount(...)`."""
    expr = ctx.origin(expr)
    if isinstance(expr, ast.Subscript) and p.is_number(expr.slice, 0) and ctx.family(ctx.origin(expr.value)) == "histogram":
        return True
    if not isinstance(expr, ast.Call):
        return False
    family = ctx.family(expr)
    if family == "arange":
        return bool(expr.args) and all(p.is_integer_valued(ctx, a) for a in expr.args)
    return family in ("bincount", "count_nonzero")


class LogOfOnePlus(Rule):
    id = "log-of-one-plus"
    title = "log(1 + x) computed directly"
    severity = Severity.WARNING
    summary = "log(1 + x) or log(1 - x): rounds away small x; use log1p"
    node_types = (ast.Call,)
    requires = ("log",)  # a file that never spells these cannot hold this pattern
    method = (
        "log1p as provided by C99/IEEE 754-2008 libm; D. Goldberg, What Every Computer Scientist "
        "Should Know About Floating-Point Arithmetic, ACM Computing Surveys 23(1), 1991, on ln(1+x) (from memory)"
    )
    rewrite_template = "math.log1p({x})"
    examples = (
        Example("import math\ndef rate(x):\n    return math.log(1 + x)\n", True, "math.log1p(x)", {"x": 1e-12}),
        Example("import numpy as np\ndef f(p):\n    return np.log(1.0 - p)\n", True, "np.log1p(-p)"),
        Example("import numpy as np\ndef f(x):\n    u = x + 1\n    return np.log(u)\n", True, "np.log1p(x)"),
        Example("import math\ndef f(x):\n    return math.log1p(x)\n", False),
        Example("import math\ndef f(xs):\n    return math.log(1 + len(xs))\n", False, note="integer count"),
        Example("import math\ndef f(x):\n    return math.log(2 + x)\n", False),
        # field trial regressions (docs/field-trial.md): integer arrays, arbitrary precision
        Example("import numpy as np\ndef weights(m):\n    return 1 + np.log(1 + np.arange(m.shape[1]))\n", False),
        Example("import numpy as np\ndef start(z, bins):\n    counts = np.histogram(z, bins)[0]\n"
                "    return np.log(1 + counts)\n", False, note="histogram counts are integers"),
        Example("import mpmath as mp\ndef coeffs():\n    with mp.workdps(30):\n"
                "        return mp.taylor(lambda x: mp.log(1 + x), 0, 10)\n", False, note="arbitrary precision"),
        Example("import numpy as np\ndef bic(res, llf, k):\n    nobs = res.df_model + res.df_resid + 1\n"
                "    return -2 * llf + k * np.log(nobs)\n", False,
                note="field trial: degrees of freedom plus one is a count, not 1 + a small x"),
        Example("import numpy as np\ndef penalty(n_samples, x):\n    return np.log(n_samples + 1) * x\n", False,
                note="a quantity named as a count"),
        Example("import numpy as np\ndef growth(n_rate, n_obs):\n    return np.log(1 + n_rate) - np.log(1 + n_obs * 0.01)\n",
                True, note="a rate is a fraction, and a count times a fraction is not a count"),
        Example("import numpy as np\ndef test_logser():\n    p, loc = 0.3, 3\n    return p / (p - 1.0) / np.log(1.0 - p)\n",
                False, note="a constant set in the code, far from 0 (field trial)"),
        Example("import numpy as np\ndef test_msle():\n    y = np.array([[0.5, 1], [1, 2], [7, 6]])\n    return np.log(1 + y)\n",
                False, note="a literal array, every entry far from 0 (field trial)"),
        Example("import numpy as np\ndef test_fit():\n    def mle(x):\n        return np.log(1 - x).sum()\n"
                "    x = np.array([0.125, 0.25, 0.5])\n    return mle(x), mle(1 - x)\n", False,
                note="a nested helper whose every call passes literal arrays (field trial)"),
        Example("import numpy as np\ndef test_tiny():\n    x = np.array([1e-12, 0.5])\n    return np.log(1 + x)\n", True,
                note="spelled out, but one entry is tiny"),
        Example("import mpmath\ndef test_log1pmx(check, f):\n    check(f, lambda x: mpmath.log(x + 1) - x, dps=60)\n",
                False, note="a reference handed to a harness that runs it at 60 digits (field trial)"),
        Example("import numpy as np\ndef fit(model, y, x):\n    start = np.linalg.lstsq(x, np.log(y + 1), rcond=None)[0]\n"
                "    return model(y, x).fit(start_params=start)\n", False,
                note="a starting point for an iterative fit: its low digits never reach the answer (field trial)"),
        Example("import numpy as np\ndef fit(model, y, x):\n    z = np.log(y + 1)\n    return model(z, x).fit(start_params=None)\n",
                True, note="the transformed data themselves, not a starting point"),
        Example("import numpy as np\ndef survival(d, n):\n    s = 1 - d / n\n    s = np.log(s)\n    s = np.cumsum(s)\n"
                "    return np.exp(s)\n", False,
                note="a product in log space: the log's absolute error is a relative error of the product, the "
                     "same as rounding each factor (field trial)"),
        Example("import numpy as np\ndef any_event(p):\n    return 1 - np.exp(np.sum(np.log(1 - p)))\n", True,
                note="the product is then set against 1: the log's relative digits are needed"),
        Example("import numpy as np\ndef loglike(nobs, neqs, logdet, lam, r):\n    return (-neqs * nobs * np.log(2 * np.pi) / 2"
                "\n            - nobs * (logdet + sum(np.log(1 - lam)[:r])) / 2)\n", False,
                note="a term of a log-likelihood beside a constant term at least as large: only its absolute "
                     "error reaches the sum (field trial)"),
        Example("import numpy as np\ndef log1pmx(x):\n    return np.log(1 + x) - x\n", True,
                note="beside a term as small as itself, the absolute error is all of the result's digits"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.Call)
        if ctx.family(node) != "log" or p.in_raised_precision(ctx, node) or seeds_iteration(ctx, node):
            return  # arbitrary precision, or a starting point whose low digits never reach the answer
        arg = p.single_arg(node)
        found = one_plus(ctx, arg) if arg is not None else None
        if found is None:
            return
        if exponentiated_only(ctx, node) or beside_large_constant(ctx, node):
            return  # only the log's absolute error reaches the result (auditor/log_space.py)
        x, negated = found
        module = p.callee_module(ctx, node) or "math"
        rewrite, imports = None, ()
        if module in _HAS_LOG1P:
            func, imports = p.spelled(ctx, module, "log1p")
            inner = p.operand_text(ctx, x) if negated else p.text(ctx, x)
            rewrite = f"{func}({'-' + inner if negated else inner})"
        fix = rewrite or "a log1p function"
        yield Hit(node, f"for |x| near 1e-10 half the digits of x are rounded away and below 1e-16 this returns 0; use {fix}",
                  rewrite=rewrite, imports=imports)
