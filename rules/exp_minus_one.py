"""`exp(x) - 1` cancels for small |x|.

Near x = 0, exp(x) is 1 + x + ...; subtracting 1 removes the leading digit and leaves only
what rounding kept of x. For |x| = 1e-8 about half the digits are gone; below the unit
roundoff (|x| < 1.1e-16) the result is exactly 0 (or 2.2e-16) instead of about x. The same
happens to `1 - exp(-x)` and to `exp(x) - 1` reached through a local variable. Every libm
provides expm1, which evaluates exp(x) - 1 without forming exp(x).

Near x = 0 the direct form's absolute error is still a few units of 1 (about 1e-16), so uses that
judge only the absolute size are left alone: the residual or objective of a scipy.optimize root
finder or minimiser (a lambda, or a named function whose every use by name is as the solver's
objective), and an operand of an absolute-tolerance check (`assert_almost_equal` with a tolerance
of 1e-12 or more, or `assert_allclose` with rtol=0).
"""
from __future__ import annotations

import ast
import math
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor import polyrange
from auditor.abs_checks import absolute_check_only
from auditor.solver_defs import solver_residual
from auditor.use_sites import solver_objective
from auditor.values import known_values

#: |u| from which exp(u) - 1 is left alone. Near u = 0 the subtraction magnifies the relative
#: error of exp(u) by |e^u / (e^u - 1)|, about 1/|u|, so it loses about log10(1/|u|) digits;
#: for every |u| >= 0.1 the factor is at most e^0.1 / (e^0.1 - 1) = 10.5: about one digit.
_SAFE_EXPONENT = 0.1

#: modules that offer expm1 under that name
_HAS_EXPM1 = ("math", "numpy", "scipy.special", "mpmath", "torch", "jax.numpy", "cupy")


def exp_argument(ctx: Context, expr: ast.expr) -> tuple[ast.expr, ast.Call] | None:
    """(x, call) when `expr` is exp(x), directly or through a local variable."""
    origin = ctx.origin(expr)
    if ctx.is_call(origin, "exp") and isinstance(origin, ast.Call):
        arg = p.single_arg(origin)
        if arg is not None and p.has_free_names(arg):
            return arg, origin
    return None


def stays_away_from_zero(ctx: Context, exponent: ast.expr) -> bool:
    """True when `exponent` is a one-variable literal polynomial with |u| >= _SAFE_EXPONENT for every real
    value, or takes only values the code spells out (constants, literal arrays), all that far from 0."""
    values = known_values(ctx, exponent)
    if values is not None:
        return min(abs(v) for v in values) >= _SAFE_EXPONENT
    return polyrange.distance_from_zero(exponent, ctx.origin) >= _SAFE_EXPONENT


def compound_stays_away(ctx: Context, r: ast.expr, n: ast.expr) -> bool:
    """(1 + r)**n - 1 with a literal n is exp(u), u = n log(1 + r), and |u| >= _SAFE_EXPONENT.

    |n log(1 + r)| >= t holds when r >= e^(t/|n|) - 1 or r <= e^(-t/|n|) - 1; the first bound is
    the larger in size, so inf |r| >= e^(t/|n|) - 1 is enough on both sides.
    """
    exponent = p.literal_number(n)
    if not isinstance(exponent, (int, float)) or exponent == 0:
        return False
    values = known_values(ctx, r)
    if values is not None and all(v > -1 for v in values):
        return min(abs(exponent * math.log1p(v)) for v in values) >= _SAFE_EXPONENT
    return polyrange.distance_from_zero(r, ctx.origin) >= math.expm1(_SAFE_EXPONENT / abs(exponent))


def expm1_text(ctx: Context, call: ast.Call, arg: ast.expr, negate: bool) -> tuple[str | None, tuple[str, ...]]:
    module = p.callee_module(ctx, call) or "math"
    if module not in _HAS_EXPM1:
        return None, ()
    func, imports = p.spelled(ctx, module, "expm1")
    body = f"{func}({p.text(ctx, arg)})"
    return (f"-{body}" if negate else body), imports


