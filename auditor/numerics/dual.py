"""Forward-mode automatic differentiation over columns of MPFR numbers: one pass gives every
sample's reference value and its gradient over the unit's variables, so the condition number
sum_i |x_i df/dx_i| / |f| (CONTRACT.md) costs a few multiplications per node instead of one more
reference run per variable. Derivatives are exact at the working precision, which already makes
the value converge to 30 digits; the condition number needs about 3 of them.

Only the column subset of numerics/batch.py with a derivative rule for every call is covered
(constant exponents only); anything else keeps forward differences (numerics/sweep.py).
"""
from __future__ import annotations

import ast
import operator
from collections.abc import Callable
from typing import Any

import gmpy2

from auditor.numerics.batch import BatchCompiler, _times
from auditor.numerics.budget import NotEvaluable, checked_pow

Grads = dict[str, list[Any]]  #: variable -> d(node)/d(variable) per sample (absent: zero)
Dual = tuple[list[Any], Grads]
DualFn = Callable[[dict[str, list[Any]], int], Dual]


def _sec2(u: Any, y: Any) -> Any:
    return 1 + y * y


#: Short function name -> f'(u) from the argument u and the value y = f(u) (textbook derivatives).
RULES: dict[str, Callable[[Any, Any], Any]] = {
    "exp": lambda u, y: y, "expm1": lambda u, y: y + 1, "exp2": lambda u, y: y * gmpy2.const_log2(),
    "log": lambda u, y: 1 / u, "log1p": lambda u, y: 1 / (1 + u),
    "log10": lambda u, y: 1 / (u * gmpy2.log(10)), "log2": lambda u, y: 1 / (u * gmpy2.const_log2()),
    "sqrt": lambda u, y: 1 / (2 * y), "cbrt": lambda u, y: 1 / (3 * y * y),
    "sin": lambda u, y: gmpy2.cos(u), "cos": lambda u, y: -gmpy2.sin(u), "tan": _sec2,
    "asin": lambda u, y: 1 / gmpy2.sqrt(1 - u * u), "acos": lambda u, y: -1 / gmpy2.sqrt(1 - u * u),
    "atan": lambda u, y: 1 / (1 + u * u), "sinh": lambda u, y: gmpy2.cosh(u), "cosh": lambda u, y: gmpy2.sinh(u),
    "tanh": lambda u, y: 1 - y * y, "asinh": lambda u, y: 1 / gmpy2.sqrt(u * u + 1),
    "acosh": lambda u, y: 1 / gmpy2.sqrt(u * u - 1), "atanh": lambda u, y: 1 / (1 - u * u),
    "erf": lambda u, y: 2 / gmpy2.sqrt(gmpy2.const_pi()) * gmpy2.exp(-u * u),
    "erfc": lambda u, y: -2 / gmpy2.sqrt(gmpy2.const_pi()) * gmpy2.exp(-u * u),
    "abs": lambda u, y: 1 if u > 0 else -1, "fabs": lambda u, y: 1 if u > 0 else -1,
    "absolute": lambda u, y: 1 if u > 0 else -1, "square": lambda u, y: 2 * u,
    "float": lambda u, y: 1, "float64": lambda u, y: 1, "double": lambda u, y: 1,
}
def _sin(u: Any) -> tuple[Any, Any]:
    s, c = gmpy2.sin_cos(u)
    return s, c


def _cos(u: Any) -> tuple[Any, Any]:
    s, c = gmpy2.sin_cos(u)
    return c, -s


def _sinh(u: Any) -> tuple[Any, Any]:
    sh, ch = gmpy2.sinh_cosh(u)
    return sh, ch


def _cosh(u: Any) -> tuple[Any, Any]:
    sh, ch = gmpy2.sinh_cosh(u)
    return ch, sh


#: (value, derivative) from one MPFR call: both correctly rounded, so the value is the one
#: gmpy2.sin (cos, sinh, cosh) returns, at about the cost of one function instead of two.
PAIRED: dict[str, Callable[[Any], tuple[Any, Any]]] = {"sin": _sin, "cos": _cos, "sinh": _sinh, "cosh": _cosh}
_ALIASES = {"arcsin": "asin", "arccos": "acos", "arctan": "atan", "arcsinh": "asinh", "arccosh": "acosh",
            "arctanh": "atanh"}


def _combine(a: Grads, b: Grads, op: Callable[[Any, Any], Any], lone_b: Callable[[Any], Any] | None) -> Grads:
    out = dict(a)
    for k, g in b.items():
        out[k] = list(map(op, a[k], g)) if k in a else (g if lone_b is None else list(map(lone_b, g)))
    return out


def _scale(grads: Grads, factor: list[Any]) -> Grads:
    return {k: list(map(operator.mul, g, factor)) for k, g in grads.items()}


