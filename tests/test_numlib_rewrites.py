"""Rewrites and advice of the statistics, summation, stepping and linear-algebra rules: the rewritten
code parses, computes the same quantity as the original in exact arithmetic (checked against exact
rational arithmetic and library references), and changed-meaning advice is never a rewrite."""
from __future__ import annotations

import ast
import math
import re
import statistics
import sys
from fractions import Fraction

import numpy as np
import pytest

from auditor import Config, scan_source
from auditor.rewrite import apply_edits, Edit


def findings(code: str, rule: str):
    report = scan_source(code, "case.py", Config(only=frozenset({rule})))
    assert not report.errors, report.errors
    return [f for f in report.findings if f.rule == rule]


def fixed(code: str, rule: str) -> str:
    """The module with its one finding rewritten exactly as `fix` splices it."""
    (f,) = findings(code, rule)
    assert f.rewrite is not None, f.message
    out = apply_edits(code, [Edit(f.span, f.rewrite.text, f.rewrite.imports, original=f.snippet)])
    assert out.changed, out.skipped
    ast.parse(out.text)
    return out.text


def run(code: str, name: str, *args):
    """Execute a test snippet (test data written here, never scanned code) and call one function."""
    space: dict = {}
    exec(compile(code, "<case>", "exec"), space)  # noqa: S102
    return space[name](*args)


def advice(code: str, rule: str) -> list[str]:
    """The code quoted in backticks in the single finding's message; any rewrite is marked advice."""
    (f,) = findings(code, rule)
    if f.rewrite is not None:  # changed-meaning advice is never verified, so never applied
        assert f.rewrite.advice and not f.rewrite.verified and f.rewrite.text in f.message
    assert "advice, not verified" in f.message
    return re.findall(r"`([^`]+)`", f.message)


# Readings near 1e4 with unit spread: the one-pass forms lose about 8 digits (the rule's rationale);
# the exact population variance comes from rational arithmetic on the float data (common practice).
DATA = [1e4 + 0.1 * k + (0.37 if k % 3 else -0.41) for k in range(50)]


def exact_pvariance(xs) -> float:
    q = [Fraction(x) for x in xs]
    mean = sum(q) / len(q)
    return float(sum((v - mean) ** 2 for v in q) / len(q))


LOOP_COUNTED = """def var(xs):
    s = s2 = 0.0
    n = 0
    for v in xs:
        s += v
        s2 += v * v
        n += 1
    return s2 / n - (s / n) ** 2
"""

SCALED = """import numpy as np
def var(xs):
    n = len(xs)
    sx = np.sum(xs)
    sxx = np.sum(xs**2)
    return (n * sxx - sx**2) / (n * (n - 1))
"""

STAT_COV = """import statistics
def cov(a, b):
    ea = statistics.mean(a)
    eb = statistics.mean(b)
    return statistics.mean([x * y for x, y in zip(a, b)]) - ea * eb
"""


def test_loop_moments_become_pvariance():
    new = fixed(LOOP_COUNTED, "naive-variance")
    assert "statistics.pvariance(xs)" in new and new.startswith("import statistics")
    exact = exact_pvariance(DATA)
    assert run(new, "var", DATA) == pytest.approx(exact, rel=1e-12)
    assert abs(run(LOOP_COUNTED, "var", DATA) - exact) > 1e-9 * exact  # the original really cancels


def test_scaled_sum_form_becomes_n_squared_var():
    new = fixed(SCALED, "naive-variance")
    assert "(n ** 2 * np.var(xs)) / (n * (n - 1))" in new
    xs = np.array(DATA)
    # the sample variance, numpy's own two-pass ddof=1 result, as the outside reference
    assert run(new, "var", xs) == pytest.approx(np.var(xs, ddof=1), rel=1e-12)


def test_statistics_covariance_twin_is_two_pass():
    new = fixed(STAT_COV, "naive-variance")
    a, b = DATA, [2.0 * x + (0.5 if i % 2 else -0.5) for i, x in enumerate(DATA)]
    n = len(a)
    # statistics.covariance (Python 3.10+) is the sample covariance: scale to the population one
    assert run(new, "cov", a, b) == pytest.approx(statistics.covariance(a, b) * (n - 1) / n, rel=1e-12)


def test_stream_gets_welford_advice_not_a_rewrite():
    code = LOOP_COUNTED.replace("for v in xs:", "for v in xs.readings():")
    (f,) = findings(code, "naive-variance")
    assert f.rewrite is None and "Welford" in f.message and "m2 += d * (x - mean)" in f.message


MIDPOINT = """def rod(t_cold, t_hot, n):
    width = (t_hot - t_cold) / n
    total = 0.0
    for i in range(n):
        t_mid = t_cold + (i + 0.5) * width
        total += 0.1 * t_mid**1.6 * width
    return total
"""

FILTERED = """def mean_gain(stations):
    total = 0
    for st in stations:
        if st.active:
            total += st.gain / st.sensitivity
    return total / len(stations)
"""


def test_midpoint_loop_becomes_fsum_with_the_temporary_inlined():
    new = fixed(MIDPOINT, "naive-accumulation")
    assert "total += math.fsum(0.1 * (t_cold + (i + 0.5) * width)**1.6 * width for i in range(n))" in new
    # integral of 0.1 t^1.6 from 0.05 to 4 is 0.1 (4^2.6 - 0.05^2.6) / 2.6 (elementary calculus);
    # the midpoint rule with 4000 panels is within 1e-6 of it, and the rewrite equals the loop to rounding
    exact = 0.1 * (4.0**2.6 - 0.05**2.6) / 2.6
    assert run(new, "rod", 0.05, 4.0, 4000) == pytest.approx(exact, rel=1e-6)
    assert run(new, "rod", 0.05, 4.0, 4000) == pytest.approx(run(MIDPOINT, "rod", 0.05, 4.0, 4000), rel=1e-12)


