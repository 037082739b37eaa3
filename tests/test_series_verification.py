"""Series rewrites are verified by the series criterion: closed forms and smallest-term stops."""
from __future__ import annotations

import ast
import math

import mpmath

from tests.numerics_helpers import measure_code

# The Taylor series of e^-x summed term by term (enough terms to converge at x = 30).
EXP_LOOP = '''import math
# auditor: domain x=1..30
def decay(x):
    term = 1.0
    total = 1.0
    for k in range(1, 150):
        term *= -x / k
        total += term
    return total
'''

# e^lam E1(lam) ~ sum_n (-1)^n n! / lam^(n+1) (DLMF 6.12.1), a fixed 30 terms: past the smallest
# term (n near lam) for every lam in [3, 8], so the sum diverges.
E1_LOOP = '''import math
# auditor: domain lam=3..8
def scaled_e1(lam):
    term = 1.0 / lam
    total = term
    for n in range(1, 30):
        term *= -n / lam
        total += term
    return total
'''

E1_STOP = '''for n in range(1, 30):
        term_next = term * (-n / lam)
        if abs(term_next) > abs(term):
            break
        term = term_next
        total += term'''

# Looks one term ahead, so it stops before adding the smallest term.
E1_EARLY = '''for n in range(1, 30):
        term_next = term * (-n / lam)
        if abs(term_next * (n + 1) / lam) > abs(term_next):
            break
        term = term_next
        total += term'''


def test_exp_taylor_loop_replaced_by_exp_is_verified():
    got = measure_code(EXP_LOOP, "alternating-series", ast.For, replacement="total = math.exp(-x)")
    assert got.verified, got.note
    assert "truncation bound" in got.note
    # Common practice: the naive sum loses about log10(e^(2x)) digits, ~26 at x = 30.
    assert got.measurement.digits_lost_max > 10
    assert got.after is not None and got.after.digits_lost_max < 1
    # Reference mpmath: the rewrite's float values are e^-x to float accuracy.
    for s in got.after_samples:
        x = s.inputs["x"]
        assert abs(s.float_value - float(mpmath.exp(-x))) <= 4e-16 * math.exp(-x)


def test_wrong_closed_form_is_not_verified():
    got = measure_code(EXP_LOOP, "alternating-series", ast.For, replacement="total = math.exp(x)")
    assert not got.verified
    assert "truncation bound" in got.note


def test_smallest_term_stop_is_verified_and_closer_to_e1():
    got = measure_code(E1_LOOP, "divergent-series", ast.For, replacement=E1_STOP)
    assert got.verified, got.note
    assert "smallest term" in got.note
    # Reference mpmath.e1: e^lam E1(lam) (DLMF 6.2.1); the stopped sum is closer at every sample.
    assert len(got.after_samples) == len(got.samples)
    for b, a in zip(got.samples, got.after_samples):
        lam = b.inputs["lam"]
        exact = float(mpmath.exp(lam) * mpmath.e1(lam))
        assert abs(a.float_value - exact) < abs(b.float_value - exact)


def test_stop_one_term_early_is_not_verified():
    got = measure_code(E1_LOOP, "divergent-series", ast.For, replacement=E1_EARLY)
    assert not got.verified
    assert "smallest term" in got.note


def test_samples_where_the_series_has_not_started_converging_are_excluded():
    # 39 terms of the e^-x series: for x > 39 the terms x^k / k! still grow at the end (common
    # practice: the ratio of successive terms is x / k), so no truncation bound applies there.
    code = EXP_LOOP.replace("x=1..30", "x=1..60").replace("range(1, 150)", "range(1, 40)")
    got = measure_code(code, "alternating-series", ast.For, replacement="total = math.exp(-x)")
    assert got.verified, got.note
    assert "excluded: terms still growing" in got.note
