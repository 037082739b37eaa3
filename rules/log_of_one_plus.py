"""`log(1 + x)` loses the digits of a small x.

Forming 1 + x rounds away every digit of x below the unit roundoff of 1: for |x| = 1e-10 only
about six significant digits of x survive, and for |x| < 1.1e-16 the sum is exactly 1 and the
logarithm returns 0 instead of about x. `log(1 - x)` has the same flaw. log1p(x) takes x
itself and keeps full relative accuracy; `log1p(-x)` covers `log(1 - x)`.

Counts are left alone: integers (`len(xs)`, `np.arange(n)` whatever n is, histogram and bincount results) and
quantities named as counts by the trade's conventions (`nobs`, `n_samples`, `df_resid`, `dof`,
`num_items`, `hit_count`): 1 + a count rounds nothing away, and a count (or degrees of freedom)
is never a small fraction.

Some uses are left alone because they see only the absolute error of the logarithm, which is what
forming 1 + x costs: a product computed in log space (`exp(cumsum(log(1 - h)))`, as long as the
product is not then set against 1), a power in log space (`exp(k*log(1 - p))` with k free of p's
variables, which is (1 - p)**k with the same rounding of 1 - p; with a k built from p's variables,
as in (1 + r/n)**n, only when the power is just compared with a uniform draw), a log-sum-exp
(`m + log(sum(exp(t - m)))` or `logsumexp(t)`, each term's log entering as a relative error of
that term), a term of a sum beside a constant at least as large
(`-n*log(2*pi)/2 - n*sum(log(1 - lam))/2`), and an operand of an absolute-tolerance check
(`assert_almost_equal`). So is a `log(1 - p)` inside a branch whose test keeps |p| >= 0.1
(`if 0.975 < p:`): p is never small there, and for p >= 0.5 the difference 1 - p is exact.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.abs_checks import absolute_check_only
from auditor.branch_bounds import guarded_away_from_zero
from auditor.counts import count_named, whole
from auditor.log_space import beside_large_constant, exponentiated_only, log_space_only
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


def counts(ctx: Context, expr: ast.expr, depth: int = 3) -> bool:
    """Integer arrays: `np.arange(n)`, `np.arange` of integers, `np.histogram(...)[0]`, `np.bincount(...)`,
    and those shifted by whole numbers (`np.arange(n) + 1`)."""
    expr = ctx.origin(expr)
    if isinstance(expr, ast.Subscript) and p.is_number(expr.slice, 0) and ctx.family(ctx.origin(expr.value)) == "histogram":
        return True
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub)) and depth > 0:
        sides = (expr.left, expr.right)
        return any(counts(ctx, s, depth - 1) for s in sides) and \
            all(counts(ctx, s, depth - 1) or whole(ctx, s) for s in sides)
    if not isinstance(expr, ast.Call):
        return False
    family = ctx.family(expr)
    if family == "arange":
        # arange(stop) counts 0, 1, 2, ... from 0 in steps of 1 whatever stop is (arange(2.5) is 0., 1., 2.)
        return len(expr.args) == 1 or bool(expr.args) and all(p.is_integer_valued(ctx, a) for a in expr.args)
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
        Example("import numpy as np\ndef accept(rng, q, delta, temp):\n    r = rng.uniform()\n"
                "    w = 1.0 - (1.0 - q) * delta / temp\n    prob = np.exp(np.log(w) / (1.0 - q))\n    return r <= prob\n",
                False, note="a power computed in log space and only compared with a uniform draw: the decision "
                            "sees an absolute error of about eps (field trial)"),
        Example("import numpy as np\ndef compound(r, n):\n    return np.exp(n * np.log(1 + r / n))\n", True,
                note="(1 + r/n)**n: the factor n scales the log's absolute error up as r/n shrinks"),
        Example("import numpy as np\ndef neg_log_pvalue(p, k, n, logcomb):\n    lq = np.log(1 - p)\n"
                "    t = logcomb + k * np.log(p) + lq * (n - k)\n    t[k == n] = 0\n    m = t.max()\n"
                "    return -(m + np.log(np.exp(t - m).sum()))\n", False,
                note="a count times the log, into a log-sum-exp: each term sees the log's absolute error as a "
                     "relative one, as if its factors were rounded (field trial)"),
        Example("import math\ndef upper_tail(p):\n    cut = 1 - 0.02425\n    if cut < p:\n"
                "        return math.sqrt(-2 * math.log(1 - p))\n    return None\n", False,
                note="the branch keeps p near 1: 1 - p is exact and nothing of p is small (field trial)"),
        Example("import math\ndef lower_tail(p):\n    if p < 0.97575:\n        return math.sqrt(-2 * math.log(1 - p))\n"
                "    return None\n", True, note="a branch that lets p reach 0"),
        Example("import numpy as np\ndef test_msle(n_samples=50):\n    y_true = np.arange(n_samples)\n"
                "    y_pred = y_true + 1\n    return np.log(1 + y_true), np.log(1 + y_pred)\n", False,
                note="arange(n) counts 0, 1, 2, ... whatever n is, and a count plus 1 is a count (field trial)"),
        Example("import numpy as np\ndef grid(t0, t1):\n    return np.log(1 + np.arange(t0, t1))\n", True,
                note="arange from an arbitrary start is not whole numbers"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.Call)
        if ctx.family(node) != "log" or p.in_raised_precision(ctx, node) or seeds_iteration(ctx, node):
            return  # arbitrary precision, or a starting point whose low digits never reach the answer
        arg = p.single_arg(node)
        found = one_plus(ctx, arg) if arg is not None else None
        if found is None:
            return
        x, negated = found
        if exponentiated_only(ctx, node) or beside_large_constant(ctx, node) or log_space_only(ctx, node, x):
            return  # only the log's absolute error reaches the result (auditor/log_space.py)
        if guarded_away_from_zero(ctx, node, x, _SAFE) or absolute_check_only(ctx, node):
            return  # a branch keeps |x| >= _SAFE, or only an absolute tolerance judges the value
        module = p.callee_module(ctx, node) or "math"
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if module in _HAS_LOG1P:
            func, imports = p.spelled(ctx, module, "log1p")
            inner = p.operand_text(ctx, x) if negated else p.text(ctx, x)
            rewrite = f"{func}({'-' + inner if negated else inner})"
        fix = rewrite or "a log1p function"
        yield Hit(node, f"for |x| near 1e-10 half the digits of x are rounded away and below 1e-16 this returns 0; use {fix}",
                  rewrite=rewrite, imports=imports)
