"""A difference quotient whose step is far too small (or too large) for double precision.

`(f(x + h) - f(x)) / h` has two errors: truncation, about h * |f''| / 2, and rounding, about
eps * |f| / h, since f(x + h) and f(x) agree in their leading digits and the subtraction
keeps only their rounding noise. The sum is smallest near h = sqrt(eps) * max(|x|, 1), about
1.5e-8, where some eight digits survive. With h = 1e-12 the rounding term is 2e-4 (four
digits left) and with h = eps nothing is left; with h = 1e-2 the truncation term leaves about
two digits. The central quotient `(f(x + h) - f(x - h)) / (2 * h)` balances at
h = cbrt(eps) * max(|x|, 1), about 6e-6, and the second difference at eps**(1/4), about 1e-4.
A step scaled from x, or the representable step `h = (x + h) - x`, is not flagged.
"""
from __future__ import annotations

import ast
import math
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p

EPS = 2.0 ** -52
#: kind -> (truncation order in h, derivative order); error model h**order + eps / h**derivative
_MODEL = {"forward": (1, 1), "central": (2, 1), "second": (2, 2)}
#: best steps, quoted in messages
_BEST = {"forward": "sqrt(eps) ~ 1.5e-8", "central": "cbrt(eps) ~ 6e-6", "second": "eps**0.25 ~ 1.2e-4"}
#: flag a step whose modelled error is this many times the optimum: 2.7 digits when rounding dominates (the
#: step is too small, whatever f is), 3 digits when truncation does (that estimate assumes f'' ~ f')
_FACTOR_SMALL, _FACTOR_LARGE = 5e2, 1e3


def model_error(kind: str, h: float) -> float:
    order, deriv = _MODEL[kind]
    return h ** order + EPS / h ** deriv


def optimal_error(kind: str) -> float:
    order, deriv = _MODEL[kind]
    h = EPS ** (1 / (order + deriv))
    return model_error(kind, h)


def step_of(ctx: Context, den: ast.expr) -> tuple[ast.expr, bool] | None:
    """(h, squared) for a denominator h, 2*h, h*2, (h + h), h**2 or h*h."""
    if isinstance(den, ast.BinOp):
        if isinstance(den.op, ast.Mult) and p.is_number(den.left, 2):
            return den.right, False
        if isinstance(den.op, ast.Mult) and p.is_number(den.right, 2):
            return den.left, False
        square = p.is_square(den)
        if square is not None:
            return square, True
        if isinstance(den.op, ast.Add) and p.same_expr(den.left, den.right):
            return den.left, False
    return den, False


def shifted(ctx: Context, call: ast.expr, h: ast.expr) -> int | None:
    """+1 / -1 / 0 when `call` evaluates a function at x + h / x - h / x (via a local), else None."""
    call = ctx.origin(call)
    if not isinstance(call, ast.Call) or not call.args:
        return None
    for arg in call.args:
        for node in ast.walk(arg):
            if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)) and any(
                p.same_expr(side, h) or isinstance(side, ast.BinOp) and isinstance(side.op, ast.Mult)
                and any(p.same_expr(f, h) for f in (side.left, side.right))
                for side in (node.right, node.left)
            ):
                return 1 if isinstance(node.op, ast.Add) else -1
    return 0


def evaluation(ctx: Context, term: ast.expr, h: ast.expr) -> tuple[str, int] | None:
    """(callee, shift) for one term of the numerator: f(x + h), 2 * f(x), or a local holding one."""
    if isinstance(term, ast.BinOp) and isinstance(term.op, ast.Mult):
        if p.literal_number(term.left) is not None:
            term = term.right
        elif p.literal_number(term.right) is not None:
            term = term.left
    call = ctx.origin(term)
    shift = shifted(ctx, call, h)
    if not isinstance(call, ast.Call) or shift is None:
        return None
    return ast.dump(call.func), shift


def quotient_kind(ctx: Context, num: ast.expr, h: ast.expr, squared: bool) -> str | None:
    """'forward' | 'central' | 'second' when the numerator differences one function around x."""
    terms = [t for t, _ in p.sum_terms(num)]
    evals = [evaluation(ctx, t, h) for t in terms]
    if len(terms) < 2 or any(e is None for e in evals):
        return None
    if len({e[0] for e in evals if e is not None}) != 1:
        return None
    shifts = sorted(e[1] for e in evals if e is not None)
    if len(terms) == 2 and not squared:
        if shifts == [-1, 1]:
            return "central"
        if shifts in ([0, 1], [-1, 0]):
            return "forward"
    if squared and shifts == [-1, 0, 1]:
        return "second"
    return None


#: kind -> the power of eps in the best step (truncation order + derivative order = 1 / power)
_POWER = {"forward": "", "central": " ** (1 / 3)", "second": " ** 0.25"}


