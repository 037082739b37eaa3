"""`sqrt(a) - sqrt(b)` with nearly equal a and b cancels.

When a and b agree in their leading digits so do their square roots, and the subtraction
throws those digits away: sqrt(x + 1) - sqrt(x) keeps about 16 - log10(x) digits and returns 0
for x above 1e16 (x + 1 rounds to x). The same happens to sqrt(1 + t) - 1 for small t and to
sqrt(x*x + c) - x for large x. Multiplying by the conjugate gives the same value with no
subtraction of nearly equal numbers: (a - b) / (sqrt(a) + sqrt(b)), and a - b is usually a
simple expression (1, t, c) that is formed exactly.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.elementary import (
    difference_operands, is_discriminant, reads_variables, related, root_sum, sqrt_argument, stable_origin,
)
from auditor.root_guards import guarded_root


def squared_value(ctx: Context, side: ast.expr) -> tuple[ast.expr, bool] | None:
    """(what the side squares to, True when it is a real square root) for sqrt(a) and the literal 1."""
    arg = sqrt_argument(ctx, side)
    if arg is not None:
        return ctx.origin(arg), True
    if p.is_one(side):
        return ast.Constant(1), False
    return None


def _plus_root_of_square(ctx: Context, node: ast.BinOp) -> tuple[ast.expr, ast.expr] | None:
    """(x, c) for `x + sqrt(x*x + c)` or `sqrt(x**2 + c) + x` (through locals), else None."""
    for x, root in ((node.left, node.right), (node.right, node.left)):
        radicand = sqrt_argument(ctx, root)
        if radicand is None:
            continue
        radicand = ctx.origin(radicand)
        if not (isinstance(radicand, ast.BinOp) and isinstance(radicand.op, ast.Add)):
            continue
        for square, c in ((radicand.left, radicand.right), (radicand.right, radicand.left)):
            base = p.is_square(square)
            if base is not None and p.same_expr(base, x) and reads_variables(ctx, x):
                return x, c
    return None


class SqrtDifference(Rule):
    id = "sqrt-difference"
    title = "difference of nearly equal square roots"
    severity = Severity.WARNING
    summary = "sqrt(a) - sqrt(b) with nearly equal a and b: use (a - b) / (sqrt(a) + sqrt(b))"
    node_types = (ast.BinOp, ast.Call)
    method = (
        "rationalising by the conjugate, sqrt(a) - sqrt(b) = (a - b)/(sqrt(a) + sqrt(b)); D. Goldberg, What Every "
        "Computer Scientist Should Know About Floating-Point Arithmetic, ACM Computing Surveys 23(1), 1991, "
        "section 1.4 on rewriting to avoid cancellation (from memory)"
    )
    rewrite_template = "({a} - {b}) / (math.sqrt({a}) + math.sqrt({b}))"
    examples = (
        Example("import math\ndef gap(x):\n    return math.sqrt(x + 1) - math.sqrt(x)\n", True,
                "1 / (math.sqrt(x + 1) + math.sqrt(x))", {"x": 1e12}),
        Example("import numpy as np\ndef f(t):\n    return np.sqrt(1.0 + t) - 1.0\n", True, "t / (np.sqrt(1.0 + t) + 1.0)"),
        Example("from math import sqrt as root\ndef lift(v, c):\n    return root(v * v + c) - v\n", True,
                "c / (root(v * v + c) + v)"),
        Example("import math\ndef f(k, t, d):\n    hot = math.sqrt(k * (t + d))\n    cold = math.sqrt(k * t)\n"
                "    return hot - cold\n", True, "k * d / (hot + cold)"),
        Example("import math\ndef arsinh(x):\n    return math.log(x + math.sqrt(x * x + 1))\n", True,
                "math.asinh(x)", {"x": -1e6}),
        Example("import numpy as np\ndef span(x, c):\n    return x + np.sqrt(x**2 + c)\n", True),
        Example("import math\ndef f(a, b):\n    return math.sqrt(a) - math.sqrt(b)\n", False,
                note="independent inputs: nothing says they are close"),
        Example("import math\ndef f(x):\n    return 1 / (math.sqrt(x + 1) + math.sqrt(x))\n", False),
        Example("import math\ndef root(a, b, c):\n    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)\n", False,
                note="the quadratic-roots rule's pattern"),
        Example("import numpy as np\ndef root_minus_one(a, k):\n    if np.angle(a) >= np.pi / 2:\n        a = np.sqrt(a)\n"
                "        k = k - 1\n    z0 = a - 1\n    return z0 / (1 + np.sqrt(a)), k\n", False,
                note="a is a root only where its argument is at least pi/4, far from 1; elsewhere it is not a "
                     "root (field trial)"),
        Example("import numpy as np\ndef root_minus_one(a, k):\n    if k > 2:\n        a = np.sqrt(a)\n"
                "    return a - 1\n", True, note="a root under a test that says nothing of its size still cancels"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.Call):
            yield from self._log_of_root_sum(node, ctx)
            return
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
            parent = ctx.parent(node)
            conjugate = isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.right is node
            # c / (x + sqrt(x*x + c)) is the stable conjugate form of sqrt(x*x + c) - x: left alone
            if not conjugate and not self._inside_log(node, ctx) and _plus_root_of_square(ctx, node) is not None:
                x, c = _plus_root_of_square(ctx, node)  # type: ignore[misc]
                yield Hit(node, "for negative x, x + sqrt(x*x + c) cancels to about c / (2|x|) and loses the digits "
                          "the two terms share (all of them for |x| above 1e8 when c is 1); use "
                          "-c / (x - sqrt(x*x + c)) for x < 0", severity=Severity.NOTE)
            return
        ops = difference_operands(ctx, node)
        if ops is None or ops.aug or self._guarded(ctx, ops.left, ops.right, ops.left_written, ops.right_written):
            return
        found = self._conjugate_numerator(ctx, ops.left, ops.right, node)
        if found is None:
            return
        numerator, severity, values = found
        rewrite = None
        if all(stable_origin(ctx, v, node) for v in values):
            denominator = alg.binop(ops.left_written, ast.Add(), ops.right_written)
            rewrite = alg.in_place(alg.binop(numerator, ast.Div(), denominator))
        fix = rewrite or "(a - b) / (sqrt(a) + sqrt(b))"
        yield Hit(node, "the two square roots agree in their leading digits and the subtraction discards them "
                  f"(sqrt(x + 1) - sqrt(x) is 0 for x above 1e16); use {fix}", severity=severity, rewrite=rewrite)

    @staticmethod
    def _guarded(ctx: Context, left: ast.expr, right: ast.expr, left_written: ast.expr, right_written: ast.expr) -> bool:
        """`r - 1` where r is a root only on a branch whose test keeps it away from 1 (auditor/root_guards.py)."""
        return (p.is_one(right) and guarded_root(ctx, left_written)) or (p.is_one(left) and guarded_root(ctx, right_written))

    @staticmethod
    def _inside_log(node: ast.AST, ctx: Context) -> bool:
        parent = ctx.parent(node)
        return isinstance(parent, ast.Call) and ctx.family(parent) == "log" and p.single_arg(parent) is node

    @staticmethod
    def _log_of_root_sum(node: ast.Call, ctx: Context) -> Iterator[Hit]:
        """log(x + sqrt(x*x + 1)): the inverse hyperbolic sine, written so that it cancels for x < 0."""
        arg = p.single_arg(node)
        if ctx.family(node) != "log" or arg is None or not isinstance(arg, ast.BinOp) or not isinstance(arg.op, ast.Add):
            return
        found = _plus_root_of_square(ctx, arg)
        if found is None or not p.is_one(found[1]):
            return
        module = p.callee_module(ctx, node) or "math"
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if module in ("math", "numpy", "cmath", "mpmath"):
            func, imports = p.spelled(ctx, module, "asinh" if module != "numpy" else "arcsinh")
            rewrite = f"{func}({p.text(ctx, found[0])})"
        yield Hit(node, "log(x + sqrt(x*x + 1)) cancels for negative x (it returns -inf below about -1e8) and "
                  f"rounds away small x; use {rewrite or 'asinh(x)'}", rewrite=rewrite, imports=imports)

    @staticmethod
    def _conjugate_numerator(ctx: Context, left: ast.expr, right: ast.expr,
                             node: ast.AST) -> tuple[ast.expr, Severity, list[ast.expr]] | None:
        """(left**2 - right**2 simplified, severity, the values it copies), or None when not this pattern."""
        sl, sr = squared_value(ctx, left), squared_value(ctx, right)
        if sl is not None and sr is not None and (sl[1] or sr[1]):
            (a, _), (b, _) = sl, sr
            if p.same_expr(a, b) or not (reads_variables(ctx, a) or reads_variables(ctx, b)):
                return None
            literal_one = not (sl[1] and sr[1])
            if not literal_one and not related(ctx, a, b):
                return None  # independent radicands: nothing says they are close
            numerator = alg.difference(a, b)
            one_plus = any(p.is_one(t) for t, _ in alg.signed_terms(a if sl[1] else b))
            severity = Severity.NOTE if literal_one and not one_plus else Severity.WARNING
            return numerator, severity, [a, b]
        shape = root_sum(ctx, node)
        if shape is None or shape.other_sign == shape.root_sign or is_discriminant(shape):
            return None
        rest = alg.build_sum([(t, s * shape.root_sign) for t, s in shape.rest])
        return rest, Severity.WARNING, [shape.radicand]
