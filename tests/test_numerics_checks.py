"""Check values of the dynamic pass against outside references (each source named beside it)."""
from __future__ import annotations

import ast
import math

import mpmath
import pytest

from auditor.model import Verdict
from auditor.numerics.metrics import digits_lost
from auditor.probe import run_probe
from tests.numerics_helpers import measure_code

TAYLOR = """
# auditor: domain x=10..10
def exp_neg(x, n=60):
    s = 0.0
    t = 1.0
    for k in range(1, n):
        s += t
        t *= -x / k
    return s
"""

STIELTJES = """
# auditor: domain lam={lam}..{lam}
def stieltjes(lam, n_terms=40):
    total = 0.0
    term = 1.0 / lam
    for n in range(n_terms):
        total += term
        term *= -(n + 1) / lam
    return total
"""


def independent_loss(float_value: float, exact: mpmath.mpf) -> float:
    """CONTRACT.md formula computed here from scratch: max(0, 15.95 + log10(|f - r| / |r|))."""
    with mpmath.workdps(50):
        rel = abs(mpmath.mpf(float_value) - exact) / abs(exact)
        return 0.0 if rel == 0 else max(0.0, 15.95 + float(mpmath.log10(rel)))


def test_taylor_series_of_exp_minus_x_at_10_loses_7_to_9_digits():
    # Common practice (summing e^-x from its Taylor series at x = 10); reference mpmath.exp(-10).
    got = measure_code(TAYLOR, "alternating-series", ast.For)
    m = got.measurement
    assert m.verdict is Verdict.UNSTABLE
    assert 7.0 <= (m.digits_lost_max or 0) <= 9.0
    with mpmath.workdps(40):
        assert abs(mpmath.mpf(m.reference_value) - mpmath.exp(-10)) < mpmath.mpf(10) ** -19  # 60 terms: truncation ~1e-21
    assert m.series is not None and m.series.terms == 59 and not m.series.divergent


def test_taylor_series_partial_sums_peak_near_1400_at_the_tenth_term():
    # Common practice: partial sums of sum (-10)^k/k! swing to about 1.4e3 around k = 9 (the tenth term).
    from auditor.numerics.trace import partial_sums
    from auditor.numerics.unit import Unit, compile_shadow, source_module
    from auditor.numerics.run import trace_terms

    tree = ast.parse(TAYLOR)
    module = source_module(tree)
    fn = module.functions["exp_neg"]
    loop = next(n for n in ast.walk(fn) if isinstance(n, ast.For))
    from auditor.series import accumulations

    unit = Unit(fn, ["x", "n"], fn, {id(a.term): a.subtract for a in accumulations(loop)})
    shadow = compile_shadow(unit, module)
    float_terms, ref_terms = trace_terms(shadow, {"x": 10.0, "n": 60}, 192)
    peak = partial_sums(float_terms)
    assert peak is not None and 1.3e3 < peak.peak < 1.5e3 and peak.peak_index in (8, 9, 10)
    assert len(ref_terms) == 59


@pytest.mark.parametrize("lam", [3, 5, 10, 20])
def test_asymptotic_series_optimal_truncation(lam):
    # DLMF 6.12.1: e^lam E1(lam) ~ sum (-1)^n n!/lam^(n+1); reference mpmath.e1.
    got = measure_code(STIELTJES.format(lam=lam), "divergent-series", ast.For)
    s = got.measurement.series
    assert s is not None and s.divergent
    assert s.optimal_terms in (math.floor(lam) - 1, math.floor(lam))
    with mpmath.workdps(40):
        k = s.optimal_terms
        smallest = mpmath.factorial(k) / mpmath.mpf(lam) ** (k + 1)
        assert s.smallest_term == pytest.approx(float(smallest), rel=1e-12)
        truth = mpmath.exp(lam) * mpmath.e1(lam)
        partial = mpmath.fsum((-1) ** n * mpmath.factorial(n) / mpmath.mpf(lam) ** (n + 1) for n in range(k))
        error = float(abs(partial - truth))
    # The smallest term bounds the error of optimal truncation; mpmath shows it is about half of it.
    assert s.truncation_error is not None and 0.25 * s.truncation_error <= error <= s.truncation_error


@pytest.mark.parametrize("x", [1e-10, 1e-15])
def test_expm1_against_naive_form(x):
    # Reference mpmath.expm1 (50 digits); the float values are computed here by Python itself.
    exact = mpmath.expm1(mpmath.mpf(x))
    naive = run_probe("math.exp(x) - 1", [], [f"x={x!r}"], 1, 0)
    stable = run_probe("math.expm1(x)", [], [f"x={x!r}"], 1, 0)
    assert naive.measurement.digits_lost_max == pytest.approx(independent_loss(math.exp(x) - 1, exact), abs=0.02)
    assert naive.measurement.digits_lost_max > 5.5
    assert stable.measurement.digits_lost_max < 0.5


