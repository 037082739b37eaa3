"""A difference of two correlated quantities that can be nearly equal loses their shared digits.

When a and b agree in their first k digits, a - b has only the remaining digits of each, and
every earlier rounding error in a or b is now relative to a much smaller result. This rule
finds the general shapes where the operands are computed from the same variables and meet:
f(u) - f(v) for one elementary function with related arguments (exp(a) - exp(b),
log(x + 1) - log(x), cos(a) - cos(b)); a function minus its own leading Taylor term (x - sin(x),
tanh(x) - x, cosh(x) - 1, tan(x) - sin(x)); 1/a - 1/b with related a and b; and a scaled value
minus its base, x*(1 + d) - x, which returns only the digits of x*d that survived the addition
(a relative change computed the long way). Each has an equal form that forms the small quantity
first: sum-to-product identities, exp(b)*expm1(a - b), log1p((a - b)/b) or log(a/b),
(b - a)/(a*b), or x*d itself.

Left alone on purpose: differences of independent inputs (a - b from two parameters), the
log-odds pair log(p) - log(1 - p) (it meets only where p crosses 1/2, where the rounding p
already carries costs as much as the subtraction), centring against a mean, integer, index, string and time arithmetic, difference quotients (the
finite-difference rule's), convergence tests, and (a + b) - a written out, which real code uses
on purpose (the representable step (x + h) - x, Fast2Sum, Kahan's correction),
and the forms other rules own (exp(x) - 1, 1 - cos(x), sqrt differences, squares, variance,
1 - cdf).
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.elementary import (
    Operands, difference_operands, reads_variables, related, spelled_like, stable_origin,
)
from auditor.nodes import walk

#: elementary functions whose difference at related arguments is this rule's (sqrt is sqrt-difference's)
_SMOOTH = frozenset({"exp", "exp2", "log", "log10", "log2", "log1p", "expm1", "sin", "cos", "tan", "sinh", "cosh",
                     "tanh", "asin", "acos", "atan", "asinh", "acosh", "atanh", "erf", "erfc", "gamma", "lgamma",
                     "gammaln", "cbrt"})
#: functions equal to x + O(x**3) near 0: f(x) - x keeps only rounding error for small x
_LEADING = frozenset({"sin", "tan", "sinh", "tanh", "asin", "atan", "asinh", "atanh", "log1p", "expm1"})
_HAS_EXPM1 = ("math", "numpy", "scipy.special", "mpmath", "torch", "jax.numpy", "cupy")

Found = tuple[str, Severity | None, ast.expr | None, tuple[str, ...], list[ast.expr]]


#: functions with f(0) = 0 and f'(0) != 0: f(c1*z) - f(c2*z) with c1 != c2 is about (c1 - c2) f'(0) z
#: near 0 and is never small against its operands there, unlike exp or cos (both near f(0) = 1)
_ZERO_AT_ZERO = frozenset({"sin", "tan", "sinh", "tanh", "asin", "atan", "asinh", "atanh"})


def _scaled(expr: ast.expr) -> tuple[float, tuple[str, ...]]:
    """(product of the literal factors, the other factors) of a product such as `2 * pi * x`."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Mult):
        (fl, rl), (fr, rr) = _scaled(expr.left), _scaled(expr.right)
        return fl * fr, tuple(sorted(rl + rr))
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Div):
        value = p.literal_number(expr.right)
        if isinstance(value, (int, float)) and value != 0:
            factor, rest = _scaled(expr.left)
            return factor / value, rest
    value = p.literal_number(expr)
    if isinstance(value, (int, float)):
        return float(value), ()
    return 1.0, (ast.dump(expr),)


def _no_fixed_point_of(ctx: Context, a: ast.expr, b: ast.expr) -> bool:
    """`a` is log(b) or exp(b): log z < z < exp z everywhere, so f(z) and f(log z) never meet
    (e.g. log(z) - log(log(z)) in an asymptotic expansion)."""
    return ctx.is_call(a, "log", "exp") and p.single_arg(a) is not None and p.same_expr(p.single_arg(a), b)  # type: ignore[arg-type]


