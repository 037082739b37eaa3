"""Least squares through the normal equations, `solve(A.T @ A, A.T @ b)`, squares the condition number.

The Gram matrix A^T A has condition number cond(A)^2, so solving the normal equations loses
about twice the digits the least-squares problem itself warrants: a design matrix with
cond(A) = 1e6 (a cubic fit on unscaled abscissae, nearly collinear regressors) leaves only
about four correct digits in the coefficients, and at cond(A) = 1e8 none. A QR factorisation
of A, or an SVD-based lstsq, works on A directly and loses only about log10(cond(A)) digits
(plus a term in the residual). A Gram matrix computed for its own sake (a kernel matrix, a
covariance estimate) and a ridge system `A.T @ A + lam * I` are not flagged.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p


def gram_inverse(ctx: Context, expr: ast.expr) -> tuple[ast.expr, ast.Call] | None:
    """(A, call) when `expr` (or its local) is inv(A.T @ A)."""
    origin = ctx.origin(expr)
    if isinstance(origin, ast.Call) and ctx.family(origin) in ("inv", "pinv") and p.single_arg(origin) is not None:
        base = p.gram_base(ctx, origin.args[0])
        if base is not None:
            return base, origin
    return None


def normal_rhs(ctx: Context, factors: list[ast.expr], a: ast.expr) -> ast.expr | None:
    """b when `factors` spell A.T @ b (directly, or one factor naming a local A.T @ b)."""
    if len(factors) == 1:
        inner = p.product_factors(ctx, ctx.origin(factors[0]))
        if inner is None:
            return None
        factors = inner
    if len(factors) == 2:
        base = p.transposed(ctx, ctx.origin(factors[0]))
        if base is not None and p.same_expr(base, a):
            return factors[1]
    return None


def inside_product(ctx: Context, node: ast.AST) -> bool:
    """True when `node` is a factor of a larger product (`(inv(G) @ A.T) @ b`, `inv(G).dot(A.T).dot(b)`)."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Attribute) and parent.attr == "dot":
        parent = ctx.parent(parent)
    pair = p.product_pair(ctx, parent) if parent is not None else None
    return pair is not None and any(f is node for f in pair)


def lstsq_text(ctx: Context, module: str | None, a: ast.expr, b: ast.expr) -> tuple[str | None, tuple[str, ...]]:
    if module == "numpy.linalg":
        func, imports = p.spelled_qualified(ctx, "numpy.linalg.lstsq")
        return f"{func}({p.text(ctx, a)}, {p.text(ctx, b)}, rcond=None)[0]", imports
    if module == "scipy.linalg":
        func, imports = p.spelled_qualified(ctx, "scipy.linalg.lstsq")
        return f"{func}({p.text(ctx, a)}, {p.text(ctx, b)})[0]", imports
    return None, ()


class NormalEquations(Rule):
    id = "normal-equations"
    title = "least squares through the normal equations"
    severity = Severity.WARNING
    summary = "solve(A.T @ A, A.T @ b) squares cond(A); use lstsq or QR on A"
    node_types = (ast.Call, ast.BinOp)
    method = (
        "Least squares by Householder QR or the SVD: G. H. Golub and C. F. Van Loan, Matrix Computations, "
        "4th ed., Johns Hopkins 2013, chapter 5 (normal equations square the condition number) (from memory)"
    )
    rewrite_template = "np.linalg.lstsq({A}, {b}, rcond=None)[0]"
    examples = (
        Example("import numpy as np\ndef fit(X, y):\n    return np.linalg.solve(X.T @ X, X.T @ y)\n", True,
                "np.linalg.lstsq(X, y, rcond=None)[0]"),
        Example("from numpy.linalg import inv\ndef fit(X, y):\n    return inv(X.T.dot(X)).dot(X.T).dot(y)\n", True,
                "numpy.linalg.lstsq(X, y, rcond=None)[0]"),
        Example("import scipy.linalg as sla\ndef fit(A, b):\n    G = A.T @ A\n    c = A.T @ b\n    return sla.solve(G, c)\n",
                True, "sla.lstsq(A, b)[0]"),
        Example("import numpy as np\ndef fit(X, y):\n    return np.linalg.lstsq(X, y, rcond=None)[0]\n", False),
        Example("import numpy as np\ndef kernel(X):\n    K = X.T @ X\n    return np.trace(K)\n", False,
                note="a Gram matrix without a solve"),
        Example("import numpy as np\ndef ridge(X, y, lam):\n    n = X.shape[1]\n"
                "    return np.linalg.solve(X.T @ X + lam * np.eye(n), X.T @ y)\n", False, note="regularised system"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.Call) and ctx.family(node) == "solve" and len(node.args) >= 2:
            a = p.gram_base(ctx, node.args[0])
            if a is not None:
                b = normal_rhs(ctx, [node.args[1]], a)
                yield self._hit(ctx, node, p.callee_module(ctx, node), a, b)
            return
        if p.product_pair(ctx, node) is None or inside_product(ctx, node):
            return  # only the outermost product of a chain
        factors = p.product_factors(ctx, node) or []
        found = gram_inverse(ctx, factors[0]) if factors else None
        if found is None:
            return
        a, call = found
        b = normal_rhs(ctx, factors[1:], a)
        yield self._hit(ctx, node, p.callee_module(ctx, call), a, b)

    @staticmethod
    def _hit(ctx: Context, node: ast.AST, module: str | None, a: ast.expr, b: ast.expr | None) -> Hit:
        rewrite, imports = lstsq_text(ctx, module, a, b) if b is not None else (None, ())
        fix = rewrite or "a QR- or SVD-based least-squares solve on A itself"
        return Hit(node, f"the normal equations square the condition number, losing about 2*log10(cond(A)) digits "
                   f"instead of log10(cond(A)); use {fix}", rewrite=rewrite, imports=imports)