@pytest.mark.parametrize("x", [1e-10, 1e-15])
def test_log1p_against_naive_form(x):
    # Reference mpmath.log1p; Python's math.log(1 + x) and math.log1p give the float values.
    exact = mpmath.log1p(mpmath.mpf(x))
    naive = run_probe("math.log(1 + x)", [], [f"x={x!r}"], 1, 0)
    stable = run_probe("math.log1p(x)", [], [f"x={x!r}"], 1, 0)
    assert naive.measurement.digits_lost_max == pytest.approx(independent_loss(math.log(1 + x), exact), abs=0.02)
    assert naive.measurement.verdict is Verdict.UNSTABLE
    assert stable.measurement.digits_lost_max < 0.5


def test_sqrt_difference_at_1e12():
    # Reference mpmath.sqrt at 50 digits; float value from Python's math.sqrt.
    x = 1e12
    with mpmath.workdps(50):
        exact = mpmath.sqrt(mpmath.mpf(x) + 1) - mpmath.sqrt(mpmath.mpf(x))
    got = run_probe("math.sqrt(x + 1) - math.sqrt(x)", [], ["x=1e12"], 1, 0)
    assert got.measurement.digits_lost_max == pytest.approx(independent_loss(math.sqrt(x + 1) - math.sqrt(x), exact), abs=0.02)
    assert got.measurement.digits_lost_max > 10
    assert got.rewrite is not None and got.rewrite["verified"]


@pytest.mark.parametrize(("expr", "point", "expected_log10"), [
    ("x - 1", "x=1.00000095367431640625", math.log10(1.00000095367431640625 / 2**-20)),  # |x/(x-1)|, common practice
    ("math.sqrt(x)", "x=7.0", math.log10(0.5)),  # d log sqrt / d log x = 1/2, common practice
    ("math.exp(x)", "x=5.0", math.log10(5.0)),  # |x|, common practice
    ("math.exp(x)", "x=-30.0", math.log10(30.0)),
])
def test_condition_numbers(expr, point, expected_log10):
    got = run_probe(expr, [], [point], 1, 0)
    assert got.measurement.condition_log10_max == pytest.approx(expected_log10, abs=0.01)


QUADRATIC = """
import math
# auditor: domain b={b}..{b}
def small_root(b, a=1.0, c=1.0):
    # the smaller root of a x^2 + b x + c (b < 0) by the textbook formula
    return (-b - math.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)
"""


def test_quadratic_small_root_with_b_1e8_has_no_correct_digit():
    # Standard textbook worked example: x^2 - 1e8 x + 1; the small root is ~1e-8 (mpmath polyroots),
    # the textbook formula in float64 gives about 7.45e-9.
    m = measure_code(QUADRATIC.format(b=-1e8), "quadratic-roots", ast.BinOp).measurement
    assert m.float_value == pytest.approx(7.45e-9, rel=1e-3)
    with mpmath.workdps(40):
        root = min(abs(r) for r in mpmath.polyroots([1, -1e8, 1], maxsteps=200, extraprec=400))
    assert float(mpmath.mpf(m.reference_value)) == pytest.approx(float(root), rel=1e-15)
    assert m.digits_lost_max is not None and m.digits_lost_max > 15
    assert m.verdict is Verdict.UNSTABLE


def test_quadratic_small_root_with_b_1e4_loses_about_7_digits():
    # x^2 - 1e4 x + 1 (reference mpmath.polyroots): about 7 digits lost.
    m = measure_code(QUADRATIC.format(b=-1e4), "quadratic-roots", ast.BinOp).measurement
    with mpmath.workdps(40):
        root = min(abs(r) for r in mpmath.polyroots([1, -1e4, 1], maxsteps=200, extraprec=400))
    float_root = (1e4 - math.sqrt(1e4 * 1e4 - 4.0)) / 2.0
    assert m.digits_lost_max == pytest.approx(independent_loss(float_root, root), abs=0.02)
    assert 6.0 <= m.digits_lost_max <= 8.0


def test_condition_is_over_variables_not_literal_constants():
    # log(1 + x) at x = 1e-12 is well-conditioned (cond ~ 1): the loss is the algorithm's;
    # log(x + y) at x = 1, y = 1e-12 has cond ~ 1e12 through x (common practice).
    one_plus = run_probe("math.log(1 + x)", [], ["x=1e-12"], 1, 0).measurement
    two_vars = run_probe("math.log(x + y)", [], ["x=1", "y=1e-12"], 1, 0).measurement
    assert one_plus.condition_log10_max == pytest.approx(0.0, abs=0.01)
    assert one_plus.verdict is Verdict.UNSTABLE
    assert two_vars.condition_log10_max == pytest.approx(12.0, abs=0.01)
    assert two_vars.verdict is Verdict.ILL_CONDITIONED
    assert one_plus.digits_lost_max == pytest.approx(two_vars.digits_lost_max, abs=1e-9)  # same float arithmetic
