"""`log(sum(exp(v)))` and softmax without the max shift overflow and underflow.

exp overflows to inf for arguments above about 709.8 and underflows to 0 below about -745,
so `log(sum(exp(v)))` returns inf for log-likelihoods near 1000 and -inf (log of 0) for
values near -1000, although the true result is near max(v). The softmax `exp(v) / sum(exp(v))`
gives nan (inf / inf) or 0 / 0 in the same ranges. Subtracting the maximum first,
m + log(sum(exp(v - m))), is exact in real arithmetic and keeps every exponent at or below 0,
with the largest term exactly 1. Where SciPy is in use, `scipy.special.logsumexp` and
`scipy.special.softmax` do this; the two-term `log(exp(a) + exp(b))` is `logaddexp(a, b)`.
A max-shifted form is not flagged.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p


def is_max(ctx: Context, expr: ast.expr) -> bool:
    """`max(v)`, `np.max(v)`, `np.amax(v)`, `v.max()`, through a local variable."""
    expr = ctx.origin(expr)
    if not isinstance(expr, ast.Call):
        return False
    q = ctx.qualname(expr.func)
    if q is not None:
        return q.rpartition(".")[2] in ("max", "amax", "nanmax")
    func = expr.func
    return isinstance(func, ast.Name) and func.id == "max" or isinstance(func, ast.Attribute) and func.attr == "max"


def unshifted_exp(ctx: Context, expr: ast.expr) -> ast.Call | None:
    """The exp call when `expr` (or its local) is exp(a) with no max subtracted from a."""
    call = ctx.origin(expr)
    if not (isinstance(call, ast.Call) and ctx.is_call(call, "exp")):
        return None
    arg = p.single_arg(call)
    if arg is None or not p.has_free_names(arg):
        return None
    arg = ctx.origin(arg)
    if isinstance(arg, ast.BinOp) and isinstance(arg.op, ast.Sub) and is_max(ctx, arg.right):
        return None
    return call


def summed_exp(ctx: Context, expr: ast.expr) -> tuple[ast.Call, ast.Call, ast.comprehension | None] | None:
    """(sum call, exp call, comprehension) when `expr` sums unshifted exponentials."""
    call = ctx.origin(expr)
    found = p.reduction(ctx, call)
    if found is None or found[0] != "sum" or not isinstance(call, ast.Call):
        return None
    data = found[1]
    if isinstance(data, ast.GeneratorExp | ast.ListComp) and len(data.generators) == 1 and not data.generators[0].ifs:
        inner = unshifted_exp(ctx, data.elt)
        return (call, inner, data.generators[0]) if inner is not None else None
    inner = unshifted_exp(ctx, data)
    return (call, inner, None) if inner is not None else None


def exp_pair(ctx: Context, expr: ast.expr) -> tuple[ast.Call, ast.Call] | None:
    """The two exp calls of `exp(a) + exp(b)` (directly or through a local), else None."""
    expr = ctx.origin(expr)
    if not p.is_add(expr):
        return None
    assert isinstance(expr, ast.BinOp)
    a, b = unshifted_exp(ctx, expr.left), unshifted_exp(ctx, expr.right)
    return (a, b) if a is not None and b is not None else None


def logaddexp_text(ctx: Context, log: ast.Call, a: ast.Call, b: ast.Call) -> tuple[str | None, tuple[str, ...]]:
    """np.logaddexp(a, b); for math, max(a, b) + log1p(exp(-|a - b|)), equal in real arithmetic."""
    module = p.callee_module(ctx, a)
    x, y = p.text(ctx, a.args[0]), p.text(ctx, b.args[0])
    if module == "numpy":
        func, imports = p.spelled(ctx, "numpy", "logaddexp")
        return f"{func}({x}, {y})", imports
    if module == "math":
        log1p, imports = p.spelled(ctx, "math", "log1p")
        exp = p.text(ctx, a.func)
        diff = f"{p.operand_text(ctx, a.args[0])} - {p.operand_text(ctx, b.args[0])}"
        return f"max({x}, {y}) + {log1p}({exp}(-abs({diff})))", imports
    return None, ()


def plain(call: ast.Call) -> bool:
    """A sum with nothing but its data argument (no axis, no dtype)."""
    return not call.keywords and len(call.args) <= 1


class LogSumExp(Rule):
    id = "log-sum-exp"
    title = "log-sum-exp or softmax without the max shift"
    severity = Severity.WARNING
    summary = "log(sum(exp(v))) or exp(v)/sum(exp(v)) overflows above 709 and underflows below -745"
    node_types = (ast.Call, ast.BinOp)
    requires = ("exp",)  # a file that never spells these cannot hold this pattern
    method = (
        "The log-sum-exp trick (shift by the maximum): N. J. Higham et al., Accurately computing the log-sum-exp "
        "and softmax functions, IMA J. Numer. Anal. 41(4), 2021 (from memory)"
    )
    rewrite_template = "np.max({v}) + np.log(np.sum(np.exp({v} - np.max({v}))))"
    examples = (
        Example("import numpy as np\ndef total(v):\n    return np.log(np.sum(np.exp(v)))\n", True,
                "np.max(v) + np.log(np.sum(np.exp(v - np.max(v))))"),
        Example("import math\ndef total(v):\n    return math.log(sum(math.exp(a) for a in v))\n", True,
                "(_m := max(a for a in v)) + math.log(sum(math.exp(a - _m) for a in v))"),
        Example("import numpy as np\nimport scipy.special\ndef probs(v):\n    e = np.exp(v)\n    return e / e.sum()\n",
                True, "scipy.special.softmax(v)"),
        Example("from scipy.special import logsumexp\nimport numpy as np\ndef f(w):\n    return np.log(np.exp(w).sum())\n",
                True, "logsumexp(w)"),
        Example("import numpy as np\ndef pair(a, b):\n    return np.log(np.exp(a) + np.exp(b))\n", True,
                "np.logaddexp(a, b)"),
        Example("import numpy as np\ndef total(v):\n    m = np.max(v)\n    return m + np.log(np.sum(np.exp(v - m)))\n", False),
        Example("import numpy as np\ndef probs(v):\n    e = np.exp(v - v.max())\n    return e / e.sum()\n", False),
        Example("import numpy as np\ndef f(v):\n    return np.log(np.sum(v))\n", False),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.Call) and ctx.is_call(node, "log") and p.single_arg(node) is not None:
            found = summed_exp(ctx, node.args[0])
            pair = exp_pair(ctx, node.args[0]) if found is None else None
            if found is not None:
                rewrite, imports = self._lse_text(ctx, node, *found)
            elif pair is not None:
                rewrite, imports = logaddexp_text(ctx, node, *pair)
            else:
                return
            fix = rewrite or "the max-shifted form m + log(sum(exp(v - m))) with m = max(v)"
            yield Hit(node, f"exp overflows above 709.8 and underflows below -745, so this returns inf or -inf "
                      f"where the answer is near max(v); use {fix}", rewrite=rewrite, imports=imports)
        elif isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
            top = unshifted_exp(ctx, node.left)
            found = summed_exp(ctx, node.right) if top is not None else None
            if top is None or found is None or not p.same_expr(top, found[1]) or found[2] is not None:
                return
            rewrite, imports = self._softmax_text(ctx, top, found[0])
            fix = rewrite or "exp(v - max(v)) / sum(exp(v - max(v)))"
            yield Hit(node, f"unshifted softmax gives nan (inf/inf) for entries above 709.8 and 0/0 when all are "
                      f"below -745; use {fix}", rewrite=rewrite, imports=imports)

    @staticmethod
    def _lse_text(ctx: Context, log: ast.Call, total: ast.Call, exp: ast.Call,
                  comp: ast.comprehension | None) -> tuple[str | None, tuple[str, ...]]:
        v = exp.args[0]
        if comp is not None:
            if p.callee_module(ctx, exp) != "math" or not isinstance(comp.target, ast.Name):
                return None, ()
            head = f"for {p.text(ctx, comp.target)} in {p.text(ctx, comp.iter)}"
            e, body = p.text(ctx, exp.func), p.operand_text(ctx, v)
            return (f"(_m := max({p.text(ctx, v)} {head})) + {p.text(ctx, log.func)}(sum({e}({body} - _m) {head}))"), ()
        if not plain(total) or p.callee_module(ctx, exp) != "numpy":
            return None, ()
        if ctx.imports.imports_any("scipy"):
            func, imports = p.spelled_qualified(ctx, "scipy.special.logsumexp")
            return f"{func}({p.text(ctx, v)})", imports
        np_max, imports = p.spelled(ctx, "numpy", "max")
        np_sum, more = p.spelled(ctx, "numpy", "sum")
        v_max = f"{np_max}({p.text(ctx, v)})"
        shifted = f"{p.text(ctx, exp.func)}({p.operand_text(ctx, v)} - {v_max})"
        return f"{v_max} + {p.text(ctx, log.func)}({np_sum}({shifted}))", (*imports, *more)

    @staticmethod
    def _softmax_text(ctx: Context, exp: ast.Call, total: ast.Call) -> tuple[str | None, tuple[str, ...]]:
        if not plain(total) or p.callee_module(ctx, exp) != "numpy":
            return None, ()
        v = p.text(ctx, exp.args[0])
        if ctx.imports.imports_any("scipy"):
            func, imports = p.spelled_qualified(ctx, "scipy.special.softmax")
            return f"{func}({v})", imports
        np_max, imports = p.spelled(ctx, "numpy", "max")
        np_sum, more = p.spelled(ctx, "numpy", "sum")
        e = p.text(ctx, exp.func)
        shifted = f"{e}({p.operand_text(ctx, exp.args[0])} - {np_max}({v}))"
        return f"{shifted} / {np_sum}({shifted})", (*imports, *more)
