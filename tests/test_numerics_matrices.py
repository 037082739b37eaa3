"""Matrices and array methods in the dynamic pass, checked against numpy.linalg, mpmath and
textbook facts of numerical linear algebra (sources named beside each check)."""
from __future__ import annotations

import ast
import math

import mpmath
import numpy as np
import pytest

from auditor.model import Verdict
from auditor.numerics.matrices import conditioned_matrix, matrix_roles
from auditor.numerics.run import measure_points
from auditor.numerics.unit import Unit, compile_shadow
from auditor.probe import parse_expression, prelude_module, run_probe
from tests.numerics_helpers import measure_code

HILBERT5 = tuple(tuple(1.0 / (i + j + 1) for j in range(5)) for i in range(5))


def _measure(text: str, points: list[dict]):
    names = sorted(points[0])
    shadow = compile_shadow(Unit(parse_expression(text), names, None), prelude_module())
    samples, _, note = measure_points(shadow, points)
    return samples, note


def _normwise_loss(x_float: np.ndarray, x_exact) -> float:
    """CONTRACT.md's formula with 2-norms, computed here from scratch at 50 digits."""
    with mpmath.workdps(50):
        err = mpmath.sqrt(mpmath.fsum((mpmath.mpf(float(a)) - b) ** 2 for a, b in zip(x_float, x_exact)))
        ref = mpmath.sqrt(mpmath.fsum(b ** 2 for b in x_exact))
        return max(0.0, 15.95 + float(mpmath.log10(err / ref)))


def test_solve_with_the_hilbert_matrix_against_mpmath_lu_solve():
    # kappa_2(H_5) = 4.766e5 (Hilbert matrix tables, e.g. Higham, Accuracy and Stability of Numerical
    # Algorithms, chapter 28, from memory); numpy.linalg.cond and mpmath.svd_r give it here too.
    b = (1.0, 1.0, 1.0, 1.0, 1.0)
    (sample,), note = _measure("np.linalg.solve(A, b)", [{"A": HILBERT5, "b": b}])
    assert 10 ** sample.condition_log10 == pytest.approx(4.766e5, rel=1e-3)
    assert sample.condition_log10 == pytest.approx(math.log10(np.linalg.cond(np.array(HILBERT5))), abs=1e-6)
    with mpmath.workdps(50):
        exact = mpmath.lu_solve(mpmath.matrix([list(r) for r in HILBERT5]), mpmath.matrix(list(b)))
        assert all(abs(r - e) < mpmath.mpf(10) ** -25 * abs(e) for r, e in zip(sample.whole, exact))
    x = np.linalg.solve(np.array(HILBERT5), np.array(b))  # numpy's own answer is the float run's
    assert sample.float_value == x[sample.component]
    assert sample.digits_lost == pytest.approx(_normwise_loss(x, list(exact)), abs=0.02)
    assert "norm-wise" in note and "kappa(A)" in note


def test_hilbert_determinant_is_the_tabulated_value():
    # det(H_4) = 1/6048000 (Hilbert matrix determinant tables, from memory); mpmath.det agrees.
    h4 = tuple(tuple(1.0 / (i + j + 1) for j in range(4)) for i in range(4))
    (sample,), _ = _measure("np.linalg.det(A)", [{"A": h4}])
    # The float entries 1/3, 1/5, ... are rounded, so the exact determinant of the stored matrix
    # differs from 1/6048000 by about kappa * 2^-53 relative (kappa_2(H_4) = 1.55e4).
    assert float(sample.reference) == pytest.approx(1 / 6048000, rel=1e-10)
    with mpmath.workdps(50):
        assert abs(sample.reference - mpmath.det(mpmath.matrix([list(r) for r in h4]))) < mpmath.mpf(10) ** -40
    assert sample.float_value == np.linalg.det(np.array(h4))


def _consistent_least_squares(cond: float, seed: int) -> dict:
    rng = np.random.default_rng(seed)
    a = conditioned_matrix(rng, 10, 5, cond)
    y = a @ rng.standard_normal(5)
    return {"X": tuple(map(tuple, a.tolist())), "y": tuple(y.tolist())}


def test_normal_equations_square_the_condition_number():
    # Golub & Van Loan, Matrix Computations, section 5.3 (from memory): for a small-residual least
    # squares problem the normal equations lose about 2 log10 kappa(A) digits, Householder QR or
    # the SVD about log10 kappa(A). Reference solution: mpmath.qr_solve at 50 digits.
    point = _consistent_least_squares(1e6, 3)
    (normal,), _ = _measure("np.linalg.solve(X.T @ X, X.T @ y)", [point])
    (orthogonal,), _ = _measure("np.linalg.lstsq(X, y, rcond=None)[0]", [point])
    assert normal.condition_log10 == pytest.approx(6.0, abs=0.05)
    assert 10.0 <= normal.digits_lost <= 13.5
    assert orthogonal.digits_lost <= 7.5 and normal.digits_lost - orthogonal.digits_lost >= 4.0
    with mpmath.workdps(50):
        exact, _ = mpmath.qr_solve(mpmath.matrix([list(r) for r in point["X"]]), mpmath.matrix(list(point["y"])))
        assert all(abs(r - e) < mpmath.mpf(10) ** -25 * abs(e) for r, e in zip(normal.whole, exact))
    x = np.linalg.solve(np.array(point["X"]).T @ np.array(point["X"]), np.array(point["X"]).T @ np.array(point["y"]))
    # OpenBLAS may pick another kernel (memory alignment) for X.T @ X from one call to the next;
    # kappa(X)^2 = 1e12 amplifies that last-bit difference, so the two runs agree to a few tenths.
    assert normal.digits_lost == pytest.approx(_normwise_loss(x, list(exact)), abs=0.3)


