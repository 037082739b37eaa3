"""Testing a matrix for singularity with its determinant, `det(A) == 0` or `abs(det(A)) < tol`.

The determinant says nothing about how close a matrix is to singular. It scales with the n-th
power of the entries: 0.1 * I of order 30 has det 1e-30 yet is perfectly conditioned, while
a matrix with det 1 can have condition number 1e16. In floating point a singular matrix
almost never gives det exactly 0 (rounding in the LU factors leaves something near 1e-17), so
`det(A) == 0` misses real singularity and a fixed small threshold misfires on scaled data.
Use the condition number (`cond(A) > 1 / eps`) or the numerical rank from the SVD
(`matrix_rank(A) < n`). A determinant used as a value (a Jacobian volume, an orientation
sign test `det(J) > 0`, `slogdet`) is not flagged.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p

#: thresholds above this are not "small determinant" tests
_SMALL = 1e-3


def determinant(ctx: Context, expr: ast.expr) -> tuple[ast.Call, bool] | None:
    """(det call, through abs) when `expr` is det(A) or abs(det(A)), directly or through a local."""
    expr = ctx.origin(expr)
    absolute = False
    if isinstance(expr, ast.Call) and (ctx.family(expr) == "abs" or isinstance(expr.func, ast.Name) and expr.func.id == "abs"):
        arg = p.single_arg(expr)
        if arg is None:
            return None
        expr, absolute = ctx.origin(arg), True
    if isinstance(expr, ast.Call) and ctx.family(expr) == "det" and expr.args:
        return expr, absolute
    return None


def small_threshold(ctx: Context, expr: ast.expr) -> float | None:
    """The value of a zero or small tolerance (literal, eps expression, local or default), else None."""
    value = p.constant_value(ctx, expr)
    if value is None or abs(value) > _SMALL:
        return None
    return value


def in_test_position(ctx: Context, node: ast.AST) -> bool:
    """True when `node`'s truth value decides a branch: `if det(M):`, `while det(M)`, `not det(M)`."""
    parent = ctx.parent(node)
    negated = False
    while isinstance(parent, ast.BoolOp) or isinstance(parent, ast.UnaryOp) and isinstance(parent.op, ast.Not):
        negated = negated or isinstance(parent, ast.UnaryOp)
        node, parent = parent, ctx.parent(parent)
    if negated or isinstance(parent, (ast.If, ast.While, ast.IfExp, ast.Assert)) and parent.test is node:
        return True
    return isinstance(parent, ast.Call) and isinstance(parent.func, ast.Name) and parent.func.id == "bool"


def advice(ctx: Context, det: ast.Call, singular: bool) -> tuple[str, str, tuple[str, ...]]:
    """The rank test and the condition-number test meaning "A is singular" (or "nonsingular"),
    spelled in this file's import style. They change the predicate, so they are offered as advice,
    never as a rewrite: the dynamic pass would see the same False on well-conditioned samples and
    could report a different test as verified."""
    matrix = p.text(ctx, det.args[0])
    rank, imports = p.spelled_qualified(ctx, "numpy.linalg.matrix_rank")
    cond, _ = p.spelled_qualified(ctx, "numpy.linalg.cond")
    finfo, _ = p.spelled_qualified(ctx, "numpy.finfo")
    # len() rather than .shape[0]: it also works for a nested list
    if singular:
        return f"{rank}({matrix}) < len({matrix})", f"{cond}({matrix}) > 1 / {finfo}(float).eps", imports
    return f"{rank}({matrix}) == len({matrix})", f"{cond}({matrix}) < 1 / {finfo}(float).eps", imports


