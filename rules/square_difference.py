"""`x*x - y*y` rounds both squares before it subtracts them.

Each square carries a rounding error relative to its own size, x**2; when x and y are close the
difference is far smaller than the squares and those errors dominate it: with y = x*(1 - 1e-8)
about eight digits are lost. `1 - x*x` near |x| = 1 is the same loss; it is reported where its
relative error reaches the result: under a root (sqrt(1 - c*c) for a sine), as a divisor or factor
(s2 / (1 - phi**2) for an AR(1) variance, (1 - c*c) / (...) in a density), raised to a power or
under a log. As one summand of a larger polynomial (`a + b*(1 - x*x)`) only its absolute error,
below one unit of 1, reaches the sum, so it is left alone there; the same holds for a term of a
sum or mean over samples (`((1 - x**2) * w).mean()`, directly, through a local only ever summed,
or as a private helper's return value every caller only sums), for a factor named first
(`c = (1 - t*t)/(1 + t*t)` used only in `c*u + s*v`), for a root finder's objective (only its
sign and absolute size count), and for the argument of a function flat and nonzero at 0 (exp,
cos, the elliptic integral K), also through a root when the function is even
(`i0(beta*sqrt(1 - x*x))` is analytic in 1 - x*x). Divided differences of squared ordinates in
Newton's interpolation form, `y1sq + (y2sq - y1sq)/(v2 - v1)*(v - v1)`, are as accurate as the
rounded ordinate y1sq the sum holds anyway. Nor is it reported when the code bounds |x| well below
1 (`sqrt(2/pi) * a/sqrt(1 + a**2)`), when both sides are whole numbers (tie counts from
`return_counts=True`, parameters a distribution's `_argcheck` requires to be integral), or when
the values are spelled out (entries of a literal matrix too) and never within 5% of each other
except where they are equal. The factored form (x - y)*(x + y) subtracts the inputs themselves,
which is exact when they are within a factor of two of each other (Sterbenz), so the result is
accurate to a few units in the last place.
For `1 - cos(t)**2` the identity sin(t)**2 is better still.
"""
from __future__ import annotations

import ast
import math
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.absolute_uses import even_root_argument, returned_only_summed, summand_through_locals
from auditor.arg_checks import checked_whole
from auditor.counts import whole_or_count
from auditor.divided_differences import interpolation_ordinates
from auditor.literal_entries import entry_values
from auditor.magnitude import magnitude_bound
from auditor.positions import relative_position
from auditor.tallies import tally
from auditor.use_sites import flat_call_argument, only_summed, solver_objective
from auditor.elementary import (
    difference_operands, reads_variables, related, spelled_like, square_base, stable_origin,
)

#: 1 - cos(t)**2 = sin(t)**2 and 1 - sin(t)**2 = cos(t)**2
_PYTHAGORAS = {"cos": "sin", "sin": "cos"}


def base_of(ctx: Context, side: ast.expr, written: ast.expr) -> ast.expr | None:
    """The squared base of one side (the literal 1 counts as 1**2); the written form wins."""
    if p.is_one(written):
        return written
    if p.is_one(side):
        return ast.Constant(1)
    return square_base(ctx, written) or square_base(ctx, side)


def pythagoras(ctx: Context, x: ast.expr, y: ast.expr) -> tuple[ast.expr, tuple[str, ...]] | None:
    """`sin(t)**2` for 1 - cos(t)**2 (and kin), negated for cos(t)**2 - 1."""
    for one, trig, sign in ((x, y, 1), (y, x, -1)):
        family = ctx.family(trig) if isinstance(trig, ast.Call) else None
        if p.is_one(one) and family in _PYTHAGORAS and p.single_arg(trig) is not None:
            module = p.callee_module(ctx, trig) or "math"
            func, imports = spelled_like(ctx, module, _PYTHAGORAS[family])
            square = alg.binop(alg.call(func, p.single_arg(trig)), ast.Pow(), alg.num(2))  # type: ignore[arg-type]
            return (square if sign > 0 else alg.neg(square)), imports
    return None


def from_reduction(ctx: Context, base: ast.expr) -> bool:
    """A mean or a sum: E[x^2] - E[x]^2 belongs to the variance rule."""
    origin = ctx.origin(base)
    return isinstance(origin, ast.Call) and ctx.family(origin) in ("mean", "sum", "average", "var", "std")


