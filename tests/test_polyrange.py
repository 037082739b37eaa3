"""polyrange: parsing literal one-variable polynomials and inf |u| over the reals, checked against
the vertex formula, mpmath's polynomial roots and dense numpy sampling."""
from __future__ import annotations

import ast

import mpmath
import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from auditor import polyrange as pr


def parsed(text: str):
    return pr.polynomial(ast.parse(text, mode="eval").body)


def sampled_min(coeffs, radius: float, n: int = 2_000_001) -> tuple[float, float]:
    """(min |u| over a dense grid on [-radius, radius], step * max |u'|: how far the grid can miss inf |u|).

    numpy.polyval evaluates, independently of the code under test."""
    grid = np.linspace(-radius, radius, n)
    slope = np.polyval(np.polyder(list(coeffs)[::-1]), grid)
    return float(np.min(np.abs(np.polyval(list(coeffs)[::-1], grid)))), float(grid[1] - grid[0]) * float(np.max(np.abs(slope)))


def mpmath_min(coeffs) -> float:
    """inf |u| from mpmath.polyroots of u' at 40 digits, u evaluated there with mpmath.polyval."""
    with mpmath.workdps(40):
        desc = [mpmath.mpf(c) for c in reversed(coeffs)]
        if any(abs(r.imag) < mpmath.mpf(10) ** -20 for r in mpmath.polyroots(desc, maxsteps=200, extraprec=200)):
            return 0.0  # u has a real root
        deriv = [c * (len(desc) - 1 - i) for i, c in enumerate(desc[:-1])]
        crit = [r.real for r in mpmath.polyroots(deriv, maxsteps=200, extraprec=200) if abs(r.imag) < 1e-20]
        return float(min(abs(mpmath.polyval(desc, x)) for x in crit))


def cauchy_radius(coeffs) -> float:
    """Every root of u' lies within 1 + max |d_k / d_lead| (Cauchy's bound, common practice)."""
    d = [k * c for k, c in enumerate(coeffs)][1:]
    return 1.0 + max(abs(c / d[-1]) for c in d[:-1])


def test_parse_field_trial_quadratic():
    poly = parsed("-8.318 + 42.796 * a - 59.938 * a ** 2")
    assert poly is not None and poly.coeffs == (-8.318, 42.796, -59.938)


@pytest.mark.parametrize(("text", "coeffs"), [
    ("-x", (0.0, -1.0)),
    ("(x - 1) * (x + 1)", (-1.0, 0.0, 1.0)),
    ("-(t - 2.0) ** 2 / 4", (-1.0, 1.0, -0.25)),
    ("3 - x * x ** 2.0", (3.0, 0.0, 0.0, -1.0)),
    ("+x ** 0 + 1", (2.0,)),
    ("-1 - f(x) ** 2", (-1.0, 0.0, -1.0)),  # a call is one operand like any other
])
def test_parse_forms(text, coeffs):
    poly = parsed(text)
    assert poly is not None
    assert tuple(float(c) for c in poly.coeffs) == pytest.approx(coeffs)


@pytest.mark.parametrize("text", ["a * x", "x / y", "2 ** x", "x ** 0.5", "x ** -1", "x ** 9", "1j * x",
                                  "True + x", "x + 10 ** 400", "x ** n", "x % 2", "(x ** 8) ** 3"])
def test_parse_rejects(text):
    assert parsed(text) is None


def test_resolve_sees_through_names():
    tree = ast.parse("u = -2.0 - b * b\n1 - exp(u)\n")
    value = tree.body[0].value
    u = tree.body[1].value.right.args[0]
    resolve = lambda node: value if isinstance(node, ast.Name) and node.id == "u" else node  # noqa: E731
    assert pr.polynomial(u).coeffs == (0.0, 1.0)  # without resolving, `u` is the operand itself
    assert pr.distance_from_zero(u) == 0.0
    assert pr.distance_from_zero(u, resolve) == pytest.approx(2.0)


