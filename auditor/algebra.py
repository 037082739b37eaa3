"""Expression algebra for rewrites: signed sums, products, simplified differences, AST builders.

Rewrites are built as AST and printed with `ast.unparse`, so operator precedence is always
right (a rewrite never needs hand-placed parentheses, except around a conditional expression
that replaces a node in place: see `in_place`).
"""
from __future__ import annotations

import ast

from auditor.patterns import literal_number, same_expr

Term = tuple[ast.expr, int]  #: (expression, +1 or -1)


def signed_terms(node: ast.expr) -> list[Term]:
    """`a + b - (c - d)` -> [(a, 1), (b, 1), (c, -1), (d, 1)]; a unary minus flips its operand."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        flip = -1 if isinstance(node.op, ast.Sub) else 1
        return signed_terms(node.left) + [(t, s * flip) for t, s in signed_terms(node.right)]
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return [(t, -s) for t, s in signed_terms(node.operand)]
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.UAdd):
        return signed_terms(node.operand)
    return [(node, 1)]


def mult_factors(node: ast.expr) -> list[ast.expr]:
    """`4 * a * (c * d)` -> [4, a, c, d] (multiplication only; a quotient is one factor)."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
        return mult_factors(node.left) + mult_factors(node.right)
    return [node]


def num(value: float) -> ast.expr:
    """A numeric literal; negative values as a unary minus so `**` binds correctly when printed."""
    if value < 0:
        return ast.UnaryOp(ast.USub(), ast.Constant(-value))
    return ast.Constant(value)


def binop(left: ast.expr, op: ast.operator, right: ast.expr) -> ast.expr:
    return ast.BinOp(left, op, right)


def call(func: str, *args: ast.expr) -> ast.expr:
    """A call of `func` (dotted source text such as 'np.sin') with positional arguments."""
    return ast.Call(ast.parse(func, mode="eval").body, list(args), [])


def neg(node: ast.expr) -> ast.expr:
    """-node, undoing a unary minus rather than stacking two."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return node.operand
    return ast.UnaryOp(ast.USub(), node)


def build_sum(terms: list[Term]) -> ast.expr:
    """The expression for a signed sum; 0 when there are no terms."""
    if not terms:
        return ast.Constant(0)
    first, sign = terms[0]
    out = first if sign > 0 else neg(first)
    for term, sign in terms[1:]:
        out = ast.BinOp(out, ast.Add() if sign > 0 else ast.Sub(), term)
    return out


def build_product(factors: list[ast.expr]) -> ast.expr:
    """The expression for a product; 1 when there are no factors."""
    if not factors:
        return ast.Constant(1)
    out = factors[0]
    for f in factors[1:]:
        out = ast.BinOp(out, ast.Mult(), f)
    return out


def combine(terms: list[Term]) -> list[Term]:
    """Flatten, cancel equal terms of opposite sign, and add up the numeric literals."""
    flat = [(t, s * s2) for term, s in terms for t, s2 in signed_terms(term)]
    kept: list[Term] = []
    constant: float = 0
    slot = None  #: the summed literal goes where the first literal was
    for term, sign in flat:
        value = literal_number(term)
        if isinstance(value, (int, float)):
            constant += sign * value
            slot = len(kept) if slot is None else slot
            continue
        match = next((i for i, (k, ks) in enumerate(kept) if ks == -sign and same_expr(k, term)), None)
        if match is None:
            kept.append((term, sign))
        else:
            del kept[match]
    if constant:
        kept.insert(len(kept) if slot is None else slot, (num(abs(constant)), 1 if constant > 0 else -1))
    return kept


def difference(a: ast.expr, b: ast.expr) -> ast.expr:
    """a - b, simplified: `(x + h) - x` -> h; `4*k*(t + d)*r - 4*k*t*r` -> 4*k*d*r."""
    ta, tb = signed_terms(a), signed_terms(b)
    if len(ta) == 1 and len(tb) == 1:
        factored = _factored_difference(ta[0], tb[0])
        if factored is not None:
            return factored
    return build_sum(combine([(a, 1), (b, -1)]))


def _factored_difference(ta: Term, tb: Term) -> ast.expr | None:
    """C*Ra - C*Rb -> C*(Ra - Rb) when two single products share factors C."""
    fa, fb = mult_factors(ta[0]), mult_factors(tb[0])
    rest_b = list(fb)
    common: list[ast.expr] = []
    rest_a: list[ast.expr] = []
    slot = None
    for f in fa:
        hit = next((i for i, g in enumerate(rest_b) if same_expr(f, g)), None)
        if hit is None:
            slot = len(common) if slot is None else slot
            rest_a.append(f)
        else:
            common.append(f)
            del rest_b[hit]
    if not common or (not rest_a and not rest_b):
        return None
    inner = build_sum(combine([(build_product(rest_a), ta[1]), (build_product(rest_b), -tb[1])]))
    slot = len(common) if slot is None else slot
    return build_product(common[:slot] + [inner] + common[slot:])


def in_place(node: ast.expr) -> str:
    """Source text for `node` that can replace an expression anywhere (a conditional gets parentheses)."""
    text = ast.unparse(node)
    if isinstance(node, (ast.IfExp, ast.Lambda, ast.NamedExpr)):
        return f"({text})"
    return text