class DualCompiler(BatchCompiler):
    """Compiles an expression into `fn(columns, n) -> (values, gradients)` on MPFR columns."""

    def __init__(self, scalar: Any, inputs: list[str], vary: list[str]) -> None:
        super().__init__(scalar, inputs)
        self.vary = set(vary)

    def dual(self, node: ast.expr) -> DualFn:
        if not any(isinstance(n, ast.Name) and n.id in self.inputs for n in ast.walk(node)):
            const = self._constant(node)
            return lambda columns, n: (const(columns, n), {})
        method = getattr(self, "_d_" + type(node).__name__, None)
        if method is None:
            raise NotEvaluable(f"no derivative for {type(node).__name__}")
        fn: DualFn = method(node)
        return fn

    def _d_Name(self, node: ast.Name) -> DualFn:
        name, seeded = node.id, node.id in self.vary
        seed = f"<seed {name}>"  # a column of ones (0 where the input is not a float)
        return lambda columns, n: (columns[name], {name: columns[seed]} if seeded else {})

    def _d_UnaryOp(self, node: ast.UnaryOp) -> DualFn:
        if not isinstance(node.op, (ast.USub, ast.UAdd)):
            raise NotEvaluable("no derivative for `not` or `~`")
        inner, neg = self.dual(node.operand), isinstance(node.op, ast.USub)

        def run(columns: dict[str, list[Any]], n: int) -> Dual:
            v, g = inner(columns, n)
            if not neg:
                return v, g
            return list(map(operator.neg, v)), {k: list(map(operator.neg, x)) for k, x in g.items()}

        return run

    def _d_BinOp(self, node: ast.BinOp) -> DualFn:
        kind = type(node.op)
        if kind is ast.Pow:
            return self._power(node)
        if kind not in (ast.Add, ast.Sub, ast.Mult, ast.Div):
            raise NotEvaluable(f"no derivative for {kind.__name__}")
        left, right = self.dual(node.left), self.dual(node.right)

        def run(columns: dict[str, list[Any]], n: int) -> Dual:
            (a, ga), (b, gb) = left(columns, n), right(columns, n)
            if kind is ast.Add:
                return list(map(operator.add, a, b)), _combine(ga, gb, operator.add, None)
            if kind is ast.Sub:
                return list(map(operator.sub, a, b)), _combine(ga, gb, operator.sub, operator.neg)
            if kind is ast.Mult:
                return _times(a, b), _combine(_scale(ga, b), _scale(gb, a), operator.add, None)
            y = list(map(operator.truediv, a, b))
            # d(a/b) = (da - y db) / b
            ga_b = {k: list(map(operator.truediv, g, b)) for k, g in ga.items()}
            gb_b = {k: [q * yy / bb for q, yy, bb in zip(g, y, b)] for k, g in gb.items()}
            return y, _combine(ga_b, gb_b, operator.sub, operator.neg)

        return run

    def _power(self, node: ast.BinOp) -> DualFn:
        if any(isinstance(n, ast.Name) and n.id in self.inputs for n in ast.walk(node.right)):
            raise NotEvaluable("no derivative for a variable exponent")
        base = self.dual(node.left)
        exponent = self._constant(node.right)
        small = isinstance(node.right, ast.Constant) and type(node.right.value) is int and abs(node.right.value) <= 64

        def run(columns: dict[str, list[Any]], n: int) -> Dual:
            u, gu = base(columns, n)
            p: Any = exponent(columns, n)[0] if n else 0
            y = [a ** p for a in u] if small else [checked_pow(a, p) for a in u]  # as the column run
            factor = [p * yy / uu if p != 0 else 0 for yy, uu in zip(y, u)]  # d u^p = p u^p / u du
            return y, _scale(gu, factor)

        return run

    def _d_Call(self, node: ast.Call) -> DualFn:
        rule = self._rule(node.func)
        if rule is None or len(node.args) != 1 or node.keywords or isinstance(node.args[0], ast.Starred):
            raise NotEvaluable(f"no derivative rule for a call of {ast.unparse(node.func)}")
        if isinstance(node.func, ast.Name) and node.func.id in self.scalar.module.functions:
            raise NotEvaluable("the file's own functions have no derivative rule")
        fn, inner = self.scalar.callee(node.func), self.dual(node.args[0])
        paired = PAIRED.get(self._short(node.func) or "")
        if paired is not None and fn is getattr(gmpy2, self._short(node.func) or "", None):

            def run_paired(columns: dict[str, list[Any]], n: int) -> Dual:
                u, gu = inner(columns, n)
                pairs = list(map(paired, u))
                y = [v for v, _ in pairs]
                return y, (_scale(gu, [d for _, d in pairs]) if gu else {})

            return run_paired

        def run(columns: dict[str, list[Any]], n: int) -> Dual:
            u, gu = inner(columns, n)
            y = list(map(fn, u))
            return y, (_scale(gu, list(map(rule, u, y))) if gu else {})

        return run

    def _rule(self, func: ast.expr) -> Callable[[Any, Any], Any] | None:
        short = self._short(func)
        return RULES.get(short) if short else None

    def _short(self, func: ast.expr) -> str | None:
        """`np.arcsin` -> "asin": the name derivative rules are keyed by (None if not a library function)."""
        if isinstance(func, ast.Name) and func.id in ("abs", "float"):
            return func.id
        qual = self.scalar.module.imports.qualname(func)
        if not qual or qual.split(".")[0] not in ("math", "numpy", "cmath", "scipy"):
            return None
        short = qual.rsplit(".", 1)[-1]
        return _ALIASES.get(short, short)


def compile_dual(scalar: Any, node: ast.expr, inputs: list[str], vary: list[str]) -> DualFn:
    """Value-and-gradient twin of an expression unit on MPFR columns, or NotEvaluable."""
    return DualCompiler(scalar, inputs, vary).dual(node)