@pytest.mark.parametrize(("coeffs", "expected"), [
    ((-8.318, 42.796, -59.938), 8.318 - 42.796 ** 2 / (4 * 59.938)),  # vertex c - b^2/(4a), common practice
    ((-13.436, 101.14, -223.73), 13.436 - 101.14 ** 2 / (4 * 223.73)),
    ((1.5, 0.0, -2.0, 0.0, 1.0), 0.5),  # (x^2 - 1)^2 + 0.5, minimum at x = +-1 (closed form)
    ((1.0, 0.0, 2.0, 0.0, 1.0), 1.0),  # (x^2 + 1)^2
    ((1.001, -4.0, 6.0, -4.0, 1.0), 1e-3),  # (x - 1)^4 + 1e-3: a flat, fourfold critical point
    ((-3.0, 1.0), 0.0),  # a line always crosses zero
    ((0.0, 0.0, 1.0), 0.0),
    ((2.0, 1.0, 0.0, 1.0), 0.0),  # odd degree
    ((-1.0, 0.0, 0.5), 0.0),  # real roots at +-sqrt(2)
    ((-4.0,), 4.0),
])
def test_infimum_known_values(coeffs, expected):
    assert pr.infimum_abs(coeffs) == pytest.approx(expected, rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("coeffs", [(-8.318, 42.796, -59.938), (-13.436, 101.14, -223.73),
                                    (1.5, 0.0, -2.0, 0.0, 1.0), (0.3, -1.0, 0.2, 0.7, 1.0), (0.9, -1.0, 0.2, 0.7, 1.0), (2.0, 0.0, -3.0, 0.0, 1.0, 0.0, 0.2)])
def test_infimum_matches_dense_sampling(coeffs):
    got = pr.infimum_abs(coeffs)
    grid, miss = sampled_min(coeffs, cauchy_radius(coeffs))
    assert got <= grid + 1e-12  # the infimum can never exceed a sampled value
    assert got >= grid - miss - 1e-12


coefficient = st.floats(-50, 50, allow_nan=False).map(lambda v: round(v, 3))


@settings(max_examples=150, deadline=None)
@given(st.lists(coefficient, min_size=3, max_size=7).filter(lambda c: abs(c[-1]) >= 0.01))
def test_infimum_matches_mpmath(coeffs):
    coeffs = tuple(coeffs)
    try:
        expected = mpmath_min(coeffs)
    except mpmath.libmp.NoConvergence:
        assume(False)
    got = pr.infimum_abs(coeffs)
    assert got == pytest.approx(expected, rel=1e-7, abs=1e-9)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.01, 100), st.floats(-100, 100), st.floats(-100, 100))
def test_quadratic_vertex(a, b, c):
    """inf |a x^2 + b x + c| is 0 when b^2 >= 4ac, else c - b^2/(4a) (vertex formula, common practice)."""
    expected = 0.0 if b * b >= 4 * a * c else c - b * b / (4 * a)
    assert pr.infimum_abs((c, b, a)) == pytest.approx(expected, rel=1e-9, abs=1e-9 * (1 + abs(c) + b * b / a))
    assert pr.infimum_abs((-c, -b, -a)) == pytest.approx(expected, rel=1e-9, abs=1e-9 * (1 + abs(c) + b * b / a))


def test_unparsed_value_keeps_the_name_as_operand():
    """`a = s * (1 + k)` reads two operands, but `a` itself is still one real number."""
    tree = ast.parse("a = s * (1 + k)\n-5.0 - a * a\n")
    value, expr = tree.body[0].value, tree.body[1].value
    resolve = lambda node: value if isinstance(node, ast.Name) and node.id == "a" else node  # noqa: E731
    assert pr.polynomial(value) is None
    assert pr.distance_from_zero(expr, resolve) == pytest.approx(5.0)


def test_complex_value_is_not_a_real_operand():
    """w = 1j * t: w * w = -t^2, so -1 - w * w reaches 0 (at t = 1) although -1 - a^2 never does for real a."""
    tree = ast.parse("w = 1j * t\n-1 - w * w\n")
    value, expr = tree.body[0].value, tree.body[1].value
    resolve = lambda node: value if isinstance(node, ast.Name) and node.id == "w" else node  # noqa: E731
    assert pr.distance_from_zero(expr) == pytest.approx(1.0)
    assert pr.distance_from_zero(expr, resolve) == 0.0


def exp_minus_one_lines(code: str) -> list[int]:
    from auditor import Config, scan_source

    report = scan_source(code, "case.py", Config(only=frozenset({"exp-minus-one"})))
    assert not report.errors, report.errors
    return [f.span.line for f in report.findings]


def test_rule_threshold_one_digit():
    """inf |u| = 0.05 would lose about 1.3 digits (log10(1/0.05)): flagged; 0.2 loses under one: clean."""
    code = "import numpy as np\ndef f(x):\n    a = 1 - np.exp(-0.05 - x ** 2)\n    return a, 1 - np.exp(-0.2 - x ** 2)\n"
    assert exp_minus_one_lines(code) == [3]


def test_rule_compound_with_literal_power():
    """(1 + r)**n - 1 = exp(n log1p(r)) - 1: r = 0.5 + d^2 keeps |n log1p(r)| >= 1.5 log 1.5; r = x^2 reaches 0."""
    code = "def f(d, x):\n    a = (1 + (0.5 + d * d)) ** 1.5 - 1\n    return a, (1 + x ** 2) ** 0.5 - 1\n"
    assert exp_minus_one_lines(code) == [3]
