"""Matrix and vector inputs: which of a unit's names are matrices (from how the code uses them)
and random matrices with a controlled condition number to measure them on."""
from __future__ import annotations

import ast
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

#: Side of a square matrix input; a tall one (least squares) is TALL_ROWS x SIDE.
SIDE = 5
TALL_ROWS = 10
#: Condition numbers are drawn log-uniformly in 1..MAX_COND.
MAX_COND = 1e10
#: Functions whose first argument is a matrix; of these, the second argument of SOLVERS is a
#: right-hand side, and the first argument of LEAST_SQUARES may be tall.
_MATRIX_FIRST = {"inv", "pinv", "det", "solve", "lstsq", "cond", "slogdet", "matrix_rank", "qr", "eig", "eigh",
                 "eigvals", "eigvalsh", "cholesky", "lu_factor", "svd", "trace"}
_SOLVERS = {"solve", "lstsq"}
_LEAST_SQUARES = {"lstsq", "pinv"}


@dataclass(frozen=True, slots=True)
class Roles:
    """How a unit uses its names as linear-algebra operands."""

    square: frozenset[str]  #: square matrices
    tall: frozenset[str]  #: tall matrices (A.T @ A, lstsq(A, .))
    vectors: frozenset[str]  #: right-hand sides and vectors multiplied by a matrix
    consistent: dict[str, str]  #: vector -> the tall matrix it is a right-hand side of (A.T @ y, lstsq(A, y))

    @property
    def matrices(self) -> frozenset[str]:
        return self.square | self.tall

    def __bool__(self) -> bool:
        return bool(self.square or self.tall)


def _callee(node: ast.Call) -> str:
    return node.func.id if isinstance(node.func, ast.Name) else getattr(node.func, "attr", "")


def _name(node: ast.AST) -> str | None:
    return node.id if isinstance(node, ast.Name) else None


def _transposed(node: ast.AST) -> str | None:
    """A in `A.T` or `np.transpose(A)`."""
    if isinstance(node, ast.Attribute) and node.attr == "T":
        return _name(node.value)
    if isinstance(node, ast.Call) and _callee(node) == "transpose" and len(node.args) == 1:
        return _name(node.args[0])
    return None


def _products(root: ast.AST) -> list[tuple[ast.expr, ast.expr]]:
    """(left, right) of `a @ b`, `np.dot(a, b)`, `a.dot(b)`."""
    out = []
    for node in ast.walk(root):
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.MatMult):
            out.append((node.left, node.right))
        elif isinstance(node, ast.Call) and _callee(node) in ("dot", "matmul"):
            if len(node.args) == 2:  # np.dot(a, b)
                out.append((node.args[0], node.args[1]))
            elif len(node.args) == 1 and isinstance(node.func, ast.Attribute):  # a.dot(b)
                out.append((node.func.value, node.args[0]))
    return out


def _linear_algebra(root: ast.AST) -> bool:
    """`@`, `.T` or a linear-algebra call: evidence of matrices."""
    for node in ast.walk(root):
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.MatMult):
            return True
        if _transposed(node) is not None:
            return True
        if isinstance(node, ast.Call) and _callee(node) in _MATRIX_FIRST - {"trace"}:
            return True
    return False


