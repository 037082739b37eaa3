"""Small dense linear algebra for the shadow evaluator: numpy.linalg on the float side, mpmath
(lu_solve, inverse, det, qr_solve, svd_r) on the reference side, where arrays are numpy object
arrays of mpf. Also the matrix condition number kappa(A) used for units with matrix inputs.

Matrices stay small (MAX_SIDE): every reference operation runs in mpmath at the working precision.
"""
from __future__ import annotations

from collections.abc import Callable
from typing import Any

import mpmath
import numpy as np

from auditor.numerics.budget import BudgetExceeded

#: Largest matrix side the reference factors (8x8: a few milliseconds per operation in mpmath).
MAX_SIDE = 8
#: Precision of the singular values behind kappa(A): 38 digits resolve sigma_min down to
#: kappa = 1e30, far beyond the sampled 1e10; kappa is reported to two decimals of its log10.
KAPPA_BITS = 128


def _to_matrix(a: Any) -> Any:
    arr = np.asarray(a, dtype=object)
    if arr.ndim not in (1, 2) or max(arr.shape, default=0) > MAX_SIDE * 8 or (arr.ndim == 2 and min(arr.shape) > MAX_SIDE):
        raise BudgetExceeded(f"matrix of shape {arr.shape} is too large for the reference (at most {MAX_SIDE} a side)")
    return mpmath.matrix(arr.tolist())


def _to_array(m: Any, vector: bool) -> Any:
    rows = m.tolist()
    if vector:
        return np.array([r[0] for r in rows], dtype=object)
    return np.array(rows, dtype=object)


def _columns(b: Any) -> list[Any]:
    arr = np.asarray(b, dtype=object)
    return [arr] if arr.ndim == 1 else [arr[:, j] for j in range(arr.shape[1])]


def _stack(cols: list[Any], vector: bool) -> Any:
    return cols[0] if vector else np.array(cols, dtype=object).T


def ref_inv(a: Any) -> Any:
    return _to_array(mpmath.inverse(_to_matrix(a)), vector=False)


def ref_solve(a: Any, b: Any, *_: Any, **__: Any) -> Any:
    """x with A x = b by LU with partial pivoting in mpmath, column by column for a matrix b."""
    m = _to_matrix(a)
    vector = np.asarray(b, dtype=object).ndim == 1
    return _stack([_to_array(mpmath.lu_solve(m, _to_matrix(c)), vector=True) for c in _columns(b)], vector)


def ref_det(a: Any) -> Any:
    return mpmath.det(_to_matrix(a))


def ref_lstsq(a: Any, b: Any, *_: Any, **__: Any) -> tuple[Any, Any, int, Any]:
    """numpy.linalg.lstsq's (x, residuals, rank, singular values), x by Householder QR (mpmath.qr_solve)."""
    m = _to_matrix(a)
    vector = np.asarray(b, dtype=object).ndim == 1
    cols, res = [], []
    for c in _columns(b):
        x, r = mpmath.qr_solve(m, _to_matrix(c))
        cols.append(_to_array(x, vector=True))
        res.append(r * r)
    rows, n = m.rows, m.cols
    residuals = np.array(res if rows > n else [], dtype=object)  # numpy: empty unless overdetermined
    return _stack(cols, vector), residuals, n, _singular_values(m)


def _singular_values(m: Any) -> Any:
    return np.array(list(mpmath.svd_r(m, compute_uv=False)), dtype=object)


def ref_pinv(a: Any, *_: Any, **__: Any) -> Any:
    """(A^T A)^-1 A^T for a full-column-rank A (at the working precision the squaring is harmless)."""
    m = _to_matrix(a)
    return _to_array(mpmath.inverse(m.T * m) * m.T, vector=False)


def ref_norm(x: Any, ord: Any = None, *_: Any, **__: Any) -> Any:
    if ord is not None:
        raise TypeError("only the default norm is evaluated")
    return mpmath.sqrt(mpmath.fsum(v * v for v in np.ravel(np.asarray(x, dtype=object))))


def ref_cond(a: Any, p: Any = None) -> Any:
    if p is not None:
        raise TypeError("only the 2-norm condition number is evaluated")
    s = _singular_values(_to_matrix(a))
    return max(s) / min(s)


def ref_eye(n: Any, *_: Any, dtype: Any = None, **__: Any) -> Any:
    if int(n) > MAX_SIDE * 8:
        raise BudgetExceeded("identity matrix too large")
    return np.array([[mpmath.mpf(int(i == j)) for j in range(int(n))] for i in range(int(n))], dtype=object)


def ref_trace(a: Any) -> Any:
    return mpmath.fsum(np.diagonal(np.asarray(a, dtype=object)))


def kappa_log10(matrices: list[Any]) -> float | None:
    """log10 of the largest 2-norm condition number sigma_max / sigma_min (mpmath.svd_r) among
    the matrices given as nested tuples of floats (exact binary values); None if one is singular."""
    worst = None
    with mpmath.workprec(KAPPA_BITS):
        for a in matrices:
            s = list(mpmath.svd_r(mpmath.matrix([list(r) for r in a]), compute_uv=False))
            if min(s) == 0:
                return None
            value = float(mpmath.log10(max(s) / min(s)))
            worst = value if worst is None else max(worst, value)
    return worst


def pairs() -> dict[str, tuple[Callable[..., Any], Callable[..., Any]]]:
    """(float, reference) pairs for the allow-list."""
    table: dict[str, tuple[Callable[..., Any], Callable[..., Any]]] = {}
    for module in ("numpy.linalg", "scipy.linalg"):
        table.update({
            f"{module}.inv": (_float(module, "inv"), ref_inv), f"{module}.solve": (_float(module, "solve"), ref_solve),
            f"{module}.det": (_float(module, "det"), ref_det), f"{module}.lstsq": (_float(module, "lstsq"), ref_lstsq),
            f"{module}.pinv": (_float(module, "pinv"), ref_pinv), f"{module}.norm": (_float(module, "norm"), ref_norm),
        })
    table["numpy.linalg.cond"] = (np.linalg.cond, ref_cond)
    table["numpy.eye"] = (_sized_eye, ref_eye)
    table["numpy.identity"] = (_sized_eye, ref_eye)
    table["numpy.trace"] = (np.trace, ref_trace)
    table["numpy.matmul"] = (np.matmul, np.matmul)
    table["numpy.transpose"] = (np.transpose, np.transpose)
    table["numpy.outer"] = (np.outer, np.outer)
    return table


def _sized_eye(n: Any, *args: Any, **kwargs: Any) -> Any:
    if int(n) > MAX_SIDE * 8:
        raise BudgetExceeded("identity matrix too large")
    return np.eye(n, *args, **kwargs)


def _float(module: str, name: str) -> Callable[..., Any]:
    """The real library function, checked for size first (scipy imported only when used)."""

    def call(a: Any, *args: Any, **kwargs: Any) -> Any:
        arr = np.asarray(a)
        if arr.ndim == 2 and min(arr.shape) > MAX_SIDE:
            raise BudgetExceeded(f"matrix of shape {arr.shape} is too large to evaluate here")
        if module == "scipy.linalg":
            import scipy.linalg as sla

            return getattr(sla, name)(a, *args, **kwargs)
        return getattr(np.linalg, name)(a, *args, **kwargs)

    return call
