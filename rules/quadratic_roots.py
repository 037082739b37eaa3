"""The textbook quadratic formula loses the small root.

In (-b ± sqrt(b*b - 4*a*c)) / (2*a), when b*b is much larger than |4*a*c| the square root is
close to |b|, and for one choice of the sign -b and the root cancel: with a = c = 1 and
b = 1e8 the small root comes out 25% wrong, and for larger b it is 0. The other root is fine.
The stable method takes q = -0.5*(b + copysign(sqrt(b*b - 4*a*c), b)), which only adds numbers
of one sign, and the roots q/a and c/q (Vieta: the product of the roots is c/a). For one
root written alone, the equal form 2*c / (-b ∓ sqrt(...)) is used on the side of the sign of b
where the textbook form cancels. A root that is only ever converted to a whole number (`int(r)`,
`math.ceil(r)`, directly or through a local), such as a batch size or a count, is not flagged: after
the conversion only its absolute error counts, and the textbook form's is about eps*|b|, far below one
unit unless |b| reaches 1/eps (about 4.5e15).
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.elementary import RootSum, is_discriminant, root_sum, spelled_like, stable_origin
from auditor.integer_uses import rounded_to_integer
from auditor.nodes import walk

_MSG = ("when b*b is much larger than |4*a*c| one root of the textbook formula cancels (for a = c = 1, b = 1e8 "
        "the small root is 25% wrong); use q = -0.5*(b + copysign(sqrt(disc), b)) and the roots q/a and c/q")


def sign_guarded(ctx: Context, node: ast.AST, b: ast.expr) -> bool:
    """True inside a branch chosen by a test on b (`if b > 0:`, `... if b < 0 else ...`, `np.where(b > 0, ...)`):
    the author already picks the formula by the sign of b (as this rule's own rewrite does)."""
    def tests_b(test: ast.AST) -> bool:
        return any(p.same_expr(n, b) for n in walk(test))

    child: ast.AST = node
    for anc in ctx.ancestors(node):
        if isinstance(anc, (ast.IfExp, ast.If)) and child is not anc.test and tests_b(anc.test):
            return True
        if isinstance(anc, ast.Call) and ctx.family(anc) == "where" and anc.args and child is not anc.args[0] \
                and tests_b(anc.args[0]):
            return True
        if isinstance(anc, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            return False
        child = anc
    return False


def split_over(node: ast.AST) -> tuple[ast.expr, ast.expr] | None:
    """(-b + sqrt(d), 2*a) for the split spelling `-b / (2*a) + sqrt(d) / (2*a)`; else None."""
    if not isinstance(node, ast.BinOp) or not isinstance(node.op, (ast.Add, ast.Sub)):
        return None
    terms = alg.signed_terms(node)
    if len(terms) != 2 or not all(isinstance(t, ast.BinOp) and isinstance(t.op, ast.Div) for t, _ in terms):
        return None
    (t1, s1), (t2, s2) = terms
    assert isinstance(t1, ast.BinOp) and isinstance(t2, ast.BinOp)
    if not p.same_expr(t1.right, t2.right):
        return None
    return alg.build_sum([(t1.left, s1), (t2.left, s2)]), t1.right


def twice(den: ast.expr) -> tuple[ast.expr | None] | None:
    """(a,) for a denominator 2*a ((None,) for the literal 2); None when it is not twice something."""
    factors = alg.mult_factors(den)
    two = next((i for i, f in enumerate(factors) if p.is_number(f, 2)), None)
    if two is None:
        return None
    rest = factors[:two] + factors[two + 1:]
    return (alg.build_product(rest) if rest else None,)


def halved_by(ctx: Context, num: ast.expr) -> tuple[ast.expr, ast.expr | None] | None:
    """(root node, a) when `num` is divided by 2*a: `num / (2*a)`, `num * (0.5/a)`, `0.5*num/a`, `num/2/a`."""
    parent, grand = ctx.parent(num), ctx.parent(ctx.parent(num) or num)
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Div) and parent.left is num:
        a = twice(ctx.origin(parent.right))
        if a is not None:
            return parent, a[0]
        if isinstance(grand, ast.BinOp) and isinstance(grand.op, ast.Div) and grand.left is parent \
                and p.is_number(parent.right, 2):
            return grand, grand.right
    if isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Mult):
        other = parent.right if parent.left is num else parent.left
        if isinstance(other, ast.BinOp) and isinstance(other.op, ast.Div) and p.is_number(other.left, 0.5):
            return parent, other.right
        if p.is_number(other, 0.5) and isinstance(grand, ast.BinOp) and isinstance(grand.op, ast.Div) \
                and grand.left is parent:
            return grand, grand.right
    return None


def product_of_roots(shape: RootSum, a: ast.expr | None) -> ast.expr | None:
    """2*c from the discriminant term 4*a*c (with its sign folded in), or None when it does not factor."""
    term, sign = shape.rest[0]
    factors = alg.mult_factors(term)
    four = next(i for i, f in enumerate(factors) if p.is_number(f, 4))
    two = alg.num(2.0 if isinstance(p.literal_number(factors[four]), float) else 2)
    factors.pop(four)
    for af in alg.mult_factors(a) if a is not None else []:
        hit = next((i for i, f in enumerate(factors) if p.same_expr(f, af)), None)
        if hit is None:
            return None
        factors.pop(hit)
    product = alg.build_product([two, *factors])
    return product if sign < 0 else alg.neg(product)


