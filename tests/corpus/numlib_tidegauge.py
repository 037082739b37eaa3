"""Harmonic fitting for the invented Saltmarsh Point tide-gauge station (corpus: linear-algebra rules)."""
import numpy as np
import numpy.linalg as la
import scipy.linalg as sla
from numpy.linalg import det, inv


def solve_constituents(A, h):
    return np.linalg.inv(A) @ h  # expect: explicit-inverse


def solve_constituents_dot(A, h):
    return np.dot(inv(A), h)  # expect: explicit-inverse


def solve_constituents_method(A, h):
    return la.inv(A).dot(h)  # expect: explicit-inverse


def solve_locals(K, r):
    Kinv = sla.inv(K)
    x = Kinv @ r  # expect: explicit-inverse
    return x


def pseudo_solve(A, h):
    return np.linalg.pinv(A) @ h  # expect: explicit-inverse


def row_solve(A, w):
    return w @ inv(A)  # expect: explicit-inverse


def matmul_solve(M, v):
    return np.matmul(la.inv(M), v)  # expect: explicit-inverse


def covariance_of_fit(H):
    cov = np.linalg.inv(H)  # ok: explicit-inverse
    return cov


def stable_solve(A, h):
    return np.linalg.solve(A, h)  # ok: explicit-inverse


def apply_gain(G, h):
    return G @ h  # ok: explicit-inverse


def fit_normal(X, h):
    return np.linalg.solve(X.T @ X, X.T @ h)  # expect: normal-equations


def fit_inverse_chain(X, h):
    return inv(X.T.dot(X)).dot(X.T).dot(h)  # expect: normal-equations


def fit_locals(X, h):
    G = X.T @ X
    rhs = X.T @ h
    return sla.solve(G, rhs)  # expect: normal-equations


def fit_dot(X, h):
    gram = np.dot(X.T, X)
    return la.solve(gram, np.dot(X.T, h))  # expect: normal-equations


def fit_transpose(X, h):
    Xt = np.transpose(X)
    return np.linalg.inv(Xt @ X) @ (Xt @ h)  # expect: normal-equations


def fit_lstsq(X, h):
    return np.linalg.lstsq(X, h, rcond=None)[0]  # ok: normal-equations


def fit_qr(X, h):
    Q, R = np.linalg.qr(X)
    return sla.solve_triangular(R, Q.T @ h)  # ok: normal-equations


def kernel_trace(X):
    K = X.T @ X  # ok: normal-equations
    return np.trace(K)


def ridge_fit(X, h, lam):
    n = X.shape[1]
    return np.linalg.solve(X.T @ X + lam * np.eye(n), X.T @ h)  # ok: normal-equations


def check_design(A):
    if np.linalg.det(A) == 0:  # expect: determinant-singularity-test
        raise ValueError("design matrix is singular")
    return A


def nearly_singular(A):
    return abs(det(A)) < 1e-12  # expect: determinant-singularity-test


def invertible(M):
    if la.det(M):  # expect: determinant-singularity-test
        return True
    return False


def degenerate(M):
    d = sla.det(M)
    return np.isclose(d, 0.0)  # expect: determinant-singularity-test


def usable(M, tol=1e-10):
    return np.abs(np.linalg.det(M)) > tol  # expect: determinant-singularity-test


def not_invertible(M):
    return not det(M)  # expect: determinant-singularity-test


def cell_volume(J):
    return abs(np.linalg.det(J))  # ok: determinant-singularity-test


def orientation(J):
    return np.linalg.det(J) > 0  # ok: determinant-singularity-test


def log_volume(A):
    sign, logdet = np.linalg.slogdet(A)
    return sign == 0  # ok: determinant-singularity-test


def rank_deficient(A):
    return np.linalg.matrix_rank(A) < A.shape[1]  # ok: determinant-singularity-test


def badly_conditioned(A):
    return np.linalg.cond(A) > 1.0 / np.finfo(float).eps  # ok: determinant-singularity-test
