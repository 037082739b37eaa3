"""The fast paths of the dynamic pass (MPFR reference, column-wise runs, gradients by forward-mode
AD) give the figures of the plain path: per-sample interpretation on mpmath with forward
differences. Outside references: mpmath for values, textbook derivatives for condition numbers."""
from __future__ import annotations

import math

import mpmath
import pytest

from auditor.numerics.inputs import parse_domain, sample_points
from auditor.numerics.run import measure_points
from auditor.numerics.unit import Unit, compile_shadow
from auditor.probe import parse_expression, prelude_module, run_probe

EXPRESSIONS = [
    ("sqrt(x + 1) - sqrt(x)", "x=1..1e15"),
    ("exp(x) - 1", "x=-1e-3..1e-3"),
    ("log(1 + x)", "x=1e-15..1e-1"),
    ("1 - cos(x)", "x=1e-8..1"),
    ("x * x - y * y", "x=1..2, y=1..2"),
    ("(x - y) / (x + y) + atan(x) ** 3", "x=1e-3..1e3, y=-5..5"),
    ("hypot(x, y) - x", "x=1..1e8, y=1e-3..1"),  # hypot has no derivative rule: forward differences
    ("tanh(x) / x - x ** -0.5", "x=1e-6..10"),
    ("sin(x) * cosh(x) - sinh(x) * cos(x)", "x=1e-4..2"),  # sin_cos / sinh_cosh pairs
]


def _shadow(text: str, names: list[str], fast: bool, columns: bool):
    shadow = compile_shadow(Unit(parse_expression(text), names, None), prelude_module())
    if not fast:
        shadow.fast_fn = None
    if not columns:
        shadow.batches = None
    return shadow


def _points(box: str, n: int = 120):
    return sample_points(parse_domain(box), [], {}, n, 3)


@pytest.mark.parametrize(("text", "box"), EXPRESSIONS)
def test_fast_paths_agree_with_the_plain_path(text, box):
    points = _points(box)
    names = sorted(points[0])
    plain, _, _ = measure_points(_shadow(text, names, fast=False, columns=False), points)
    for fast, columns in ((True, False), (False, True), (True, True)):
        got, _, _ = measure_points(_shadow(text, names, fast, columns), points)
        assert len(got) == len(plain)
        for a, b in zip(got, plain):
            assert a.float_value == b.float_value
            assert (a.digits_lost is None) == (b.digits_lost is None)
            if b.digits_lost is None:
                continue
            assert a.digits_lost == pytest.approx(b.digits_lost, abs=1e-6)
            with mpmath.workdps(40):  # both references converged: 30 digits in common
                assert abs(mpmath.mpf(str(a.reference)) - b.reference) <= abs(b.reference) * mpmath.mpf(10) ** -29
            if b.condition_log10 is None or not math.isfinite(b.condition_log10):
                assert a.condition_log10 == b.condition_log10
            else:  # forward differences carry a relative error near 2^-30; AD none
                assert a.condition_log10 == pytest.approx(b.condition_log10, abs=1e-6)


@pytest.mark.parametrize(("text", "point", "expected"), [
    # Textbook condition numbers, common practice: kappa(f, x) = |x f'(x) / f(x)|.
    ("log(x)", "x=1.0001", 1 / math.log(1.0001)),
    ("tan(x)", "x=1.5", 1.5 / (math.sin(1.5) * math.cos(1.5))),
    ("asin(x)", "x=0.999", 0.999 / (math.sqrt(1 - 0.999**2) * math.asin(0.999))),
    ("x / (1 - x)", "x=0.99", 1 / (1 - 0.99)),
    ("x ** 7", "x=3.0", 7.0),
])
def test_gradient_condition_numbers_match_textbook_values(text, point, expected):
    shadow = _shadow(text, ["x"], fast=True, columns=True)
    assert shadow.batches is not None and shadow.batches[3] is not None  # the gradient twin exists
    got = run_probe(text, [], [point], 1, 0)
    assert got.samples[0].condition_log10 == pytest.approx(math.log10(expected), abs=1e-9)
    assert got.measurement.condition_log10_max == round(math.log10(expected), 2)


def test_complex_intermediate_falls_back_to_mpmath():
    # numpy's sqrt of a negative float gives nan; MPFR traps the invalid operation and the
    # sample is evaluated by mpmath (whose sqrt(-4) is 2j, mpmath docs), so nothing is lost silently.
    points = [{"x": -4.0}, {"x": 4.0}]
    got, _, _ = measure_points(_shadow("np.sqrt(x) + 1", ["x"], fast=True, columns=True), points)
    assert got[0].digits_lost == 15.95  # nan against the exact 1 + 2j: no correct digit
    assert got[1].digits_lost == 0.0 and float(got[1].reference) == 3.0


@pytest.mark.parametrize("text", ["math.log(1 + x)", "np.log(1 + x) - np.sqrt(x)", "math.sqrt(x) - 1"])
def test_columns_split_around_inputs_that_raise(text):
    # In the assumed box (both signs) some points raise in the float run (math.log of a negative:
    # ValueError) or trap in MPFR (np.sqrt of a negative: NaN); the column is halved around them,
    # and every point gets what the per-sample mpmath path gives it.
    points = sample_points({}, ["x"], {}, 200, 5)
    plain, _, _ = measure_points(_shadow(text, ["x"], fast=False, columns=False), points)
    split, _, _ = measure_points(_shadow(text, ["x"], fast=True, columns=True), points)
    assert [s.note for s in split] == [s.note for s in plain]
    assert any(s.note for s in plain) and any(s.digits_lost is not None for s in plain)
    for a, b in zip(split, plain):
        if b.digits_lost is not None:
            assert a.digits_lost == pytest.approx(b.digits_lost, abs=1e-6)