def cancels_when(ctx: Context, shape: RootSum) -> ast.expr:
    """The condition under which the written sign choice cancels."""
    opposite = shape.other_sign * shape.root_sign < 0  # -b + sqrt(...) cancels for b > 0
    op: ast.cmpop = ast.Gt() if opposite else ast.Lt()
    if shape.module == "cmath":  # complex b: cancellation when b and the root point the same way
        dot = alg.binop(ast.Call(ast.Attribute(shape.other, "conjugate"), [], []), ast.Mult(), shape.root)
        return ast.Compare(ast.Attribute(dot, "real"), [op], [ast.Constant(0)])
    return ast.Compare(shape.other, [op], [ast.Constant(0)])


class QuadraticRoots(Rule):
    id = "quadratic-roots"
    title = "textbook quadratic formula"
    severity = Severity.WARNING
    summary = "(-b ± sqrt(b*b - 4*a*c)) / (2*a): one root cancels when b*b >> |4*a*c|"
    node_types = (ast.BinOp, ast.UnaryOp)
    method = (
        "q = -(b + sgn(b) sqrt(b^2 - 4ac))/2, x1 = q/a, x2 = c/q: G. E. Forsythe, How do you solve a quadratic "
        "equation?, Stanford CS report 1966; W. H. Press et al., Numerical Recipes, section 5.6 (from memory)"
    )
    rewrite_template = "2 * {c} / (-{b} - math.sqrt({disc})) if {b} > 0 else (-{b} + math.sqrt({disc})) / (2 * {a})"
    examples = (
        Example("import math\ndef root(a, b, c):\n    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)\n", True,
                "(2 * c / (-b - math.sqrt(b * b - 4 * a * c)) if b > 0 else (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a))",
                {"a": 1.0, "b": 1e8, "c": 1.0}),
        Example("import numpy as np\ndef small(a, b, c):\n    d = np.sqrt(b**2 - 4.0*a*c)\n    return (-b - d) / (2.0*a)\n",
                True, "np.where(b < 0, 2.0 * c / (-b + d), (-b - d) / (2.0 * a))"),
        Example("import cmath\ndef r(a, b, c):\n    disc = b*b - 4*a*c\n    return (cmath.sqrt(disc) - b) * (0.5 / a)\n",
                True, "(2 * c / (-b - cmath.sqrt(disc)) if (b.conjugate() * cmath.sqrt(disc)).real > 0 "
                "else (cmath.sqrt(disc) - b) * (0.5 / a))"),
        Example("import math\ndef roots(a, b, c):\n    q = -0.5 * (b + math.copysign(math.sqrt(b * b - 4 * a * c), b))\n"
                "    return q / a, c / q\n", False, note="the stable method itself"),
        Example("import math\ndef f(a, b, c):\n    return (-b + math.sqrt(b * b + a * c)) / (2 * a)\n", False,
                note="not a discriminant b*b - 4*a*c"),
        Example("import math\ndef batch(k, mem):\n    n = (-k + math.sqrt(k**2 + 4 * mem)) / 2\n"
                "    n = max(int(n), 1)\n    return n\n", False,
                note="a root only converted to a whole number: its absolute error, eps*|b|, is far below 1 (field trial)"),
        Example("import math\ndef scaled(k, mem):\n    n = (-k + math.sqrt(k**2 + 4 * mem)) / 2\n"
                "    return int(n), n / k\n", True,
                note="the root is also used as a real number: its relative error counts there"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.BinOp) and isinstance(ctx.parent(node), ast.UnaryOp):
            return  # `-(b + d)`: matched at the unary minus, which carries the sign
        split = split_over(node)
        shape = root_sum(ctx, split[0] if split else node)
        if shape is None or not is_discriminant(shape) or sign_guarded(ctx, node, shape.other):
            return
        assert isinstance(node, ast.expr)
        halved = halved_by(ctx, node)
        if rounded_to_integer(ctx, halved[0] if halved else node):
            return  # a count: its absolute error, about eps*|b|, stays far below one unit
        if not stable_origin(ctx, shape.radicand, node):
            yield Hit(node, _MSG)
            return
        target, stable = self._stable(ctx, node, shape, split[1] if split else None)
        test = cancels_when(ctx, shape)
        if shape.module in ("numpy", "jax.numpy", "cupy"):
            where, imports = spelled_like(ctx, shape.module, "where")
            rewrite = alg.in_place(alg.call(where, test, stable, target))
        else:
            rewrite, imports = alg.in_place(ast.IfExp(test, stable, target)), ()
        yield Hit(target, _MSG, rewrite=rewrite, imports=imports)

    @staticmethod
    def _stable(ctx: Context, num: ast.expr, shape: RootSum, den: ast.expr | None) -> tuple[ast.expr, ast.expr]:
        """(node to replace, its cancellation-free form): the whole root when it is divided by 2*a."""
        conjugate = alg.build_sum([(shape.other, shape.other_sign), (shape.root, -shape.root_sign)])
        halved = halved_by(ctx, num)
        if den is not None:
            a = twice(den)
            halved = (num, a[0]) if a is not None else None
        if halved is not None:
            twice_c = product_of_roots(shape, halved[1])
            if twice_c is not None:
                return halved[0], alg.binop(twice_c, ast.Div(), conjugate)
        term, sign = shape.rest[0]
        return num, alg.binop(term if sign < 0 else alg.neg(term), ast.Div(), conjugate)
