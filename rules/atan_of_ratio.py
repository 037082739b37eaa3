"""`atan(y / x)` loses the quadrant and divides by zero on the y axis.

atan returns angles in (-pi/2, pi/2) only, so for x < 0 the angle of the point (x, y) comes out
off by pi; at x = 0 the quotient raises ZeroDivisionError (math) or turns into inf with a
warning (numpy), and a tiny x overflows it. The rounding error itself is small (atan is well
conditioned), so this is mostly a wrong-answer bug, not a digits bug. atan2(y, x) takes the two
coordinates apart: it knows the quadrant and never divides. Where x is known positive
(a length, an absolute value, a square root, a column of uniform draws scaled and shifted by
positive literals) the two are equal and atan2 only removes the division; there the finding is
a note and the rewrite is exact. In the expected value of a check (`assert_allclose(y,
np.arctan(a / b))`) the formula has to follow the code it checks, so the finding is a note there
too, without a rewrite, also when a local carries it there. Two entries of one eigen- or singular vector
(`u[1] / u[0]` with u a column of eigh's output, normalised or not) are not flagged: the vector's sign is
arbitrary, so the angle is an axis orientation defined modulo pi, which atan's half range covers; atan2
would only add an arbitrary pi. Elsewhere the rewrite is not
offered, because atan2 changes the value for x < 0: that is the fix only when a full-circle
angle is meant, which the author has to confirm. An atan divided by pi (`0.5 + atan(z) / pi`, a
Cauchy-type cdf, or `(2 / pi) * atan(z)`) maps the half range onto an interval on purpose: z is a
standardised variable, not the slope of a point, and atan2 would break the mapping.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.draw_ranges import value_range
from auditor.elementary import is_nonnegative, reads_variables, spelled_like, stable_origin
from auditor.factor_outputs import eigenvector_source
from auditor.nodes import walk

#: checks that compare two values besides the `assert...` family (numpy API)
_CHECKS = ("isclose", "allclose", "array_equal")

#: the two-argument arctangent of each library
_ATAN2 = {"math": "atan2", "numpy": "arctan2", "torch": "atan2", "jax.numpy": "arctan2", "cupy": "arctan2",
          "mpmath": "atan2"}


def _factors(expr: ast.expr, inverted: bool = False) -> Iterator[tuple[ast.expr, bool]]:
    """The factors of a product/quotient chain, each with whether it divides."""
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Mult, ast.Div)):
        yield from _factors(expr.left, inverted)
        yield from _factors(expr.right, inverted != isinstance(expr.op, ast.Div))
    else:
        yield expr, inverted


def _is_pi(ctx: Context, node: ast.expr) -> bool:
    return ctx.family(node) == "pi" or isinstance(node, ast.Constant) and isinstance(node.value, float) \
        and abs(node.value - 3.141592653589793) < 1e-6


def divided_by_pi(ctx: Context, node: ast.AST) -> bool:
    """True when the product/quotient chain holding `node` divides by pi (`(1 - a) / np.pi * np.arctan(z)`)."""
    top = node
    while isinstance(ctx.parent(top), ast.BinOp) and isinstance(ctx.parent(top).op, (ast.Mult, ast.Div)):  # type: ignore[union-attr]
        top = ctx.parent(top)  # type: ignore[assignment]
    factors = list(_factors(top))  # type: ignore[arg-type]
    if any(not inverted and p.literal_number(f) in (180, 200) for f, inverted in factors):
        return False  # `* 180 / pi`: a conversion to degrees (or gradians), the angle is still meant
    return top is not node and any(inverted and _is_pi(ctx, f) for f, inverted in factors)


def never_negative(ctx: Context, x: ast.expr) -> bool:
    """A length, an absolute value, a square root, or a column of uniform draws scaled and shifted by
    positive literals (`X = rng.uniform(size=(n, 4)); X[:, 0] *= 100`)."""
    if is_nonnegative(ctx, x):
        return True
    span = value_range(ctx, x)
    return span is not None and span.low >= 0


def reference_formula(ctx: Context, node: ast.AST) -> bool:
    """The atan sits in one side of an equality or closeness check whose other side is a computed value
    (`assert_allclose(y, np.arctan(a / b))`): the expected value of a test, which has to spell the
    formula of the code it checks, so atan2 is a change to make there, not here."""
    child: ast.AST = node
    for anc in ctx.ancestors(node):
        if isinstance(anc, ast.stmt):
            return False
        if isinstance(anc, ast.Call) and _is_check(anc) and any(a is child for a in anc.args[:2]):
            return len(anc.args) >= 2 and all(reads_variables(ctx, a) for a in anc.args[:2])
        if isinstance(anc, ast.Compare) and len(anc.ops) == 1 and isinstance(anc.ops[0], ast.Eq):
            return isinstance(ctx.parent(anc), ast.Assert) and reads_variables(ctx, anc.left) \
                and reads_variables(ctx, anc.comparators[0])
        child = anc
    return False


def expected_through_local(ctx: Context, node: ast.AST) -> bool:
    """True when the atan, through arithmetic, is the value of a local every read of which sits in the expected
    value of a check (`angle = 180 * np.arctan(a / b) / np.pi; assert_allclose(got, 180 + angle)`)."""
    top = node
    while isinstance(ctx.parent(top), (ast.BinOp, ast.UnaryOp)):
        top = ctx.parent(top)  # type: ignore[assignment]
    stmt = ctx.parent(top)
    if not (isinstance(stmt, ast.Assign) and stmt.value is top and len(stmt.targets) == 1
            and isinstance(stmt.targets[0], ast.Name)):
        return False
    name, scope = stmt.targets[0].id, ctx.scope(stmt)
    reads = [n for n in walk(scope) if isinstance(n, ast.Name) and n.id == name and isinstance(n.ctx, ast.Load)]
    seen = [n for n in reads if (b := ctx.binding(n)) is not None and b.stmt is stmt]
    return bool(seen) and len(seen) == len(reads) and all(reference_formula(ctx, n) for n in seen)


def axis_components(ctx: Context, y: ast.expr, x: ast.expr) -> bool:
    """True for two entries of one eigen- or singular vector (`u[1] / u[0]` with u a column of eigh's output,
    normalised or not): its sign is arbitrary, so the angle is an axis orientation, defined modulo pi."""
    if not (isinstance(y, ast.Subscript) and isinstance(x, ast.Subscript) and p.same_expr(y.value, x.value)):
        return False
    return eigenvector_source(ctx, y.value) is not None


def _is_check(call: ast.Call) -> bool:
    func = call.func
    name = func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else ""
    return "assert" in name.lower() or name in _CHECKS


class AtanOfRatio(Rule):
    id = "atan-of-ratio"
    title = "atan of a quotient"
    severity = Severity.WARNING
    summary = "atan(y / x): wrong quadrant for x < 0 and a division by zero at x = 0; use atan2(y, x)"
    node_types = (ast.Call,)
    requires = ("atan", "arctan")  # a file that never spells these cannot hold this pattern
    method = (
        "the two-argument arctangent atan2 (C99 and IEEE 754-2008 atan2; ISO C 7.12.4.4), common practice for "
        "polar angles and phases"
    )
    rewrite_template = "math.atan2({y}, {x})"
    examples = (
        Example("import math\ndef phase(i, q):\n    return math.atan(q / i)\n", True, note="sign of i unknown: no rewrite"),
        Example("import numpy as np\ndef tilt(dz, dx):\n    return np.arctan(dz / np.abs(dx))\n", True,
                "np.arctan2(dz, np.abs(dx))"),
        Example("import math\ndef elevation(z, x, y):\n    r = math.hypot(x, y)\n    return math.atan(z / r)\n", True,
                "math.atan2(z, r)"),
        Example("import math\ndef phase(i, q):\n    return math.atan2(q, i)\n", False),
        Example("import math\ndef acot(x):\n    return math.atan(1 / x)\n", False, note="arccot: a constant numerator"),
        Example("import math\ndef half(x):\n    return math.atan(x / 2)\n", False, note="constant denominator"),
        Example("import numpy as np\ndef skew_cdf(x, a):\n    return (1 + a) / 2 + (1 - a) / np.pi * np.arctan(x / (1 - a))\n",
                False, note="field trial: atan divided by pi maps the half range onto a probability"),
        Example("import math\ndef squash(u, s):\n    return 2 / math.pi * math.atan(u / s)\n",
                False, note="2/pi * atan(...) normalises the half range onto (-1, 1)"),
        Example("import math\ndef heading(dy, dx):\n    return math.atan(dy / dx) * 180 / math.pi\n", True,
                note="a conversion to degrees divides by pi too, but the angle of the point is still meant"),
        Example("import numpy as np\ndef friedman_like(n, seed):\n    rng = np.random.default_rng(seed)\n"
                "    X = rng.uniform(size=(n, 3))\n    X[:, 0] *= 100\n    X[:, 1] *= 520 * np.pi\n"
                "    X[:, 1] += 40 * np.pi\n    X[:, 2] -= 0.5\n    return np.arctan(X[:, 1] * X[:, 2] / X[:, 0])\n",
                True, "np.arctan2(X[:, 1] * X[:, 2], X[:, 0])",
                note="a column of uniform draws times a positive literal is never negative: a note (field trial)"),
        Example("import numpy as np\ndef tilted(n, seed):\n    rng = np.random.default_rng(seed)\n"
                "    X = rng.uniform(size=(n, 3))\n    X[:, 0] -= 0.5\n    return np.arctan(X[:, 1] / X[:, 0])\n",
                True, note="the column was shifted below 0: the quadrant can be lost, no rewrite"),
        Example("import numpy as np\nfrom numpy.testing import assert_allclose\nfrom benchlab import make_bench3\n"
                "def test_bench3():\n    X, y = make_bench3(n_samples=5)\n"
                "    assert_allclose(y, np.arctan(X[:, 1] * X[:, 2] / X[:, 0]))\n", True,
                note="the expected value of a check must spell the formula it checks: a note, no rewrite (field trial)"),
        Example("import numpy as np\ndef ellipse_angle(cov):\n    v, w = np.linalg.eigh(cov)\n"
                "    u = w[0] / np.linalg.norm(w[0])\n    return 180 * np.arctan(u[1] / u[0]) / np.pi\n", False,
                note="an eigenvector's sign is arbitrary: its angle is an axis orientation mod 180 degrees (field trial)"),
        Example("import numpy as np\ndef f(cov):\n    v, w = np.linalg.eigh(cov)\n    return np.arctan(v[1] / v[0])\n",
                True, note="a quotient of eigenvalues is not an axis"),
        Example("import numpy as np\nfrom numpy.testing import assert_allclose\ndef test_tilt(probe):\n"
                "    angle = 180 * np.arctan(probe.dz / probe.dx) / np.pi\n    assert_allclose(probe.tilt(), 180 + angle)\n",
                True, note="a local only read in the expected value of a check: a note, no rewrite (field trial)"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if not ctx.is_call(node, "atan"):
            return
        arg = p.single_arg(node)
        if arg is None:
            return
        ratio = ctx.origin(arg)
        module = p.callee_module(ctx, node) or "math"
        if not (isinstance(ratio, ast.BinOp) and isinstance(ratio.op, ast.Div)):
            return
        y, x = ratio.left, ratio.right
        if module == "cmath" or any(isinstance(n, ast.Constant) and isinstance(n.value, complex) for n in walk(ratio)):
            return  # complex arctangent: no quadrant to lose, and atan2 takes no complex arguments
        if not reads_variables(ctx, y) or not reads_variables(ctx, x):
            return
        if divided_by_pi(ctx, node):
            return  # the half range normalised to an interval (a cdf): the quotient is a standardised variable
        if axis_components(ctx, y, x):
            return  # an eigenvector's sign is arbitrary: its angle is an orientation mod pi, atan's half range
        if not never_negative(ctx, x) and (reference_formula(ctx, node) or expected_through_local(ctx, node)):
            yield Hit(node, "atan(y / x) in the expected value of a check has to follow the code it checks; if that "
                      "code means the angle of the point (x, y), both need atan2(y, x)", severity=Severity.NOTE)
            return
        if not never_negative(ctx, x):
            yield Hit(node, "atan(y / x) is off by pi when x < 0 and divides by zero at x = 0; use atan2(y, x) "
                      "if the angle of the point (x, y) is meant")
            return
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if module in _ATAN2 and stable_origin(ctx, ratio, node):
            func, imports = spelled_like(ctx, module, _ATAN2[module])
            rewrite = alg.in_place(alg.call(func, y, x))
        yield Hit(node, f"x is never negative here, so {rewrite or 'atan2(y, x)'} gives the same angle without the "
                  "division that fails at x = 0 and overflows for tiny x", severity=Severity.NOTE,
                  rewrite=rewrite, imports=imports)