def test_filtered_loop_becomes_fsum_with_the_condition():
    new = fixed(FILTERED, "naive-accumulation")
    assert "total += math.fsum(st.gain / st.sensitivity for st in stations if st.active)" in new

    class St:
        def __init__(self, gain, active):
            self.gain, self.sensitivity, self.active = gain, 3.0, active

    stations = [St(1e16 if k == 0 else 1.0, k % 4 != 1) for k in range(40)]
    exact = sum(Fraction(s.gain) / Fraction(s.sensitivity) for s in stations if s.active) / len(stations)
    # math.fsum is correctly rounded (Python docs); the running sum drops the small gains against 1e16/3
    assert run(new, "mean_gain", stations) == pytest.approx(float(exact), rel=1e-15)


def test_loop_variable_read_afterwards_keeps_the_loop():
    code = "def total(values):\n    s = 0.0\n    for v in values:\n        s += v\n    return s, v\n"
    (f,) = findings(code, "naive-accumulation")
    assert f.rewrite is None and "Neumaier" in f.message


def test_step_count_rewrite_matches_index_times_step():
    code = "def ticks(t0, n):\n    t = t0\n    out = []\n    for k in range(1, n + 1):\n        t = t + 0.1\n" \
           "        out.append(t)\n    return out\n"
    new = fixed(code, "step-accumulation")
    got = run(new, "ticks", 2.0, 1000)
    exact = [Fraction(2) + k * Fraction(1, 10) for k in range(1, 1001)]
    # t0 + k * dt rounds twice whatever k (common practice: grid points from the index) ...
    assert all(abs(Fraction(g) - e) <= 2 * Fraction(math.ulp(g)) for g, e in zip(got, exact))
    # ... while the recurrence drifts by many units in the last place after 1000 additions
    drift = Fraction(run(code, "ticks", 2.0, 1000)[-1]) - exact[-1]
    assert abs(drift) > 10 * Fraction(math.ulp(got[-1]))


@pytest.mark.parametrize("start", ["clock.now()", "t0\n    t0 = 7.0"])
def test_step_count_rewrite_needs_a_plain_fixed_start(start):
    code = f"def log(clock, t0, n, dt):\n    t = {start}\n    for i in range(n):\n        t += dt\n        print(t)\n"
    (f,) = findings(code, "step-accumulation")
    assert f.rewrite is None and "advice, not verified" in f.message


def test_determinant_advice_detects_the_singular_matrix_det_misses():
    code = "import numpy as np\ndef check(A):\n    return np.linalg.det(A) == 0\n"
    rank, cond = advice(code, "determinant-singularity-test")
    assert rank == "np.linalg.matrix_rank(A) < len(A)" and cond == "np.linalg.cond(A) > 1 / np.finfo(float).eps"
    # [[.1,.2,.3],[.4,.5,.6],[.7,.8,.9]] is singular (rows in arithmetic progression; common practice);
    # its float determinant is rounding noise, not 0
    a = np.arange(1.0, 10.0).reshape(3, 3) / 10
    space = {"np": np, "A": a}
    assert not run(code, "check", a)
    assert eval(rank, space) and eval(cond, space)  # noqa: S307 - advice text written by the rule, test data


def test_determinant_advice_keeps_the_direction_of_the_test():
    code = "import numpy as np\ndef ok(M):\n    return np.abs(np.linalg.det(M)) > 1e-12\n"
    rank, cond = advice(code, "determinant-singularity-test")
    # 0.1 * I of order 30: det 1e-30 fails the original test, yet the matrix is perfectly conditioned
    m = 0.1 * np.eye(30)
    assert not run(code, "ok", m)
    assert eval(rank, {"np": np, "M": m}) and eval(cond, {"np": np, "M": m})  # noqa: S307


def test_finite_difference_advice_step_is_closer_to_the_exact_derivative():
    code = "import math\ndef slope(x):\n    h = 1e-13\n    return (math.exp(x + h) - math.exp(x)) / h\n"
    (step,) = advice(code, "finite-difference-step")
    assert step == "h = math.sqrt(sys.float_info.epsilon) * max(1.0, abs(x)); h = (x + h) - x"
    for x in (0.3, 1.0, 7.5):
        space = {"math": math, "sys": sys, "x": x}
        exec(step, space)  # noqa: S102 - advice text written by the rule, test data
        h = space["h"]
        new = (math.exp(x + h) - math.exp(x)) / h
        # d/dx exp(x) = exp(x) (DLMF 4.5.1 differentiated; common practice)
        assert abs(new - math.exp(x)) < abs(run(code, "slope", x) - math.exp(x))
        assert abs(new - math.exp(x)) / math.exp(x) < 1e-7  # about half the digits, the forward optimum


def test_central_difference_advice_uses_the_cube_root():
    code = "import numpy as np\ndef slope(g, t):\n    eps = np.finfo(float).eps\n" \
           "    return (g(t + eps) - g(t - eps)) / (2 * eps)\n"
    (step,) = advice(code, "finite-difference-step")
    assert step == "eps = np.finfo(float).eps ** (1 / 3) * max(1.0, abs(t)); eps = (t + eps) - t"
    space = {"np": np, "t": 2.0}
    exec(step, space)  # noqa: S102
    h = space["eps"]
    est = (math.sin(2.0 + h) - math.sin(2.0 - h)) / (2 * h)
    assert abs(est - math.cos(2.0)) < 1e-10  # central optimum keeps about two thirds of the digits