class DeterminantSingularityTest(Rule):
    id = "determinant-singularity-test"
    title = "singularity tested with the determinant"
    severity = Severity.WARNING
    summary = "det(A) == 0 or a small-det threshold: the determinant does not measure nearness to singularity"
    node_types = (ast.Compare, ast.Call)
    requires = ("det",)  # a file that never spells these cannot hold this pattern
    method = (
        "Condition number and numerical rank from the SVD: G. H. Golub and C. F. Van Loan, Matrix Computations, "
        "4th ed., 2013, sections 2.4 and 5.4; N. J. Higham, Accuracy and Stability of Numerical Algorithms, "
        "2nd ed., 2002, section 14.6 on the determinant (from memory)"
    )
    examples = (
        Example("import numpy as np\ndef check(A):\n    if np.linalg.det(A) == 0:\n        raise ValueError('singular')\n", True),
        Example("from scipy.linalg import det\ndef ok(M):\n    return abs(det(M)) > 1e-12\n", True),
        Example("import numpy as np\ndef f(M):\n    d = np.linalg.det(M)\n    if np.isclose(d, 0.0):\n        return None\n    return d\n", True),
        Example("import numpy as np\ndef f(M):\n    if np.linalg.det(M):\n        return np.linalg.solve(M, M[0])\n", True),
        Example("import numpy as np\ndef volume(J):\n    return abs(np.linalg.det(J))\n", False, note="a Jacobian volume"),
        Example("import numpy as np\ndef orient(J):\n    return np.linalg.det(J) > 0\n", False, note="orientation sign"),
        Example("import numpy as np\ndef f(A):\n    sign, logdet = np.linalg.slogdet(A)\n    return sign == 0\n", False),
        Example("import numpy as np\ndef f(A, n):\n    return np.linalg.matrix_rank(A) < n\n", False),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if not ctx.mentions("det"):
            return  # no determinant anywhere in the file (cheap pre-filter; detection is below)
        if isinstance(node, ast.Compare):
            if self._compares_small(node, ctx):
                yield self._hit(ctx, node, *self._direction(node, ctx))
        elif isinstance(node, ast.Call):
            if ctx.family(node) == "det" and in_test_position(ctx, node):
                yield self._hit(ctx, node, node, False)  # `if det(M):` holds for a nonsingular M
            elif (p.callee_module(ctx, node) in ("numpy", "math", "torch", "cupy", "jax.numpy")
                  and (ctx.qualname(node.func) or "").endswith(".isclose") and len(node.args) >= 2):
                a, b = node.args[0], node.args[1]
                if determinant(ctx, a) and small_threshold(ctx, b) == 0 or determinant(ctx, b) and small_threshold(ctx, a) == 0:
                    found = determinant(ctx, a) or determinant(ctx, b)
                    assert found is not None
                    yield self._hit(ctx, node, found[0], True)

    @staticmethod
    def _direction(node: ast.Compare, ctx: Context) -> tuple[ast.Call, bool]:
        """(det call, True when the comparison holds for a singular matrix): det == 0, |det| < tol."""
        op, flipped = node.ops[0], False
        found = determinant(ctx, node.left)
        if found is None:
            found, flipped = determinant(ctx, node.comparators[0]), True
        assert found is not None
        singular = isinstance(op, (ast.Eq, ast.Lt, ast.LtE, ast.Is)) if not flipped else \
            isinstance(op, (ast.Eq, ast.Gt, ast.GtE, ast.Is))
        return found[0], singular

    @staticmethod
    def _compares_small(node: ast.Compare, ctx: Context) -> bool:
        if len(node.ops) != 1:
            return False
        left, op, right = node.left, node.ops[0], node.comparators[0]
        found, other = determinant(ctx, left), right
        if found is None:
            found, other = determinant(ctx, right), left
        if found is None:
            return False
        tol = small_threshold(ctx, other)
        if tol is None:
            return False
        _, absolute = found
        if isinstance(op, (ast.Eq, ast.NotEq)):
            return True
        # `det(J) > 0` is an orientation test; with abs() or a positive tolerance it is a singularity test
        return absolute or tol != 0

    @staticmethod
    def _hit(ctx: Context, node: ast.AST, det: ast.Call, singular: bool) -> Hit:
        rank, cond, imports = advice(ctx, det, singular)
        return Hit(node, rewrite=rank, imports=imports, advice="a rank test is a different predicate from a determinant test",
                   message="the determinant scales as the n-th power of the entries (det(0.1*I) is 1e-30 for n = 30) "
                   f"and is rarely exactly 0 for a singular matrix; test `{rank}` or `{cond}` instead "
                   "(advice, not verified: a rank or condition test is a different predicate, so the dynamic pass "
                   "cannot check it against the determinant test)")