#: a reflection `K - a` with K in this range costs log(a) - log(K - a) at most about one digit over the
#: rounding a itself carries (see _reflected_logs)
_REFLECTION = (1e-3, 1e3)


def _reflected_logs(ctx: Context, family: str, a: ast.expr, b: ast.expr) -> bool:
    """log(a) - log(K - a), the log-odds pair (also through locals: q = 1 - p): the two meet only where a
    crosses K/2, and there the difference is ill-conditioned in a itself. Its derivative is
    1/a + 1/(K - a) = 4/K, so the rounding a already carries (eps * K/2) is worth 2*eps in the result,
    while the subtraction adds about 2*eps*|log(K/2)|; log(a/(K - a)) or log1p((2a - K)/(K - a)) win
    nothing unless a is exact."""
    if family not in ("log", "log2", "log10"):
        return False
    for x, y in ((a, b), (b, a)):
        terms = alg.signed_terms(ctx.origin(y))
        constants = [(p.literal_number(t), s) for t, s in terms if isinstance(p.literal_number(t), (int, float))]
        others = [(t, s) for t, s in terms if p.literal_number(t) is None]
        if len(terms) != 2 or len(constants) != 1 or len(others) != 1 or others[0][1] > 0:
            continue
        k = float(constants[0][0]) * constants[0][1]  # type: ignore[arg-type]
        if any(p.same_expr(others[0][0], v) for v in (x, ctx.origin(x))) and _REFLECTION[0] <= k <= _REFLECTION[1]:
            return True
    return False


def _distinct_multiples(a: ast.expr, b: ast.expr) -> bool:
    """`2*pi*x` and `8*pi*x`: literal multiples of one expression with different factors."""
    (fa, ra), (fb, rb) = _scaled(a), _scaled(b)
    return bool(ra) and ra == rb and fa != fb


def _half(node: ast.expr) -> ast.expr:
    return alg.binop(node, ast.Div(), alg.num(2))


def product_form(ctx: Context, call: ast.Call, family: str, a: ast.expr, b: ast.expr) -> tuple[ast.expr | None, tuple[str, ...]]:
    """An equal form of f(a) - f(b) that forms a - b first (sum-to-product, expm1, log of a ratio)."""
    module = p.callee_module(ctx, call) or "math"

    def spell(name: str) -> tuple[str, tuple[str, ...]]:
        return spelled_like(ctx, module, name)

    if family == "exp":
        if p.same_expr(b, alg.neg(a)) or p.same_expr(a, alg.neg(b)):
            (sinh, imports), x = spell("sinh"), (a if p.same_expr(b, alg.neg(a)) else b)
            sign = 2 if x is a else -2
            return alg.binop(alg.num(sign), ast.Mult(), alg.call(sinh, x)), imports
        if module not in _HAS_EXPM1:
            return None, ()
        (exp, i1), (expm1, i2) = spell("exp"), spell("expm1")
        return alg.binop(alg.call(exp, b), ast.Mult(), alg.call(expm1, alg.difference(a, b))), i1 + i2
    if family in ("log", "log2", "log10"):
        diff = alg.difference(a, b)
        simpler = len(alg.signed_terms(diff)) < len(alg.signed_terms(a)) + len(alg.signed_terms(b))
        if family == "log" and simpler and module in _HAS_EXPM1:  # log(a) - log(b) = log1p((a - b)/b)
            log1p, imports = spell("log1p")
            return alg.call(log1p, alg.binop(diff, ast.Div(), b)), imports
        name, imports = spell(ctx.qualname(call.func).rpartition(".")[2])  # type: ignore[union-attr]
        return alg.call(name, alg.binop(a, ast.Div(), b)), imports
    total, diff = _half(alg.build_sum(alg.combine([(a, 1), (b, 1)]))), _half(alg.difference(a, b))
    pairs = {"sin": (2, "cos", "sin"), "cos": (-2, "sin", "sin"), "sinh": (2, "cosh", "sinh"), "cosh": (2, "sinh", "sinh")}
    if family in pairs:
        k, f, g = pairs[family]
        (fn, i1), (gn, i2) = spell(f), spell(g)
        return alg.build_product([alg.num(k), alg.call(fn, total), alg.call(gn, diff)]), i1 + i2
    if family == "tan":
        (sin, i1), (cos, i2) = spell("sin"), spell("cos")
        den = alg.binop(alg.call(cos, a), ast.Mult(), alg.call(cos, b))
        return alg.binop(alg.call(sin, alg.difference(a, b)), ast.Div(), den), i1 + i2
    return None, ()