def test_normal_equations_probe_is_unstable_and_lstsq_is_verified():
    got = run_probe("np.linalg.solve(X.T @ X, X.T @ y)", [], [], 32, 0)
    assert got.measurement.verdict is Verdict.UNSTABLE
    assert got.rewrite is not None and got.rewrite["text"] == "np.linalg.lstsq(X, y, rcond=None)[0]"
    assert got.rewrite["verified"]
    assert "10x5 matrices" in got.measurement.reason and "consistent least-squares system" in got.measurement.reason


def test_explicit_inverse_and_solve_both_track_the_condition_number():
    # Higham, chapter 14 (from memory): x = inv(A) b is not backward stable, LU with partial
    # pivoting is; yet both have forward errors of order kappa(A) u, so neither loses much more
    # than log10 kappa(A) digits: the finding is ill-conditioned, and solve is a verified rewrite.
    code = "import numpy as np\n\ndef stage_rise(G, p):\n    return np.linalg.inv(G) @ p\n"
    got = measure_code(code, "explicit-inverse", ast.BinOp, replacement="np.linalg.solve(G, p)", samples=32)
    m = got.measurement
    assert m.verdict is Verdict.ILL_CONDITIONED
    assert all(s.digits_lost <= s.condition_log10 + 1.5 for s in got.samples if s.digits_lost is not None)
    assert got.verified and got.after is not None
    for before, after in zip(got.samples, got.after_samples):  # the float runs are numpy's own results
        a, b = np.array(before.inputs["G"]), np.array(before.inputs["p"])
        assert before.float_value == (np.linalg.inv(a) @ b)[before.component]
        assert after.float_value == np.linalg.solve(a, b)[after.component]
    assert got.after.condition_log10_max == m.condition_log10_max  # kappa(G) of the same matrices


def test_sampled_matrices_have_the_condition_numbers_asked_for():
    # kappa_2(U diag(s) V^T) = s_max / s_min for orthogonal U, V (SVD, common practice).
    rng = np.random.default_rng(0)
    for cond in (1.0, 1e3, 1e8):
        assert np.linalg.cond(conditioned_matrix(rng, 5, 5, cond)) == pytest.approx(cond, rel=1e-6)


@pytest.mark.parametrize(("text", "names", "square", "tall", "vectors"), [
    ("np.linalg.inv(A) @ b", ["A", "b"], {"A"}, set(), {"b"}),
    ("inv(X.T.dot(X)).dot(X.T).dot(y)", ["X", "y"], set(), {"X"}, {"y"}),
    ("P @ H.T @ np.linalg.inv(S)", ["P", "H", "S"], {"P", "H", "S"}, set(), set()),
    ("np.dot(w, x) - c", ["w", "x", "c"], set(), set(), set()),  # a dot product of vectors stays 1-D
    ("np.linalg.inv(np.transpose(X) @ X) @ (np.transpose(X) @ h)", ["X", "h"], set(), {"X"}, {"h"}),
])
def test_matrix_roles(text, names, square, tall, vectors):
    roles = matrix_roles([ast.parse(text, mode="eval")], names)
    assert (set(roles.square), set(roles.tall), set(roles.vectors)) == (square, tall, vectors)


def test_array_methods_mean_and_sum():
    # Naive variance E[x^2] - E[x]^2 of data offset by 1e4 cancels (common practice; reference:
    # mpmath two-pass variance); log of a sum of exponentials overflows without the max shift.
    code = "import numpy as np\n# auditor: domain x=9999..10001\ndef spread(x):\n    return np.mean(x**2) - x.mean() ** 2\n"
    got = measure_code(code, "naive-variance", ast.BinOp, replacement="np.var(x)", samples=16)
    assert got.measurement.verdict is Verdict.UNSTABLE and got.verified
    worst = max(got.samples, key=lambda s: s.digits_lost)
    with mpmath.workdps(60):
        xs = [mpmath.mpf(v) for v in worst.inputs["x"]]
        mean = mpmath.fsum(xs) / len(xs)
        exact = mpmath.fsum((v - mean) ** 2 for v in xs) / len(xs)
        assert abs(worst.reference - exact) < mpmath.mpf(10) ** -30 * exact
    lse = run_probe("np.log(np.exp(v).sum())", ["v=700..800"], [], 8, 0)
    assert lse.measurement.verdict is Verdict.UNSTABLE
    assert lse.rewrite is not None and lse.rewrite["verified"]


def test_determinant_test_keeps_its_severity_when_rounding_does_not_flip_it(tmp_path):
    # det(A) < 1e-12 answers the same in float64 and exactly on these matrices (mpmath.det), yet
    # it is no test of singularity (det(0.1 I_30) = 1e-30, common practice): the warning stays.
    from auditor.config import Config
    from auditor.measure import measure_paths
    from auditor.model import Severity

    (tmp_path / "check.py").write_text(
        "import numpy as np\n\ndef degenerate(A):\n    return abs(np.linalg.det(A)) < 1e-12\n", encoding="utf-8")
    report = measure_paths([str(tmp_path / "check.py")], Config(samples=16))
    (finding,) = [f for f in report.findings if f.rule == "determinant-singularity-test"]
    assert finding.measurement.verdict is Verdict.BENIGN and finding.measurement.samples == 16
    assert finding.severity is Severity.WARNING
    assert "true/false result" in finding.measurement.reason
