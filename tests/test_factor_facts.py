"""Static facts about factorisation outputs, square matrices, whole-number uses and module tables, checked
against what numpy, scipy, mpmath and Python itself do with the same code."""
from __future__ import annotations

import ast
import math

import mpmath
import numpy as np
import pytest
import scipy.linalg

from auditor.factor_outputs import eigenvector_source, unitary_factor
from auditor.integer_uses import rounded_to_integer
from auditor.rule import Context
from auditor.square_matrices import square_matrix
from auditor.tripcount import item_bound

_RNG = np.random.default_rng(20240611)
_A = _RNG.standard_normal((5, 5))
_SPD = _A @ _A.T + 5 * np.eye(5)
_B = np.diag(np.arange(1.0, 6.0))  # a second SPD matrix for the generalised problem


def _last_expr(source: str) -> tuple[Context, ast.expr]:
    """Context of `source` and the expression of its last statement (`return <expr>` in the last function)."""
    tree = ast.parse(source)
    ctx = Context(tree, "t.py", source)
    ret = [n for n in ast.walk(tree) if isinstance(n, ast.Return)][-1]
    assert ret.value is not None
    return ctx, ret.value


# each case: the code the scanner sees, and the same factor computed by the library (numpy/scipy reference)
_FACTORS = [
    ("u, s, vh = np.linalg.svd(a)\n    return vh", lambda: np.linalg.svd(_A)[2], True),
    ("u, s, vh = np.linalg.svd(a, full_matrices=False)\n    return u.T", lambda: np.linalg.svd(_A)[0].T, True),
    ("q, r = np.linalg.qr(a)\n    return q", lambda: np.linalg.qr(_A)[0], True),
    ("return np.linalg.eigh(c)[1]", lambda: np.linalg.eigh(_SPD)[1], True),
    ("res = np.linalg.eigh(c)\n    return res.eigenvectors", lambda: np.linalg.eigh(_SPD).eigenvectors, True),
    ("t, z = scipy.linalg.schur(a)\n    return z", lambda: scipy.linalg.schur(_A)[1], True),
    ("w, v = scipy.linalg.eigh(c, b)\n    return v", lambda: scipy.linalg.eigh(_SPD, _B)[1], False),
    ("w, v = np.linalg.eig(a)\n    return v", lambda: np.linalg.eig(_A)[1], False),
    ("q, r = np.linalg.qr(a)\n    return r", lambda: np.linalg.qr(_A)[1], False),
]


@pytest.mark.parametrize(("body", "compute", "claimed"), _FACTORS)
def test_unitary_claims_match_the_library(body, compute, claimed):
    src = f"import numpy as np\nimport scipy.linalg\ndef f(a, b, c):\n    {body}\n"
    ctx, expr = _last_expr(src)
    assert unitary_factor(ctx, expr) is claimed
    m = compute()
    is_unitary = np.allclose(m.conj().T @ m, np.eye(m.shape[1]), atol=1e-12)
    # reference: numpy/scipy documentation of svd, qr, eigh, schur (U, Vh, Q, Z unitary; eig's vectors only unit)
    assert is_unitary or not claimed
    if claimed:
        assert np.linalg.cond(m) == pytest.approx(1.0, abs=1e-12)


def test_eigenvector_rows_and_normalised_columns_are_vectors():
    src = ("import numpy as np\ndef f(c):\n    v, w = np.linalg.eigh(c)\n    u = w[:, 0] / np.linalg.norm(w[:, 0])\n"
           "    return u, v\n")
    ctx, expr = _last_expr(src)
    assert isinstance(expr, ast.Tuple)
    assert eigenvector_source(ctx, expr.elts[0]) is not None
    assert eigenvector_source(ctx, expr.elts[1]) is None  # eigenvalues are not an axis
    # reference: an eigenvector and its negative both satisfy A v = lambda v (numpy.linalg.eigh, common practice)
    w, v = np.linalg.eigh(_SPD)
    assert np.allclose(_SPD @ -v[:, 0], w[0] * -v[:, 0])


_T = _RNG.standard_normal((4, 3))
_SQUARES = [
    ("t.T.dot(t)", lambda: _T.T.dot(_T), True), ("t @ t.T", lambda: _T @ _T.T, True),
    ("np.eye(k)", lambda: np.eye(4), True), ("np.linalg.inv(t)", lambda: np.linalg.inv(_A), True),
    ("np.cov(t)", lambda: np.cov(_T), True), ("np.eye(k, 3)", lambda: np.eye(4, 3), False),
    ("t[:2]", lambda: _T[:2], False), ("t @ s", lambda: _T @ _T[:3, :2], False),
]


@pytest.mark.parametrize(("value", "compute", "square"), _SQUARES)
def test_square_claims_match_numpy_shapes(value, compute, square):
    ctx, expr = _last_expr(f"import numpy as np\ndef f(t, s, k):\n    m = {value}\n    return m\n")
    assert square_matrix(ctx, expr) is square
    shape = compute().shape  # reference: numpy's own result shapes for the same operations
    assert (shape[0] == shape[1]) is square


def test_the_textbook_root_of_a_count_stays_within_one_unit():
    # absolute error of (-b + sqrt(b*b + 4m)) / 2 against 50-digit mpmath, for b up to 1e12: the count int(r)
    # can differ from the exact one only where r lies within eps*b of a whole number
    for b, m in ((1e6, 3e9), (3.7e9, 1.1e13), (1e12, 7.5e15)):
        r = (-b + math.sqrt(b * b + 4 * m)) / 2
        with mpmath.workdps(50):
            exact = (-mpmath.mpf(b) + mpmath.sqrt(mpmath.mpf(b) ** 2 + 4 * mpmath.mpf(m))) / 2
            assert abs(mpmath.mpf(r) - exact) < 4 * 2.0**-52 * b
        assert abs(r - float(exact)) < 1e-3


def test_whole_number_uses():
    base = "import math\ndef f(b, m, other):\n    r = (-b + math.sqrt(b * b + 4 * m)) / 2\n"
    for tail, expected in (("    r = max(int(r), 1)\n    return r\n", True), ("    return math.ceil(r)\n", True),
                           ("    return int(r), r / b\n", False), ("    return round(r, 2)\n", False)):
        src = base + tail
        tree = ast.parse(src)
        ctx = Context(tree, "t.py", src)
        root = next(n for n in ast.walk(tree) if isinstance(n, ast.BinOp) and isinstance(n.op, ast.Div))
        assert rounded_to_integer(ctx, root) is expected, tail


def test_module_table_bound_is_its_length_unless_changed():
    table = "[[0.2955242247147529, -0.1488743389816312], [0.2955242247147529, 0.1488743389816312]]"
    loop = "class C:\n    def f(self, x):\n        for w in T:\n            x += w[0]\n        return x\n"
    for head, expected in ((f"T = {table}\n", 2), (f"import numpy as np\nT = np.array({table})\n", 2),
                           (f"T = {table}\ndef g():\n    T.append([1.0, 0.0])\n", None),
                           (f"T = {table}\ndef g():\n    global T\n    T = []\n", None)):
        src = head + loop
        tree = ast.parse(src)
        ctx = Context(tree, "t.py", src)
        it = next(n for n in ast.walk(tree) if isinstance(n, ast.For)).iter
        assert item_bound(ctx, it) == expected, head