def is_difference_quotient(ctx: Context, node: ast.AST) -> bool:
    """(f(x + h) - f(x)) / h, directly or through a local: the finite-difference rule's pattern."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is node:
        return reads_variables(ctx, parent.right)
    if isinstance(parent, ast.Assign) and len(parent.targets) == 1 and isinstance(parent.targets[0], ast.Name):
        name = parent.targets[0].id
        return any(isinstance(n, ast.BinOp) and isinstance(n.op, ast.Div) and isinstance(n.left, ast.Name)
                   and n.left.id == name and n.lineno > parent.lineno for n in walk(ctx.scope(node)))
    return False


def in_test(ctx: Context, node: ast.AST) -> bool:
    """Inside a comparison (`abs(x_new - x) < tol`): a convergence test, harmless."""
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.Compare):
            return True
        if isinstance(anc, ast.stmt):
            return False
    return False


class SubtractiveCancellation(Rule):
    id = "subtractive-cancellation"
    title = "difference of nearly equal correlated values"
    severity = Severity.NOTE
    summary = "a - b where a and b come from the same variables and can be nearly equal"
    node_types = (ast.BinOp, ast.AugAssign)
    method = (
        "rearranging to form the small difference first (sum-to-product identities, expm1, log of a ratio); "
        "N. J. Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, section 1.7 on "
        "cancellation; D. Goldberg, What Every Computer Scientist Should Know About Floating-Point Arithmetic, "
        "ACM Computing Surveys 23(1), 1991 (from memory)"
    )
    rewrite_template = "2 * math.cos(({a} + {b}) / 2) * math.sin(({a} - {b}) / 2)"
    examples = (
        Example("import math\ndef beat(w, dw, t):\n    return math.sin((w + dw) * t) - math.sin(w * t)\n", True,
                "2 * math.cos(((w + dw) * t + w * t) / 2) * math.sin(dw * t / 2)", {"w": 1.0, "dw": 1e-9, "t": 1.0}),
        Example("import numpy as np\ndef gain(x):\n    return np.log(x + 1) - np.log(x)\n", True, "np.log1p(1 / x)"),
        Example("import math\ndef odd(x):\n    return math.exp(x) - math.exp(-x)\n", True, "2 * math.sinh(x)"),
        Example("def spacing(n):\n    return 1 / n - 1 / (n + 1.5)\n", True, "1.5 / (n * (n + 1.5))"),
        Example("def excess(rho0, mu, b):\n    rho = rho0 * (1.0 + (mu * b) ** 2)\n    return (rho - rho0) / rho0\n", True,
                "rho0 * (mu * b) ** 2"),
        Example("import math\ndef remainder(x):\n    return x - math.sin(x)\n", True, note="no closed form: use a series"),
        Example("import numpy as np\ndef centre(x):\n    return x - np.mean(x)\n", False, note="centring is stable practice"),
        Example("import numpy as np\ndef wave(x):\n    return np.sin(2 * np.pi * x) - np.sin(8 * np.pi * x) + 3\n", False,
                note="distinct multiples under a function vanishing at 0: never nearly equal (field trial)"),
        Example("import numpy as np\ndef lambert_guess(z):\n    return np.log(z) - np.log(np.log(z))\n", False,
                note="z and log(z) never meet: nothing to cancel (field trial)"),
        Example("def f(a, b):\n    return a - b\n", False, note="independent inputs"),
        Example("import math\ndef slope(x, h):\n    return (math.exp(x + h) - math.exp(x)) / h\n", False,
                note="a difference quotient: the finite-difference rule's"),
        Example("def kahan(xs):\n    s = c = 0.0\n    for x in xs:\n        y = x - c\n        t = s + y\n"
                "        c = (t - s) - y\n        s = t\n    return s\n", False, note="an error-free transformation"),
        Example("import numpy as np\ndef log_odds_ratio(p1, p2):\n"
                "    return np.log(p1) - np.log(1 - p1) - np.log(p2) + np.log(1 - p2)\n", False,
                note="log(p) - log(1 - p) meets only where p crosses 1/2, where p's own rounding costs as much (field trial)"),
        Example("import numpy as np\ndef half_width(p):\n    return np.log(1 + p) - np.log(1 - p)\n", True,
                "np.log1p((p + p) / (1 - p))",
                note="1 + p and 1 - p meet as p goes to 0, where both logs lose p's digits: still reported"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        ops = difference_operands(ctx, node)
        if ops is None:
            return
        for matcher in (self._same_function, self._tan_sin, self._leading_term, self._reciprocals, self._absorbed):
            found = matcher(ctx, node, ops)
            if found is not None:
                message, severity, form, imports, values = found
                ok = form is not None and not ops.aug and all(stable_origin(ctx, v, node) for v in values)
                rewrite = alg.in_place(form) if ok and form is not None else None
                yield Hit(node, message.format(fix=rewrite or "a form that subtracts the small part first"),
                          severity=severity, rewrite=rewrite, imports=imports if rewrite else ())
                return

    @staticmethod
    def _same_function(ctx: Context, node: ast.AST, ops: Operands) -> Found | None:
        left, right = ops.left, ops.right
        if not (isinstance(left, ast.Call) and isinstance(right, ast.Call)):
            return None
        family = ctx.family(left)
        if family not in _SMOOTH or ctx.family(right) != family:
            return None
        a, b = p.single_arg(left), p.single_arg(right)
        if a is None or b is None or p.same_expr(a, b) or not related(ctx, a, b):
            return None
        if is_difference_quotient(ctx, node) or (family in _ZERO_AT_ZERO and _distinct_multiples(a, b)):
            return None
        if _no_fixed_point_of(ctx, a, b) or _no_fixed_point_of(ctx, b, a) or _reflected_logs(ctx, family, a, b):
            return None
        form, imports = product_form(ctx, left, family, a, b)
        odd = family == "exp" and (p.same_expr(b, alg.neg(a)) or p.same_expr(a, alg.neg(b)))
        message = (f"{family}(a) - {family}(b) at close arguments cancels the digits the two values share "
                   "(all of them when a - b is below 1e-16 of a); use {fix}")
        return message, Severity.WARNING if odd else None, form, imports, [a, b]

    @staticmethod
    def _leading_term(ctx: Context, node: ast.AST, ops: Operands) -> Found | None:
        for call, other, sign in ((ops.left, ops.right, 1), (ops.right, ops.left, -1)):
            family = ctx.family(call) if isinstance(call, ast.Call) else None
            arg = p.single_arg(call)
            if family is None or arg is None or not reads_variables(ctx, arg):
                continue
            assert isinstance(call, ast.Call)
            module = p.callee_module(ctx, call) or "math"
            if family in _LEADING and p.same_expr(other, arg) and not p.is_integer_valued(ctx, arg):
                return (f"{family}(x) - x keeps only rounding error for small |x| (about 2*log10(1/|x|) digits lost: "
                        "6 at 1e-3, all below 1e-8); evaluate a series for small |x| instead",
                        Severity.WARNING, None, (), [arg])
            if family == "cosh" and p.is_one(other):
                sinh, imports = spelled_like(ctx, module, "sinh")
                square = alg.binop(alg.call(sinh, _half(arg)), ast.Pow(), alg.num(2))
                return ("cosh(x) rounds to 1 for |x| below about 1e-8, so cosh(x) - 1 returns 0 there and loses half "
                        "its digits near 1e-4; use {fix}", Severity.WARNING,
                        alg.binop(alg.num(2 * sign), ast.Mult(), square), imports, [arg])
        return None

    @staticmethod
    def _tan_sin(ctx: Context, node: ast.AST, ops: Operands) -> Found | None:
        """tan(x) - sin(x) = 2*tan(x)*sin(x/2)**2."""
        l, r = ops.left, ops.right
        if not (isinstance(l, ast.Call) and isinstance(r, ast.Call)) or {ctx.family(l), ctx.family(r)} != {"tan", "sin"}:
            return None
        x, y = p.single_arg(l), p.single_arg(r)
        if x is None or y is None or not p.same_expr(x, y) or not reads_variables(ctx, x):
            return None
        tan_call = l if ctx.family(l) == "tan" else r
        sin, imports = spelled_like(ctx, p.callee_module(ctx, tan_call) or "math", "sin")
        square = alg.binop(alg.call(sin, _half(x)), ast.Pow(), alg.num(2))
        form = alg.build_product([alg.num(2 if tan_call is l else -2), tan_call, square])
        return ("tan(x) - sin(x) is about x**3/2 while both terms are about x, so about 2*log10(1/|x|) digits are "
                "lost for small x; use {fix}", Severity.WARNING, form, imports, [x])

    @staticmethod
    def _reciprocals(ctx: Context, node: ast.AST, ops: Operands) -> Found | None:
        l, r = ops.left, ops.right
        if not all(isinstance(s, ast.BinOp) and isinstance(s.op, ast.Div) for s in (l, r)):
            return None
        assert isinstance(l, ast.BinOp) and isinstance(r, ast.BinOp)
        n, d1, d2 = l.left, l.right, r.right
        if not p.same_expr(n, r.left) or p.same_expr(d1, d2) or not related(ctx, d1, d2):
            return None
        if (p.is_integer_valued(ctx, d1) and p.is_integer_valued(ctx, d2)) or is_difference_quotient(ctx, node):
            return None
        diff = alg.difference(d2, d1)
        top = diff if p.is_one(n) else alg.binop(n, ast.Mult(), diff)
        form = alg.binop(top, ast.Div(), alg.binop(d1, ast.Mult(), d2))
        return ("1/a - 1/b at close a and b cancels; use {fix}, which forms the small b - a first",
                None, form, (), [l, r])

    @staticmethod
    def _absorbed(ctx: Context, node: ast.AST, ops: Operands) -> Found | None:
        pairs = ((ops.left, ops.right_written, 1), (ops.right, ops.left_written, -1))
        for big, small, sign in pairs:
            rest = absorbed_part(big, small)
            if rest is None or in_test(ctx, node) or not reads_variables(ctx, small):
                continue
            form = rest if sign > 0 else alg.neg(rest)
            return ("x*(1 + d) - x returns only the digits of x*d that survived the addition (none once |d| < 1e-16); "
                    "use {fix} directly", None, form, (), [big])
        return None


def absorbed_part(big: ast.expr, small: ast.expr) -> ast.expr | None:
    """x*d for big = x*(1 + d) (any factor order) and small = x; else None.

    The additive twin (a + b) - a is left alone: written out it is almost always deliberate (the
    representable step (x + h) - x of numerical differentiation, Fast2Sum, Kahan's correction).
    """
    factors, wanted = alg.mult_factors(big), alg.mult_factors(small)
    for i, f in enumerate(factors):
        inner = alg.signed_terms(f)
        one = next((j for j, (t, s) in enumerate(inner) if s > 0 and p.is_one(t)), None)
        others = factors[:i] + factors[i + 1:]
        if one is None or len(inner) < 2 or len(others) != len(wanted):
            continue
        if all(p.same_expr(a, b) for a, b in zip(sorted(others, key=ast.dump), sorted(wanted, key=ast.dump))):
            return alg.build_product(others + [alg.build_sum(inner[:one] + inner[one + 1:])])
    return None
