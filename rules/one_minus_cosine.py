"""`1 - cos(x)` cancels for small |x|.

Near x = 0, cos(x) is 1 - x**2/2 + ...; subtracting it from 1 keeps only what rounding left of
x**2/2. At |x| = 1e-4 about half of the sixteen digits are gone, and below |x| of about 1e-8
cos(x) rounds to exactly 1 and the difference is 0 instead of x**2/2. `cos(x) - 1` is the same
loss with the opposite sign. The half-angle identity 1 - cos(x) = 2*sin(x/2)**2 has no
subtraction at all and keeps full relative accuracy for every x where sin does.
"""
from __future__ import annotations

import ast
import math
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.elementary import difference_operands, reads_variables, spelled_like, stable_origin
from auditor.values import known_values

#: distance from the nearest multiple of 2*pi from which 1 - cos(x) is left alone. With d that distance,
#: 1 - cos(x) = 2 sin(d/2)**2 is about d**2/2 and the subtraction magnifies the rounding of cos(x) by
#: about 2/d**2: for d >= 0.1 at most log10(200) = 2.3 digits, not the half or all the finding warns of.
_SAFE_DISTANCE = 0.1


def spelled_apart(ctx: Context, arg: ast.expr) -> bool:
    """True when the code spells out every value of the argument (literals, locals, linspace/arange
    grids) and each is exactly 0 (cos(0) = 1 exactly, so the difference is an exact 0) or at least
    _SAFE_DISTANCE from every multiple of 2*pi."""
    values = known_values(ctx, arg)
    if values is None:
        return False
    turn = 2 * math.pi
    return all(v == 0 or abs(v - turn * round(v / turn)) >= _SAFE_DISTANCE for v in values)


def half_angle(ctx: Context, call: ast.Call, arg: ast.expr, negate: bool) -> tuple[str, tuple[str, ...]]:
    """`2 * sin(x / 2) ** 2` (negated for cos(x) - 1), spelled for this file's imports."""
    module = p.callee_module(ctx, call) or "math"
    func, imports = spelled_like(ctx, module, "sin")
    square = alg.binop(alg.call(func, alg.binop(arg, ast.Div(), alg.num(2))), ast.Pow(), alg.num(2))
    return alg.in_place(alg.binop(alg.num(-2 if negate else 2), ast.Mult(), square)), imports


class OneMinusCosine(Rule):
    id = "one-minus-cosine"
    title = "1 - cos(x) computed directly"
    severity = Severity.WARNING
    summary = "1 - cos(x) or cos(x) - 1: cancels for small |x|; use 2*sin(x/2)**2"
    node_types = (ast.BinOp, ast.AugAssign)
    requires = ("cos",)  # a file that never spells these cannot hold this pattern
    method = (
        "half-angle identity 1 - cos x = 2 sin^2(x/2), the standard remedy in D. Goldberg, What Every "
        "Computer Scientist Should Know About Floating-Point Arithmetic, ACM Computing Surveys 23(1), 1991, "
        "and N. J. Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, ch. 1 (from memory)"
    )
    rewrite_template = "2 * math.sin({x} / 2) ** 2"
    examples = (
        Example("import math\ndef sag(theta):\n    return 1 - math.cos(theta)\n", True,
                "2 * math.sin(theta / 2) ** 2", {"theta": 1e-5}),
        Example("import numpy as np\ndef f(t, w):\n    c = np.cos(w * t)\n    return c - 1.0\n", True,
                "-2 * np.sin(w * t / 2) ** 2"),
        Example("from math import cos as kos\ndef g(a, b):\n    return 1.0 - kos(a + b)\n", True,
                "2 * math.sin((a + b) / 2) ** 2"),
        Example("import math\ndef sag(theta):\n    return 2 * math.sin(theta / 2) ** 2\n", False),
        Example("import math\ndef f(x):\n    return 1 - math.sin(x)\n", False, note="1 - sin(x) cancels only near pi/2, "
                "not at the small arguments where code usually evaluates it"),
        Example("import math\nC = 1 - math.cos(0.25)\n", False, note="constant argument"),
        Example("import numpy as np\ndef test_ring():\n    m = 50\n    t = 2 * np.pi * np.arange(m) / (m + 1)\n"
                "    return np.cos(t) - 1\n", False,
                note="a grid the code spells out: 0 (an exact 0) and points at least 2*pi/51 = 0.12 from every "
                     "multiple of 2*pi, about two digits lost at most (field trial)"),
        Example("import numpy as np\ndef test_fine_ring():\n    m = 50\n    t = 2 * np.pi * np.arange(m) / (m * 1e4)\n"
                "    return 1 - np.cos(t)\n", True,
                note="spelled out, but the grid's first step is 1.3e-5: half the digits are lost there"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        ops = difference_operands(ctx, node)
        if ops is None:
            return
        if p.is_one(ops.left) and ctx.is_call(ops.right, "cos"):
            call, written, negate = ops.right, ops.right_written, False
        elif p.is_one(ops.right) and ctx.is_call(ops.left, "cos"):
            call, written, negate = ops.left, ops.left_written, True
        else:
            return
        assert isinstance(call, ast.Call)
        arg = p.single_arg(call)
        if arg is None or not reads_variables(ctx, arg) or spelled_apart(ctx, arg):
            return  # a constant argument, or a grid the code spells out that stays clear of the cancelling points
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if not ops.aug and stable_origin(ctx, call, written):
            rewrite, imports = half_angle(ctx, call, arg, negate)
        fix = rewrite or "2*sin(x/2)**2"
        yield Hit(node, f"cos(x) rounds to 1 for |x| below about 1e-8, so this returns 0 there and loses half its "
                  f"digits near 1e-4; use {fix}", rewrite=rewrite, imports=imports)