def base_point(ctx: Context, num: ast.expr, h: ast.expr) -> ast.expr | None:
    """x in f(x + h): the other operand of the first shifted argument of the numerator."""
    for term, _ in p.sum_terms(num):
        for node in ast.walk(ctx.origin(term)):
            if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
                if p.same_expr(node.right, h):
                    return node.left
                if p.same_expr(node.left, h) and isinstance(node.op, ast.Add):
                    return node.right
    return None


def step_advice(ctx: Context, kind: str, num: ast.expr, h: ast.expr) -> str | None:
    """The best step for `kind`, scaled from x and made representable, as statements to put before
    the quotient. Advice only: a new step changes the estimate itself, and whether it is closer to
    f'(x) needs the exact derivative, which the dynamic pass does not have."""
    x = base_point(ctx, num, h)
    if x is None or any(isinstance(n, ast.Call) for n in ast.walk(x)):
        return None
    name = h.id if isinstance(h, ast.Name) else "h"
    eps = (f"{p.spelled_qualified(ctx, 'numpy.finfo')[0]}(float).eps" if ctx.imports.imports_any("numpy")
           else "sys.float_info.epsilon")
    scale = f"{p.spelled(ctx, 'math', 'sqrt')[0]}({eps})" if kind == "forward" else f"{eps}{_POWER[kind]}"
    xs = p.operand_text(ctx, x)
    step = f"{name} = {scale} * max(1.0, abs({p.text(ctx, x)})); {name} = ({xs} + {name}) - {xs}"
    return step


class FiniteDifferenceStep(Rule):
    id = "finite-difference-step"
    title = "finite-difference step badly sized for double precision"
    severity = Severity.WARNING
    summary = "(f(x + h) - f(x)) / h with h like 1e-12 or eps: rounding swamps the derivative"
    node_types = (ast.BinOp,)
    method = (
        "Step-size choice for finite differences, h ~ sqrt(eps) * max(|x|, 1) forward and cbrt(eps) central: "
        "J. Nocedal and S. J. Wright, Numerical Optimization, 2nd ed., Springer 2006, section 8.1 (from memory)"
    )
    examples = (
        Example("def slope(f, x):\n    h = 1e-12\n    return (f(x + h) - f(x)) / h\n", True, inputs={"x": 1.0}),
        Example("import numpy as np\ndef slope(g, t):\n    eps = np.finfo(float).eps\n"
                "    return (g(t + eps) - g(t - eps)) / (2 * eps)\n", True),
        Example("def rate(f, x, h=1e-14):\n    fx = f(x)\n    return (f(x + h) - fx) / h\n", True),
        Example("def slope(f, x):\n    return (f(x + 0.1) - f(x)) / 0.1\n", True, note="too large"),
        Example("import math\ndef slope(x):\n    h = 1e-13\n    return (math.exp(x + h) - math.exp(x)) / h\n", True,
                note="advice only, never a rewrite: `h = math.sqrt(sys.float_info.epsilon) * max(1.0, abs(x)); "
                "h = (x + h) - x` changes the estimate, which only the exact derivative could judge"),
        Example("def slope(f, x):\n    h = 1e-8\n    return (f(x + h) - f(x)) / h\n", False),
        Example("import math\ndef slope(f, x):\n    h = math.sqrt(2.2e-16) * max(abs(x), 1.0)\n"
                "    h = (x + h) - x\n    return (f(x + h) - f(x)) / h\n", False),
        Example("def grad(y, dx):\n    return (y[1:] - y[:-1]) / dx\n", False, note="grid data"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.BinOp)
        if not isinstance(node.op, ast.Div) or not isinstance(node.left, ast.BinOp):
            return
        found = step_of(ctx, node.right)
        if found is None:
            return
        h_node, squared = found
        kind = quotient_kind(ctx, node.left, h_node, squared)
        h = p.constant_value(ctx, h_node) if kind is not None else None
        if kind is None or h is None or h <= 0:
            return
        error, best = model_error(kind, h), optimal_error(kind)
        order, deriv = _MODEL[kind]
        small = EPS / h ** deriv > h ** order
        if error < (_FACTOR_SMALL if small else _FACTOR_LARGE) * best:
            return
        left, most = max(0.0, -math.log10(error)), -math.log10(best)
        cause = (f"rounding error eps/h is about {EPS / h ** deriv:.0e}" if small
                 else f"truncation error grows like h**{order} = {h ** order:.0e}")
        advice = step_advice(ctx, kind, node.left, h_node)
        use = "" if isinstance(h_node, ast.Name) else " and use h for the literal step"
        fix = (f"set `{advice}`{use} (advice, not verified: a new step changes the estimate, and only the exact "
               "derivative could show it is closer)") if advice else \
            "scale h that way and divide by the representable step h = (x + h) - x"
        yield Hit(node, f"with h = {h:.3g} the {cause}, leaving about {left:.0f} correct digits of the {kind} difference "
                  f"(about {most:.0f} at the best step {_BEST[kind]} times max(|x|, 1)); {fix}",
                  severity=None if small else Severity.NOTE)
