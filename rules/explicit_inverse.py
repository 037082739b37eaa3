"""Multiplying by an explicit inverse, `inv(A) @ b`, where a linear solve is meant.

Forming A^-1 and then multiplying costs about three times the work of one LU solve and gives
a less accurate answer: the computed inverse carries an error of order cond(A) * eps in every
entry, and the product adds a residual that a backward-stable solve does not have. For an
ill-conditioned A (cond near 1e10, common with nearly collinear columns or fine grids) the
inverse route can lose several more digits than `solve(A, b)`, which factors A once and
substitutes. A pseudo-inverse product `pinv(A) @ b` is a least-squares solve in disguise; an
SVD-based lstsq computes the same minimum-norm solution without forming pinv(A).
An inverse that is itself the goal (a covariance matrix returned to the caller) is not flagged, nor a
sandwich A^-1 M A^-1 with one inverse on both sides (a robust covariance: every column of it needs the
inverse, so solves gain nothing; also A^-1 M A^-H with inv(A^H) spelled as its own inverse), nor a
pseudo-inverse the function also keeps as a value of its own or applies the same way to several
right-hand sides (then lstsq would be a second SVD). A product checked against the identity or against
the matrix at both its ends (`assert_allclose(inv(A) @ B, I)`, `norm(A @ X @ A - A) < tol`) tests the
inverse and is not flagged; `I - A X` used in further computation is. An inverse kept as a value and also applied to a right-hand side is
a note: the inverse costs nothing extra, but its product is still not backward stable as a solve is.
Three more cases are not flagged. The inverse of a unitary factor a factorisation returned (U or Vh of an
svd, Q of a qr, the eigenvectors of a standard eigh, Z of a Schur form) has condition number 1, so it loses
nothing (it is the conjugate transpose). A pseudo-inverse multiplied by a matrix the code shows to be square
(a Gram product T'T, eye(k), a covariance) gives a product as large as pinv(A) itself, so lstsq would form the
same numbers at the same cost. An inverse the function later updates from its own value (`Ainv = Ainv - t t' / f`,
a Sherman-Morrison or Woodbury recursion) is the algorithm's state, needed as such at every step.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.copies import data_source
from auditor.factor_outputs import unitary_factor
from auditor.inverse_checks import checks_identity, same_matrix
from auditor.inverse_use import applied_again, chain_top, inverted, kept_as_value, two_sided, updated_state
from auditor.nodes import walk
from auditor.square_matrices import square_matrix

#: linear-algebra modules that offer `solve` and `lstsq` with numpy's meaning
_SOLVERS = ("numpy.linalg", "scipy.linalg", "jax.numpy.linalg", "torch.linalg", "cupy.linalg")


_REPEATS = (ast.For, ast.While, ast.GeneratorExp, ast.ListComp, ast.SetComp, ast.DictComp)


def _variables(ctx: Context, expr: ast.expr) -> set[str]:
    """Variables an expression reads, attribute chains whole (`cls.x`), imported names left out.

    A local holding a copy or conversion of another variable (`a = a0.astype(float)`) counts as that one.
    """
    found: set[str] = set()
    stack: list[ast.AST] = [expr]
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.Name, ast.Attribute)) and isinstance(node.ctx, ast.Load):
            text = ast.unparse(node)
            if text.split(".")[0] not in ctx.imports.bindings:
                source = data_source(ctx, node)
                found.add(ast.unparse(source) if isinstance(source, (ast.Name, ast.Attribute)) else text)
                continue
        stack.extend(ast.iter_child_nodes(node))
    return found


def _sandwich(ctx: Context, product: ast.AST, holder: ast.expr) -> bool:
    """True when the local holding the inverse appears again, transposed, in the same product chain."""
    if not isinstance(holder, ast.Name):
        return False
    chain: list[ast.AST] = [product]
    parent = ctx.parent(product)
    while parent is not None and p.product_pair(ctx, parent) is not None:
        chain.append(parent)
        parent = ctx.parent(parent)
    top = chain[-1]
    for node in ast.walk(top):
        transposed = p.transposed(ctx, node)
        if isinstance(transposed, ast.Name) and transposed.id == holder.id:
            return True
    return False


def _reused(ctx: Context, product: ast.AST, call: ast.Call) -> bool:
    """True when the product sits in a loop or comprehension that the inverse's call is outside of."""
    for anc in ctx.ancestors(product):
        if isinstance(anc, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            return False
        if isinstance(anc, _REPEATS) and not any(n is call for n in walk(anc)):
            return True
    return False


def used_elsewhere(ctx: Context, name: ast.expr, product: ast.AST) -> bool:
    """True when the local holding the inverse is also read outside matrix products (e.g. returned)."""
    if not isinstance(name, ast.Name):
        return False
    for node in walk(ctx.scope(product)):
        if isinstance(node, ast.Name) and node.id == name.id and isinstance(node.ctx, ast.Load):
            parent = ctx.parent(node)
            if parent is None or p.product_pair(ctx, parent) is None:
                return True
    return False


def solve_text(ctx: Context, kind: str, call: ast.Call, rhs: ast.expr, left: bool) -> tuple[str | None, tuple[str, ...]]:
    module = p.callee_module(ctx, call)
    if module not in _SOLVERS:
        return None, ()
    a = p.text(ctx, call.args[0])
    b = p.text(ctx, rhs)
    if kind == "pinv":
        if module != "numpy.linalg" or not left:
            return None, ()
        func, imports = p.spelled_qualified(ctx, "numpy.linalg.lstsq")
        return f"{func}({a}, {b}, rcond=None)[0]", imports
    func, imports = p.spelled_qualified(ctx, f"{module}.solve")
    if left:
        return f"{func}({a}, {b})", imports
    # b @ inv(A) = (A^T \ b^T)^T; `.T` is a no-op on a 1-D b
    return f"{func}({p.operand_text(ctx, call.args[0])}.T, {p.operand_text(ctx, rhs)}.T).T", imports


class ExplicitInverse(Rule):
    id = "explicit-inverse"
    title = "product with an explicit matrix inverse"
    severity = Severity.WARNING
    summary = "inv(A) @ b: slower and less accurate than solving A x = b"
    node_types = (ast.BinOp, ast.Call)
    requires = ("inv", "pinv")  # a file that never spells these cannot hold this pattern
    method = (
        "LU solve (Gaussian elimination with partial pivoting) instead of the inverse: N. J. Higham, "
        "Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, chapter 14 (from memory)"
    )
    rewrite_template = "np.linalg.solve({A}, {b})"
    examples = (
        Example("import numpy as np\ndef f(A, b):\n    return np.linalg.inv(A) @ b\n", True, "np.linalg.solve(A, b)"),
        Example("from numpy.linalg import inv\nimport numpy as np\ndef f(K, r):\n    return np.dot(inv(K), r)\n",
                True, "np.linalg.solve(K, r)"),
        Example("import scipy.linalg as sla\ndef f(M, y):\n    Minv = sla.inv(M)\n    return Minv.dot(y)\n",
                True, "sla.solve(M, y)"),
        Example("import numpy as np\ndef f(A, b):\n    return np.linalg.pinv(A) @ b\n", True,
                "np.linalg.lstsq(A, b, rcond=None)[0]"),
        Example("import numpy as np\ndef f(A, b):\n    return np.linalg.solve(A, b)\n", False),
        Example("import numpy as np\ndef covariance(H):\n    cov = np.linalg.inv(H)\n    return cov\n", False,
                note="the inverse is the result"),
        Example("import numpy as np\ndef f(A, b):\n    return A @ b\n", False),
        # field trial regressions (docs/field-trial.md)
        Example("from scipy.linalg import inv\nimport numpy as np\ndef check(y):\n    y_inv = inv(y, assume_a='upper triangular')\n"
                "    return y_inv @ np.triu(y)\n", False, note="an inverse tested against its own matrix"),
        Example("import numpy as np\nclass T:\n    def setup(cls):\n        return np.dot(np.linalg.pinv(cls.x), cls.y)\n",
                True, note="attributes of one object are different matrices"),
        Example("import numpy as np\ndef cov_vech(d, sigma):\n    d_plus = np.linalg.pinv(d)\n"
                "    return 2 * (d_plus @ np.kron(sigma, sigma) @ d_plus.T)\n", False,
                note="field trial regression: a congruence with the pseudo-inverse"),
        Example("import numpy as np\ndef inv_cov(x):\n    pinv_x = np.linalg.pinv(x)\n    return pinv_x.dot(pinv_x.T)\n",
                False, note="field trial regression: (X'X)^+ as P P^T, the inverse is the goal"),
        Example("import numpy as np\ndef scatter(c, x):\n    c_inv = np.linalg.pinv(c)\n"
                "    return sum(np.outer(xi, xi) / np.inner(xi, c_inv.dot(xi)) for xi in x)\n", False,
                note="one pseudo-inverse applied to every item"),
        Example("import numpy as np\ndef residual(a):\n    a_inv = np.linalg.inv(a)\n    return a @ a_inv - np.eye(len(a))\n",
                False, note="checking an inverse"),
        Example("from scipy.linalg import inv\nimport numpy as np\ndef check(a0):\n    a = a0.astype(float).copy(order='F')\n"
                "    a_inv = inv(a)\n    return a_inv @ a0 - np.eye(len(a0))\n", False,
                note="an inverse tested against the matrix it was copied from (field trial)"),
        Example("import numpy as np\ndef f(a0, b):\n    a = np.asarray(a0, dtype=float)\n    b = b.copy()\n"
                "    return np.linalg.inv(a) @ b\n", True, note="copies of different data are still a solve"),
        Example("import numpy as np\ndef f(a0):\n    a = a0.copy()\n    a[0, 0] = 1e-3\n"
                "    return np.linalg.inv(a) @ a0\n", True, note="a copy changed in place holds different data"),
        Example("import numpy as np\ndef robust_cov(h, meat, n):\n    bread = np.linalg.inv(h)\n"
                "    return bread @ meat @ bread / n\n", False,
                note="a sandwich covariance with one inverse on both sides (field trial)"),
        Example("import numpy as np\ndef covs(b, c, scale):\n    bi = np.linalg.inv(b)\n    naive = bi * scale\n"
                "    robust = np.dot(np.dot(bi, np.dot(c, c.T)), bi)\n    return naive, robust\n", False,
                note="a sandwich spelled with nested dot calls (field trial)"),
        Example("import numpy as np\ndef fit(xpx, xpy, xx):\n    xpxi = np.linalg.pinv(xpx)\n"
                "    params = xpxi.dot(xpy)\n    return params, xpxi.dot(xx).dot(xpxi), xpxi\n", False,
                note="a pseudo-inverse kept as a covariance anyway is not formed to apply once (field trial)"),
        Example("import numpy as np\ndef f(h, meat, b):\n    bread = np.linalg.inv(h)\n"
                "    return bread @ meat @ bread @ b\n", True, note="a sandwich applied to a vector is a solve"),
        Example("import numpy as np\ndef f(c, r):\n    ci = np.linalg.inv(c)\n"
                "    return ci @ np.outer(r, r) @ ci\n", True, note="a rank-one middle: (C^-1 r)(C^-1 r)^T, one solve"),
        Example("import numpy as np\ndef f(a, b, c):\n    ap = np.linalg.pinv(a)\n    return ap @ b, ap.T @ c\n",
                True, note="a pseudo-inverse used only in products is still a least-squares solve"),
        Example("import numpy as np\ndef wald(r, c, masked, nan_dot):\n    ci = np.linalg.pinv(c)\n"
                "    if masked:\n        return nan_dot(nan_dot(r.T, ci), r)\n    return np.dot(np.dot(r.T, ci), r)\n",
                True, note="a product helper named for dot multiplies: the inverse is not kept as a value"),
        Example("import numpy as np\nfrom numpy.testing import assert_allclose\ndef penrose(a0):\n    a = a0.copy()\n"
                "    a[0, 0] = 1e-3\n    ap = np.linalg.pinv(a0)\n    adiff = a @ ap @ a - a\n"
                "    assert_allclose(np.linalg.norm(adiff), 5e-4, atol=5e-4)\n", False,
                note="A X A - A, the residual of a Penrose identity, asserted: the pseudo-inverse is under test (field trial)"),
        Example("import numpy as np\ndef gain(k, s, h):\n    return np.eye(len(h.T)) - k @ np.linalg.inv(s) @ h\n", True,
                note="I - A X computed for use (not compared) is a solve, not a check of the inverse"),
        Example("import numpy as np\ndef schur(a, b, c):\n    return c - b.T @ np.linalg.inv(a) @ b\n", True,
                note="a Schur complement compared with another matrix is a solve, not a check of the inverse"),
        Example("from scipy.linalg import inv\nimport numpy as np\nfrom numpy.testing import assert_allclose\n"
                "def check(y, mask):\n    y_inv = inv(y * mask, check_finite=False)\n"
                "    assert_allclose(y_inv @ np.tril(y), np.eye(5), atol=1e-15)\n", False,
                note="a product asserted close to the identity tests the inverse (field trial)"),
        Example("import numpy as np\nfrom numpy.testing import assert_allclose\ndef check(a, b, expected):\n"
                "    assert_allclose(np.linalg.inv(a) @ b, expected)\n", True,
                note="a product asserted close to expected values is a solve under test"),
        Example("import numpy as np\ndef jacobian(d, s, a, sb, sd):\n    dp = np.linalg.pinv(d)\n"
                "    j1 = np.dot(np.dot(dp, np.kron(s, a)), sb)\n    j2 = np.dot(np.dot(dp, np.kron(a, a)), sd)\n"
                "    return j1, j2\n", False,
                note="one pseudo-inverse applied to two right-hand sides: lstsq would redo the SVD (field trial)"),
        Example("import numpy as np\ndef f(d, b, c, flag):\n    dp = np.linalg.pinv(d)\n    if flag:\n"
                "        return dp @ b\n    else:\n        return dp @ c\n", True,
                note="applied on exclusive branches, the pseudo-inverse serves one right-hand side per call"),
        Example("from scipy.linalg import inv\nimport numpy as np\ndef bilinear(a, q):\n    eye = np.eye(a.shape[0])\n"
                "    ah = a.conj().transpose()\n    ahi = inv(ah + eye)\n    b = np.dot(ah - eye, ahi)\n"
                "    c = 2 * np.dot(np.dot(inv(a + eye), q), ahi)\n    return b, c\n", False,
                note="inv(A) Q inv(A^H) spelled with two inverses is one sandwich (field trial)"),
        Example("from scipy.linalg import inv\nimport numpy as np\ndef f(a, b, q):\n    eye = np.eye(a.shape[0])\n"
                "    return np.dot(np.dot(inv(a + eye), q), inv(b + eye))\n", True,
                note="inverses of two different matrices around Q are two solves"),
        Example("import numpy as np\nfrom scipy.linalg import inv, svd\ndef rotate(c):\n"
                "    u, s, wh = svd(c, full_matrices=False)\n    return np.dot(c, inv(wh))\n", False,
                note="Vh of an svd is unitary, condition number 1: its inverse loses nothing (field trial)"),
        Example("from scipy.linalg import eigh, inv\ndef f(a, b, x):\n    w, v = eigh(a, b)\n    return inv(v) @ x\n",
                True, note="eigenvectors of a generalised eigh are B-orthonormal, not unitary"),
        Example("import numpy as np\nclass Loadings:\n    def _corr(self):\n        t = self.rotation\n"
                "        return t.T.dot(t)\n    def score_params(self, L):\n"
                "        return self._corr().dot(np.linalg.pinv(L)).T\n", False,
                note="a square multiplier (a Gram T'T) makes M pinv(L) as large as pinv(L): lstsq saves nothing (field trial)"),
        Example("import numpy as np\nclass Loadings:\n    def _head(self):\n        return self.rotation[:2]\n"
                "    def score_params(self, L):\n        return self._head().dot(np.linalg.pinv(L))\n", True,
                note="a multiplier of unknown shape may have few rows: lstsq avoids forming pinv(L)"),
        Example("import numpy as np\ndef recursive_fit(x, y, k):\n    xtxi = np.linalg.inv(x[:k].T @ x[:k])\n"
                "    beta = xtxi @ (x[:k].T @ y[:k])\n    for i in range(k, len(y)):\n        t = xtxi @ x[i]\n"
                "        f = 1 + x[i] @ t\n        xtxi = xtxi - np.outer(t, t) / f\n"
                "        beta = beta + t * (y[i] - x[i] @ beta) / f\n    return beta\n", False,
                note="the inverse is the state of a Sherman-Morrison recursion, needed as such at every step (field trial)"),
        Example("import numpy as np\ndef f(a, b, c, d):\n    ai = np.linalg.inv(a)\n    x = ai @ b\n"
                "    ai = np.linalg.inv(c)\n    return x, ai @ d\n", True,
                note="a local rebound to another inverse is not an updated one"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        factors = p.product_pair(ctx, node)
        if factors is None:
            return
        for index in (0, 1):
            found = inverted(ctx, factors[index])
            if found is None:
                continue
            kind, call = found
            if unitary_factor(ctx, call.args[0]):
                return  # U or Vh of an svd, Q of a qr: condition number 1, the inverse loses nothing
            if kind == "inv" and p.gram_base(ctx, call.args[0]) is not None:
                return  # inv(A.T @ A) is least squares: the normal-equations rule reports it
            rhs = factors[1 - index]
            if same_matrix(ctx, rhs, call.args[0]):
                return  # A @ inv(A): checking the inverse itself, nothing to solve
            if _variables(ctx, rhs) and _variables(ctx, rhs) == _variables(ctx, call.args[0]):
                return  # inv(A) @ triu(A): a test of the inverse against its own matrix
            if checks_identity(ctx, chain_top(ctx, node)):
                return  # A X - I, A X A - A: a residual of an identity the inverse satisfies, the inverse is under test
            if _sandwich(ctx, node, factors[index]):
                return  # P @ M @ P.T with P an inverse: a congruence whose factors are the goal
            if two_sided(ctx, node, factors[index]):
                return  # A^-1 M A^-1: a sandwich covariance, the inverse is part of the goal
            if updated_state(ctx, factors[index]):
                return  # the inverse is the state of a rank-one update recursion: needed as such at every step
            if kind == "pinv" and square_matrix(ctx, rhs):
                return  # M square: M pinv(A) is as large as pinv(A), lstsq would form the same numbers at the same cost
            if kind == "pinv" and _reused(ctx, node, call):
                return  # pinv(A) applied to every item of a loop: computed once, used many times
            if kind == "pinv" and applied_again(ctx, factors[index], node):
                return  # one pinv(A) applied the same way to several right-hand sides: lstsq would redo the SVD each time
            if kind == "pinv" and kept_as_value(ctx, factors[index], node):
                return  # pinv(A) kept as a value anyway: not formed to apply once, lstsq is a second SVD
            rewrite, imports = solve_text(ctx, kind, call, rhs, left=index == 0)
            yield self._hit(ctx, node, kind, factors[index], rewrite, imports)
            return

    @staticmethod
    def _hit(ctx: Context, node: ast.AST, kind: str, holder: ast.expr, rewrite: str | None,
             imports: tuple[str, ...]) -> Hit:
        fix = rewrite or ("a least-squares solve (lstsq)" if kind == "pinv" else "a linear solve")
        if kind == "pinv":
            return Hit(node, f"multiplying by a pseudo-inverse forms pinv(A) only to apply it once; use {fix}, "
                       "which gives the same minimum-norm solution from one SVD", severity=Severity.NOTE,
                       rewrite=rewrite, imports=imports)
        if kept_as_value(ctx, holder, node):
            return Hit(node, f"the inverse is kept as a value anyway, but its product with a right-hand side is not "
                       f"backward stable and can lose up to log10(cond(A)) digits that {fix} keeps",
                       severity=Severity.NOTE, rewrite=rewrite, imports=imports)
        shared = used_elsewhere(ctx, holder, node)
        return Hit(node, f"applying an explicit inverse loses up to log10(cond(A)) digits beyond a backward-stable "
                   f"solve and costs about 3x the work; use {fix}",
                   severity=Severity.NOTE if shared else None, rewrite=rewrite, imports=imports)