def compound_argument(ctx: Context, expr: ast.expr) -> tuple[ast.expr, ast.expr] | None:
    """(r, n) when `expr` is (1 + r)**n, directly or through locals: exp(n*log1p(r)) in disguise."""
    origin = ctx.origin(expr)
    if not (isinstance(origin, ast.BinOp) and isinstance(origin.op, ast.Pow)):
        return None
    base = ctx.origin(origin.left)
    if not (isinstance(base, ast.BinOp) and isinstance(base.op, (ast.Add, ast.Sub))):
        return None
    if isinstance(base.op, ast.Sub):  # (1 - r)**n is (1 + (-r))**n
        r = alg.neg(base.right) if p.is_one(base.left) else None
    else:
        r = base.right if p.is_one(base.left) else base.left if p.is_one(base.right) else None
    if r is None or not p.has_free_names(r) or p.is_integer_valued(ctx, r):
        return None
    return r, origin.right


def only_absolute(ctx: Context, node: ast.AST) -> bool:
    """The value is judged only by its absolute error: a solver's objective or residual (lambda or named
    function), or an operand of an absolute-tolerance check. Near 0, where expm1 would help, the
    direct form's absolute error is a few units of 1, which neither can see."""
    return solver_objective(ctx, node) or solver_residual(ctx, node) or absolute_check_only(ctx, node)


def compound_text(ctx: Context, r: ast.expr, n: ast.expr, negate: bool) -> tuple[str, tuple[str, ...]]:
    """`math.expm1(n * math.log1p(r))` in the file's style (numpy where only numpy is imported)."""
    module = "numpy" if ctx.imports.imports_any("numpy") and not ctx.imports.imports_any("math") else "math"
    expm1, imports = p.spelled(ctx, module, "expm1")
    log1p, more = p.spelled(ctx, module, "log1p")
    n_text = p.text(ctx, n) if p.literal_number(n) is not None else p.operand_text(ctx, n)
    body = f"{expm1}({n_text} * {log1p}({p.text(ctx, r)}))"
    return (f"-{body}" if negate else body), tuple(dict.fromkeys(imports + more))


