"""How close a one-variable polynomial with literal coefficients can come to zero over the reals."""
from __future__ import annotations

import ast
import math
from collections.abc import Callable
from dataclasses import dataclass

#: largest literal power `a ** k` that is expanded; larger powers are left unparsed
_MAX_POWER = 8
#: largest degree kept; beyond this the expansion is not worth its cost
_MAX_DEGREE = 16

Resolve = Callable[[ast.expr], ast.expr]


@dataclass(frozen=True, slots=True)
class Poly:
    """A polynomial in one operand."""

    #: ascending: coeffs[k] multiplies a**k; never empty
    coeffs: tuple[float, ...]
    #: ast.dump of the lone non-literal operand `a`; None while the polynomial is a constant
    atom: str | None


def _add(p: Poly, q: Poly, sign: float = 1.0) -> Poly | None:
    shared, atom = _same_atom(p, q)
    if not shared:
        return None
    n = max(len(p.coeffs), len(q.coeffs))
    pc = p.coeffs + (0.0,) * (n - len(p.coeffs))
    qc = q.coeffs + (0.0,) * (n - len(q.coeffs))
    return Poly(tuple(a + sign * b for a, b in zip(pc, qc)), atom)


def _mul(p: Poly, q: Poly) -> Poly | None:
    shared, atom = _same_atom(p, q)
    if not shared or len(p.coeffs) + len(q.coeffs) - 2 > _MAX_DEGREE:
        return None
    out = [0.0] * (len(p.coeffs) + len(q.coeffs) - 1)
    for i, a in enumerate(p.coeffs):
        for j, b in enumerate(q.coeffs):
            out[i + j] += a * b
    return Poly(tuple(out), atom)


def _same_atom(p: Poly, q: Poly) -> tuple[bool, str | None]:
    """(False, None) when they read different operands, else (True, the shared operand or None)."""
    if p.atom is not None and q.atom is not None and p.atom != q.atom:
        return False, None
    return True, (p.atom if p.atom is not None else q.atom)


def _literal(node: ast.expr) -> float | None:
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) and not isinstance(node.value, bool):
        try:
            return float(node.value)
        except OverflowError:  # an int beyond float range: not a double coefficient
            return None
    return None


def _reads_complex_literal(node: ast.expr) -> bool:
    return any(isinstance(n, ast.Constant) and isinstance(n.value, complex) for n in ast.walk(node))


def _power(base: Poly, exponent: ast.expr) -> Poly | None:
    value = _literal(exponent)
    if value is None or not value.is_integer() or not 0 <= value <= _MAX_POWER:
        return None
    k = int(value)
    result: Poly | None = Poly((1.0,), base.atom)
    for _ in range(k):
        result = _mul(result, base) if result is not None else None
    return result


def _binop(node: ast.BinOp, resolve: Resolve | None, depth: int) -> Poly | None:
    left = polynomial(node.left, resolve, depth - 1)
    if left is None:
        return None
    if isinstance(node.op, ast.Pow):
        return _power(left, node.right)
    right = polynomial(node.right, resolve, depth - 1)
    if right is None:
        return None
    if isinstance(node.op, (ast.Add, ast.Sub)):
        return _add(left, right, 1.0 if isinstance(node.op, ast.Add) else -1.0)
    if isinstance(node.op, ast.Mult):
        return _mul(left, right)
    if isinstance(node.op, ast.Div) and len(right.coeffs) == 1 and right.coeffs[0] != 0.0:
        return Poly(tuple(c / right.coeffs[0] for c in left.coeffs), left.atom)
    return None


def polynomial(node: ast.expr, resolve: Resolve | None = None, depth: int = 40) -> Poly | None:
    """`node` as a polynomial in a single operand with real literal coefficients, else None.

    Parsed: + - * unary minus, ** by an integer literal 0..8, / by a literal. Any other
    sub-expression is an operand; a second, different operand makes the result None.
    `resolve` (e.g. Context.origin) sees through local names first; a name whose value does not
    parse stays an operand.
    """
    if depth <= 0:
        return None
    if resolve is not None and isinstance(node, ast.Name):
        value_expr = resolve(node)
        seen = polynomial(value_expr, resolve, depth - 1) if value_expr is not node else None
        if seen is not None:
            return seen
        if _reads_complex_literal(value_expr):
            return None  # a complex operand can make u exactly 0 where no real one does
        # a name whose value is no such polynomial is still one real operand: any bound over all
        # reals holds for it too
    value = _literal(node)
    if value is not None:
        return Poly((value,), None)
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = polynomial(node.operand, resolve, depth - 1)
        if inner is None or isinstance(node.op, ast.UAdd):
            return inner
        return Poly(tuple(-c for c in inner.coeffs), inner.atom)
    if isinstance(node, ast.BinOp):
        return _binop(node, resolve, depth)
    if isinstance(node, ast.Constant):
        return None  # complex, bool or string literals: not a real polynomial
    return Poly((0.0, 1.0), ast.dump(node))


def evaluate(coeffs: tuple[float, ...], x: float) -> float:
    """Horner's rule, ascending coefficients."""
    total = 0.0
    for c in reversed(coeffs):
        total = total * x + c
    return total


def _critical_points(coeffs: tuple[float, ...]) -> list[float]:
    """Real parts of every root of the derivative (complex ones too: an extra point only helps)."""
    import numpy as np  # only here: most scans never meet a polynomial exponent

    derivative = [k * c for k, c in enumerate(coeffs)][1:]
    return [float(r.real) for r in np.roots(derivative[::-1])]


def infimum_abs(coeffs: tuple[float, ...]) -> float:
    """inf |u(a)| over all real a for u with these ascending coefficients; 0 when u has a real root."""
    trimmed = list(coeffs)
    while len(trimmed) > 1 and trimmed[-1] == 0.0:
        trimmed.pop()
    if not all(math.isfinite(c) for c in trimmed):
        return 0.0
    if len(trimmed) == 1:
        return abs(trimmed[0])
    if len(trimmed) % 2 == 0:
        return 0.0  # odd degree: it runs from -inf to +inf, so it crosses zero
    # Even degree: u tends to sign(lead) * inf at both ends, so it keeps that sign unless its
    # lowest (or highest) value, reached at a critical point, has the other sign or is zero.
    sign = math.copysign(1.0, trimmed[-1])
    extreme = min(sign * evaluate(tuple(trimmed), x) for x in _critical_points(tuple(trimmed)))
    return max(extreme, 0.0)


def distance_from_zero(node: ast.expr, resolve: Resolve | None = None) -> float:
    """inf |node| over all real values of its one operand; 0 when it is not such a polynomial."""
    poly = polynomial(node, resolve)
    return 0.0 if poly is None else infimum_abs(poly.coeffs)