def under_root(ctx: Context, node: ast.AST) -> bool:
    """True for the radicand of `sqrt(1 - x*x)` or `(1 - x*x) ** 0.5`."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Call) and ctx.family(parent) == "sqrt":
        return True
    return isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Pow) and parent.left is node \
        and p.is_number(parent.right, 0.5)


def spelled_apart(ctx: Context, x: ast.expr, y: ast.expr) -> bool:
    """True when both sides take only values the code spells out and their squares are either equal
    in size (|x| == |y| up to a grid node's rounding: the same node, an exact 0) or never within 5% of
    each other (then at most about one digit is lost): a grid np.linspace(-1, 1) against 1."""
    xs, ys = entry_values(ctx, x), entry_values(ctx, y)
    if xs is None or ys is None:
        return False
    if len(xs) != len(ys) and 1 not in (len(xs), len(ys)):
        return False
    n = max(len(xs), len(ys))
    pairs = [(xs[i % len(xs)] ** 2, ys[i % len(ys)] ** 2) for i in range(n)]
    return all(_same_size(xs[i % len(xs)], ys[i % len(ys)]) or abs(a - b) >= 0.05 * max(a, b)
               for i, (a, b) in enumerate(pairs))


def _same_size(x: float, y: float) -> bool:
    """|x| == |y| up to the few units in the last place a spelled-out grid node carries (np.linspace
    sets its end node exactly to the bound; the node i*step + a rebuilt here may miss it by an ulp):
    the same node, where x*x - y*y is an exact 0, not a lost small value."""
    big = max(abs(x), abs(y))
    return abs(abs(x) - abs(y)) <= 4 * math.ulp(big)


def far_from_one(ctx: Context, x: ast.expr) -> bool:
    """True when the code bounds |x| so that x*x <= 0.95 (`sqrt(2/pi) * a/sqrt(1 + a**2)` is at most
    0.798): then 1 - x*x >= 0.05 and at most about one digit is lost."""
    bound = magnitude_bound(ctx, x)
    return bound is not None and bound * bound <= 0.95


def absolute_use(ctx: Context, node: ast.AST) -> bool:
    """True when only the absolute error of 1 - x*x reaches a result: a term of a sum or mean over
    samples, the objective of a root finder, the argument of a function flat and nonzero at 0 (also
    through a root when the function is even: i0(beta*sqrt(1 - x*x)) is analytic in 1 - x*x), also as
    the return value of a module-private helper whose every caller only sums or averages it."""
    return only_summed(ctx, node) or solver_objective(ctx, node) or flat_call_argument(ctx, node) \
        or even_root_argument(ctx, node) or returned_only_summed(ctx, node)


class SquareDifference(Rule):
    id = "square-difference"
    title = "difference of two squares"
    severity = Severity.NOTE
    summary = "x*x - y*y: rounds the squares before cancelling; use (x - y)*(x + y)"
    node_types = (ast.BinOp, ast.AugAssign)
    method = (
        "factoring x^2 - y^2 = (x - y)(x + y), with Sterbenz's lemma for the exact subtraction: D. Goldberg, What "
        "Every Computer Scientist Should Know About Floating-Point Arithmetic, ACM Computing Surveys 23(1), 1991, "
        "section 1.4 (from memory)"
    )
    rewrite_template = "({x} - {y}) * ({x} + {y})"
    examples = (
        Example("def heat(t_cold, dt):\n    t_hot = t_cold + dt\n    return t_hot**2 - t_cold**2\n", True,
                "dt * (t_hot + t_cold)", {"t_cold": 0.1, "dt": 1e-9}),
        Example("def ring(r1, r2):\n    return r1 * r1 - r2 * r2\n", True, "(r1 - r2) * (r1 + r2)"),
        Example("import math\ndef lorentz(v, c):\n    return math.sqrt(1.0 - (v / c) ** 2)\n", True,
                "(1.0 - v / c) * (1.0 + v / c)"),
        Example("import numpy as np\ndef s2(t):\n    return 1 - np.cos(t) ** 2\n", True, "np.sin(t) ** 2"),
        Example("def ring(r1, r2):\n    return (r1 - r2) * (r1 + r2)\n", False),
        Example("def f(b, a, c):\n    return b * b - 4 * a * c\n", False, note="a discriminant, not two squares"),
        Example("import numpy as np\ndef var(x):\n    return np.mean(x**2) - np.mean(x)**2\n", False,
                note="the naive-variance rule's pattern"),
        Example("def f(n, m):\n    return n**2 - m**2\n", True, note="names alone do not say integer"),
        Example("def f(xs):\n    return len(xs) ** 2 - 1\n", False, note="integer arithmetic is exact"),
        Example("import math\ndef test_corr():\n    r = 0.5\n    return math.sqrt(1 - r**2)\n", False,
                note="a constant set two lines above: one fixed value (field trial)"),
        Example("def ar1_variance(sigma2, phi):\n    return sigma2 / (1 - phi**2)\n", True,
                note="a divisor: its relative error is the result's (field trial: AR(1) variance)"),
        Example("import numpy as np\ndef wrapcauchy(x, c):\n    return (1 - c * c) / (2 * np.pi * (1 + c * c - 2 * c * np.cos(x)))\n",
                True, note="a factor of a density near c = 1 (field trial)"),
        Example("def smooth(u, a, b):\n    return a + b * (1 - u * u)\n", False,
                note="one summand of a polynomial: only an absolute error below eps reaches the sum"),
        Example("def mood_mean(m, N):\n    return m * (N * N - 1) / 12\n", False,
                note="a quantity named as a count: its square is exact (field trial)"),
        Example("import numpy as np\ndef adjust(n):\n    return (1 - np.sign(n - 2) ** 2) * 0.5\n", False,
                note="sign() is -1, 0 or 1: integer arithmetic"),
        Example("def check_jac():\n    x = 2.0\n    f = x**2 + 5\n    fs = f / 10\n    return 2 * x * (1 - fs**2) ** 0.5 / (1 + fs**2)\n",
                False, note="a value the code spells out, far from 1 (field trial)"),
        Example("import numpy as np\ndef score():\n    def partial(phi, s2):\n        return -0.5 / (s2 * (1 - phi**2))\n"
                "    params = np.r_[0.0, 2]\n    return partial(params[0], params[1])\n", False,
                note="a nested helper only ever called with phi = 0 (field trial)"),
        Example("import math\ndef near_unity():\n    r = 0.99999999\n    return math.sqrt(1 - r**2)\n", True,
                note="a constant set in the code, but close to 1: the loss is real"),
        Example("import numpy as np\ndef contrast(x):\n    e = np.exp(-x**2 / 2)\n    g_x = (1 - x**2) * e\n"
                "    return x * e, g_x.mean(axis=-1)\n", False,
                note="only averaged over samples: each term passes on an absolute error below eps (field trial)"),
        Example("import numpy as np\ndef contrast(x):\n    g_x = (1 - x**2) * np.exp(-x**2 / 2)\n    return g_x.sum() / g_x\n",
                True, note="also a divisor: not only summed"),
        Example("from scipy.optimize import brentq\ndef test_bracket():\n    return brentq(lambda x: x**2 - 1, 0, 2)\n",
                False, note="a root finder's objective: only its sign and absolute size count (field trial)"),
        Example("import numpy as np\ndef skew_stats(a):\n    const = np.sqrt(2 / np.pi) * a / np.sqrt(1 + a**2)\n"
                "    return const, 1 - const**2\n", False,
                note="|const| <= sqrt(2/pi) = 0.80 by construction: 1 - const**2 >= 0.36 (field trial)"),
        Example("import numpy as np\ndef skew_draw(a, u0, v):\n    d = a / np.sqrt(1 + a**2)\n"
                "    return d * u0 + v * np.sqrt(1 - d**2)\n", True,
                note="|d| <= 1 only: d -> 1 for a large shape, where the loss is real"),
        Example("import numpy as np\ndef tie_terms(x):\n    _, t = np.unique(x, return_counts=True)\n"
                "    t = np.asarray(t, dtype=float)\n    return t * (t * t - 1) / 12.0\n", False,
                note="tie counts are whole numbers even as floats: t*t - 1 is exact (field trial)"),
        Example("import numpy as np\ndef value_terms(x):\n    u, t = np.unique(x, return_counts=True)\n"
                "    return u * (u * u - 1) / 12.0\n", True, note="the unique values themselves are not counts"),
        Example("import numpy as np\ndef test_polyval():\n    x = np.linspace(-1, 1)\n    return x * (x**2 - 1)\n",
                False, note="a literal grid: exact 0 at +-1, next node 2/49 inside (field trial)"),
        Example("import numpy as np\ndef test_fine():\n    x = np.linspace(-1, 1, 2001)\n    return x * (x**2 - 1)\n",
                True, note="a fine grid has nodes within 0.1% of 1"),
        Example("from scipy import special\ndef order(arg0):\n    return special.ellipk([arg0**2, 1 - arg0**2])\n",
                False, note="K(m) is flat and nonzero at m = 0: a relative error in m barely moves it (field trial)"),
        Example("from scipy import special\ndef order(arg0):\n    return special.ellipkm1(1 - arg0**2)\n",
                True, note="K(1 - p) has a log singularity at p = 0: not flat there"),
        Example("import numpy as np\ndef test_stationary_cov():\n    transition = np.array([[0.5, -0.2], [0.1, 0.8]])\n"
                "    return 1.2 / (1 - transition[0, 0] ** 2), 0.4 / (1 - transition[1, 1] ** 2)\n", False,
                note="entries of a literal matrix picked by constant indices: 1 - 0.25 and 1 - 0.64 (field trial)"),
        Example("import numpy as np\ndef test_stationary_cov(phi):\n    transition = np.array([[0.5, -0.2], [0.1, 0.8]])\n"
                "    transition[0, 0] = phi\n    return 1.2 / (1 - transition[0, 0] ** 2)\n", True,
                note="the entry is overwritten with a parameter: the literal no longer says what it holds"),
        Example("import numpy as np\nfrom scipy.stats import rv_discrete\nfrom scipy.stats._distn_infrastructure import _isintegral\n"
                "class dice_gen(rv_discrete):\n    def _argcheck(self, low, high):\n"
                "        return (high > low) & _isintegral(low) & _isintegral(high)\n\n"
                "    def _stats(self, low, high):\n        d = np.asarray(high) - np.asarray(low)\n"
                "        return (d*d - 1) / 12.0\n", False,
                note="the class's _argcheck keeps low and high whole: d*d is exact, d = 1 gives an exact 0 (field trial)"),
        Example("import numpy as np\nfrom scipy.stats import rv_continuous\n"
                "class slab_gen(rv_continuous):\n    def _argcheck(self, low, high):\n        return high > low\n\n"
                "    def _stats(self, low, high):\n        d = np.asarray(high) - np.asarray(low)\n"
                "        return (d*d - 1) / 12.0\n", True,
                note="an argument check without integrality: d may be 1 + 1e-9"),
        Example("import numpy as np\nfrom scipy import special\ndef taper(n, beta):\n    x = np.linspace(-1, 1, n)\n"
                "    return special.i0(beta * np.sqrt(1 - x**2)) / special.i0(beta)\n", False,
                note="i0 is even and flat at 0: i0(beta*sqrt(u)) is analytic in u, so only u's absolute error counts "
                     "(field trial: Kaiser window)"),
        Example("import numpy as np\ndef taper(x, beta):\n    return np.exp(beta * np.sqrt(1 - x**2))\n", True,
                note="exp is not even: exp(beta*sqrt(u)) has an infinite slope in u at 0"),
        Example("import numpy as np\ndef rotate(step, sd, hess_step, t_bd):\n    t = np.linspace(t_bd / 20, t_bd, 20)\n"
                "    c = (1.0 - t**2) / (1.0 + t**2)\n    s = 2.0 * t / (1.0 + t**2)\n"
                "    return c[:, None] * step + s[:, None] * sd, (c[-1] - 1.0) * hess_step\n", False,
                note="the half-angle cosine is only a factor of summands, named first (field trial: rotation step)"),
        Example("import numpy as np\ndef secant(t, u):\n    c = (1.0 - t**2) / (1.0 + t**2)\n    return u / c\n", True,
                note="the named quotient is then a divisor: its relative error is the result's"),
        Example("import math\ndef interp_sq(f, v, v0, v1, v2):\n    y0_sq, y1_sq, y2_sq = f(v0) ** 2, f(v1) ** 2, f(v2) ** 2\n"
                "    d2 = 2.0 * ((y2_sq - y1_sq) / (v2 - v1) - (y0_sq - y1_sq) / (v0 - v1)) / (v2 - v0)\n"
                "    d1 = (y1_sq - y0_sq) / (v1 - v0) + 0.5 * d2 * (v1 - v0)\n"
                "    return math.sqrt(d2 / 2.0 * (v - v1) ** 2 + d1 * (v - v1) + y1_sq)\n", False,
                note="divided differences of squared ordinates in Newton's form beside the ordinate itself "
                     "(field trial: quadratic interpolation in a table)"),
        Example("def rate(x0, x1, t0, t1):\n    return (x1**2 - x0**2) / (t1 - t0)\n", True,
                note="a slope returned on its own: its relative error is the result's"),
        Example("import numpy as np\ndef _contrast(x):\n    gx = np.tanh(x)\n    return gx, 1 - gx**2\n\n"
                "def ica_step(w, X):\n    gwtx, g_wtx = _contrast(w @ X)\n"
                "    return (X * gwtx).mean(axis=1) - g_wtx.mean() * w\n", False,
                note="a private helper's result that its only caller averages over samples (field trial: FastICA)"),
        Example("import numpy as np\ndef _bump(u):\n    return 0.75 * (1 - u**2)\n\n"
                "def fhat(e, h):\n    return np.mean(_bump(e / h)) / h\n\ndef weight(u):\n    return 1.0 / _bump(u)\n",
                True, note="another caller divides by the helper's value"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        ops = difference_operands(ctx, node)
        if ops is None:
            return
        x, y = base_of(ctx, ops.left, ops.left_written), base_of(ctx, ops.right, ops.right_written)
        if x is None or y is None or p.same_expr(x, y) or not (reads_variables(ctx, x) or reads_variables(ctx, y)):
            return
        if (whole_or_count(ctx, x) and whole_or_count(ctx, y)) or from_reduction(ctx, x) or from_reduction(ctx, y):
            return
        if all(whole_or_count(ctx, b) or tally(ctx, b) or checked_whole(ctx, b) for b in (x, y)):
            return  # tie counts, unique counts, parameters the class's _argcheck keeps whole: exact squares
        if spelled_apart(ctx, x, y):
            return  # the code spells out both sides (r = 0.5 above, literal arrays) and they are never close
        one = p.is_one(x) or p.is_one(y)
        if one and pythagoras(ctx, x, y) is None and not under_root(ctx, node) and not relative_position(ctx, node):
            return  # 1 - x*x as a summand of a polynomial is harmless; as a factor, divisor or radicand it bites
        if one and pythagoras(ctx, x, y) is None and not under_root(ctx, node) and summand_through_locals(ctx, node):
            return  # the same, with the factor named first: c = (1 - t*t)/(1 + t*t) used only in c*u + s*v
        if one and (absolute_use(ctx, node) or far_from_one(ctx, y if p.is_one(x) else x)):
            return
        if not ops.aug and interpolation_ordinates(ctx, node, ops.left_written, ops.right_written):
            return  # (f2 - f1)/(a2 - a1) in f1 + ...*(v - a1): as accurate as the rounded ordinate f1 itself
        correlated = related(ctx, x, y) or related(ctx, ctx.origin(x), ctx.origin(y))
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if not ops.aug and stable_origin(ctx, x, node) and stable_origin(ctx, y, node):
            trig = pythagoras(ctx, x, y)
            if trig is not None:
                rewrite, imports = alg.in_place(trig[0]), trig[1]
            else:
                total = alg.build_sum([(x, 1), (y, 1)])
                rewrite = alg.in_place(alg.binop(self._difference(ctx, x, y, node), ast.Mult(), total))
        fix = rewrite or "(x - y)*(x + y)"
        yield Hit(node, f"both squares are rounded before they cancel, so when x and y are close (to 1e-8) about "
                  f"half the digits are lost; use {fix}", severity=Severity.WARNING if correlated else None,
                  rewrite=rewrite, imports=imports)

    @staticmethod
    def _difference(ctx: Context, x: ast.expr, y: ast.expr, node: ast.AST) -> ast.expr:
        """x - y, taken from the locals' values when that cancels terms (t_hot = t_cold + dt gives dt)."""
        ox, oy = ctx.origin(x), ctx.origin(y)
        if (ox is not x or oy is not y) and stable_origin(ctx, ox, node) and stable_origin(ctx, oy, node):
            found = alg.difference(ox, oy)
            if len(alg.signed_terms(found)) < len(alg.signed_terms(ox)) + len(alg.signed_terms(oy)):
                return found
        return alg.difference(x, y)