def matrix_roles(roots: Sequence[ast.AST | None], names: Sequence[str]) -> Roles:
    """Matrices, tall matrices and vectors among `names`, from the unit's linear algebra."""
    wanted = set(names)
    square: set[str | None] = set()
    tall: set[str | None] = set()
    vectors: set[str | None] = set()
    consistent: dict[str | None, str | None] = {}
    if not any(_linear_algebra(r) for r in roots if r is not None):
        return Roles(frozenset(), frozenset(), frozenset(), {})  # np.dot alone may be a dot product of vectors
    for root in (r for r in roots if r is not None):
        for node in ast.walk(root):
            if isinstance(node, ast.Call) and _callee(node) in _MATRIX_FIRST and node.args:
                first = _name(node.args[0])
                (tall if _callee(node) in _LEAST_SQUARES else square).add(first)
                if _callee(node) in _SOLVERS and len(node.args) > 1 and _name(node.args[1]):
                    vectors.add(_name(node.args[1]))
                    if _callee(node) == "lstsq" and first:
                        consistent[_name(node.args[1])] = first
            square.add(_transposed(node))
        for left, right in _products(root):
            base = _transposed(left)
            if base is not None and (_name(right) == base or _transposed(right) == base):
                tall.add(base)  # a Gram matrix A.T @ A: least squares
            elif base is not None and _name(right):
                consistent.setdefault(_name(right), base)
            square.add(_name(left))
            vectors.add(_name(right))
    tall_ = {n for n in tall if n in wanted}
    square_ = {n for n in square if n in wanted} - tall_
    vectors_ = {n for n in vectors if n in wanted} - square_ - tall_
    pairs = {v: a for v, a in consistent.items() if v in vectors_ and a in tall_ and v and a}
    if len(tall_) == 1 and not square_:  # one least-squares problem: its right-hand sides
        pairs = {v: next(iter(tall_)) for v in vectors_}
    return Roles(frozenset(square_), frozenset(tall_), frozenset(vectors_), pairs)


def _orthogonal(rng: np.random.Generator, n: int, k: int) -> np.ndarray:
    """An n x k matrix with orthonormal columns (QR of a Gaussian matrix, signs fixed)."""
    q, r = np.linalg.qr(rng.standard_normal((n, k)))
    out: np.ndarray = q * np.sign(np.diag(r))
    return out


def conditioned_matrix(rng: np.random.Generator, rows: int, cols: int, cond: float) -> np.ndarray:
    """U diag(s) V^T with s log-spaced from 1 down to 1/cond: 2-norm condition number about cond."""
    s = np.logspace(0.0, -math.log10(cond), cols)
    out: np.ndarray = (_orthogonal(rng, rows, cols) * s) @ _orthogonal(rng, cols, cols).T
    return out


def _nested(a: np.ndarray) -> tuple[Any, ...]:
    return tuple(tuple(float(v) for v in row) for row in a) if a.ndim == 2 else tuple(float(v) for v in a)


def with_matrices(points: list[dict[str, Any]], roles: Roles, seed: int) -> list[dict[str, Any]]:
    """Each matrix name gets a random matrix of controlled condition number, each vector
    standard normal values, a consistent right-hand side y = A x0 (random x0)."""
    rng = np.random.default_rng(seed + 104729)
    out = []
    for point in points:
        new, made = dict(point), {}
        for name in sorted(roles.matrices):
            rows = TALL_ROWS if name in roles.tall else SIDE
            made[name] = conditioned_matrix(rng, rows, SIDE, 10 ** rng.uniform(0, math.log10(MAX_COND)))
            new[name] = _nested(made[name])
        for name in sorted(roles.vectors):
            tall = roles.consistent.get(name)
            rows = TALL_ROWS if tall is not None or (roles.tall and not roles.square) else SIDE
            vector = made[tall] @ rng.standard_normal(SIDE) if tall is not None else rng.standard_normal(rows)
            new[name] = _nested(vector)
        out.append(new)
    return out


def describe_roles(roles: Roles) -> str:
    """The assumed matrix inputs, in words (for the measurement's reason)."""
    parts = []
    if roles.square:
        parts.append(f"{', '.join(sorted(roles.square))}: {SIDE}x{SIDE} matrices")
    if roles.tall:
        parts.append(f"{', '.join(sorted(roles.tall))}: {TALL_ROWS}x{SIDE} matrices")
    text = "; ".join(parts) + (f" U diag(s) V^T (U, V random orthogonal, singular values log-spaced from 1 down to "
                               f"1/cond, cond log-uniform in 1..{MAX_COND:.0e}), assumed")
    plain = sorted(roles.vectors - set(roles.consistent))
    if plain:
        text += f"; {', '.join(plain)}: vectors of standard normal values, assumed"
    if roles.consistent:
        text += "; " + ", ".join(f"{v} = {a} x0" for v, a in sorted(roles.consistent.items())) + \
            " for a standard normal x0 (a consistent least-squares system), assumed"
    return text