class ExpMinusOne(Rule):
    id = "exp-minus-one"
    title = "exp(x) - 1 computed directly"
    severity = Severity.WARNING
    summary = "exp(x) - 1 or 1 - exp(x): cancels for small |x|; use expm1"
    node_types = (ast.BinOp,)
    requires = ("exp", "**")  # a file that never spells these cannot hold this pattern
    method = (
        "expm1 as provided by C99/IEEE 754-2008 libm; error analysis of exp(x) - 1 in N. J. Higham, "
        "Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, section 1.14.1 (from memory)"
    )
    rewrite_template = "math.expm1({x})"
    examples = (
        Example("import math\ndef growth(r):\n    return math.exp(r) - 1.0\n", True, "math.expm1(r)", {"r": 1e-10}),
        Example("import numpy as np\ndef f(x):\n    e = np.exp(x)\n    return e - 1\n", True, "np.expm1(x)"),
        Example("from math import exp as e\ndef decay(t, tau):\n    return 1 - e(-t / tau)\n", True, "-math.expm1(-t / tau)"),
        Example("import math\ndef interest(rate, periods):\n    return (1 + rate) ** periods - 1\n", True,
                "math.expm1(periods * math.log1p(rate))", {"rate": 1e-9, "periods": 12.0}),
        Example("import math\ndef f(x):\n    return math.expm1(x)\n", False),
        Example("def growth(k, n):\n    return (1 + len(k)) ** n - 1\n", False, note="integer base: exact"),
        Example("def lorentz_excess(beta2):\n    return (1.0 - beta2) ** -0.5 - 1.0\n", True,
                "math.expm1(-0.5 * math.log1p(-beta2))", {"beta2": 1e-12}),
        Example("import math\nK = math.exp(2.0) - 1.0\n", False, note="constant argument: nothing to cancel"),
        Example("import math\ndef f(x):\n    return math.exp(x) - math.exp(-x)\n", False, note="a different rule's pattern"),
        Example("import mpmath as mp\ndef coeffs():\n    with mp.workdps(30):\n"
                "        return mp.taylor(lambda x: mp.exp(x) - 1, 0, 10)\n", False,
                note="field trial regression: arbitrary precision (docs/field-trial.md)"),
        Example("import numpy as np\ndef survival(s):\n    return 1 - np.exp(-5.2 + 20.1 * s - 30.4 * s ** 2)\n", False,
                note="exponent a quadratic with no real root, at most -1.88 for every s: 1 - exp(u) >= 0.85, "
                     "nothing cancels (field trial)"),
        Example("import math\ndef excess(t):\n    u = 2.5 + 0.5 * (t - 1.0) ** 2\n    return math.exp(u) - 1.0\n", False,
                note="exponent through a local, never below 2.5 (field trial)"),
        Example("import numpy as np\ndef bump(z):\n    return 1 - np.exp(-0.5 * (z - 2.0) ** 2)\n", True,
                "-np.expm1(-0.5 * (z - 2.0) ** 2)", {"z": 2.0 + 1e-6},
                note="a quadratic exponent with a real root (z = 2) still cancels there"),
        Example("from math import pi, sqrt\ndef test_alg_weight():\n    a = 1.5\n    return pi / sqrt((1 + 2**(-a))**2 - 1)\n",
                False, note="a constant set in the code: r = 0.35, nothing cancels (field trial)"),
        Example("import numpy as np\ndef test_decay():\n    t = np.array([1e-9, 2.0])\n    return 1 - np.exp(-t)\n", True,
                note="spelled out, but one exponent is tiny"),
        Example("import numpy as np\nfrom numpy.testing import assert_almost_equal\ndef test_step(t, y):\n"
                "    expected = 1.0 - np.exp(-t)\n    assert_almost_equal(y, expected)\n", False,
                note="judged only by an absolute tolerance of 1.5e-7: the direct form's error is about 1e-16 "
                     "(field trial)"),
        Example("import numpy as np\nfrom numpy.testing import assert_allclose\ndef test_step(t, y):\n"
                "    expected = 1.0 - np.exp(-t)\n    assert_allclose(y, expected)\n", True,
                note="a relative tolerance sees the lost digits of a small value"),
        Example("import numpy as np\nfrom scipy.optimize import root\ndef resid(x):\n    g = np.zeros(2)\n"
                "    g[0] = np.exp(x[0]) - 1\n    g[1] = x[1] ** 3\n    return g\ndef solve():\n    return root(resid, [1.0, 1.0])\n",
                False, note="a residual handed to a root finder: only its absolute size is tested (field trial)"),
        Example("import numpy as np\nfrom scipy.optimize import root\ndef resid(x):\n    return np.exp(x) - 1\n"
                "def solve():\n    return root(resid, 1.0), resid(1e-9) * 1e9\n", True,
                note="the same function also evaluated for its value"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.BinOp)
        if not isinstance(node.op, ast.Sub):
            return
        if p.is_one(node.right):
            other, negate = node.left, False
        elif p.is_one(node.left):
            other, negate = node.right, True
        else:
            return
        found = exp_argument(ctx, other)
        if found is None and not p.in_raised_precision(ctx, node):
            compound = compound_argument(ctx, other)
            if compound is not None and not compound_stays_away(ctx, *compound) and not only_absolute(ctx, node):
                text, more = compound_text(ctx, *compound, negate)
                yield Hit(node, "(1 + r)**n - 1 keeps only the digits of r that survive 1 + r: for |r| near 1e-10 "
                          f"half are lost and below 1e-16 it returns 0; use {text}", rewrite=text, imports=more)
            return
        if found is None or p.in_raised_precision(ctx, node):
            return  # inside mp.workdps(...) the precision is the caller's choice, not double's
        arg, call = found
        if stays_away_from_zero(ctx, arg) or only_absolute(ctx, node):
            return  # the exponent never comes near 0, or only the absolute error (about eps) is seen
        rewrite, imports = expm1_text(ctx, call, arg, negate)
        fix = rewrite or "an expm1 function"
        yield Hit(
            node,
            f"for |x| below about 1e-8 this loses half its digits and returns 0 below 1e-16; use {fix}",
            rewrite=rewrite,
            imports=imports,
        )
