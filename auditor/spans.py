"""Interval arithmetic with a floor: element ranges of float64 arrays, and how far nonzero elements stay from 0.

A Span says every element x has low <= x <= high and either x == 0 or |x| >= floor. The floor
survives arithmetic on doubles: a product of nonzero doubles is at least the product of their
floors, and a nonzero sum of two doubles a and b is a multiple of the smaller of their units in
the last place, so at least min(|a|, |b|) * 2**-53 (IEEE 754 binary64, normal range; common
practice). Bounds are widened outward (floors inward) by a small slack that covers the rounding
of the bounds themselves.
"""
from __future__ import annotations

import ast
import math
from dataclasses import dataclass

#: relative slack for the float arithmetic of the bounds themselves (outward for ends, inward for floors)
_SLACK = 1e-9
UNIT = 2.0 ** -53
@dataclass(frozen=True, slots=True)
class Span:
    """Every element x has low <= x <= high, and x == 0 or |x| >= floor."""

    low: float
    high: float
    floor: float

    @property
    def excludes_zero(self) -> bool:
        return self.low > 0 or self.high < 0

    @property
    def magnitude(self) -> float:
        return max(abs(self.low), abs(self.high))


def make_span(low: float, high: float, floor: float) -> Span | None:
    """A span with bounds widened outward and the floor inward by the slack; None when a bound is not finite."""
    if not (math.isfinite(low) and math.isfinite(high)) or math.isnan(floor):
        return None
    if low == high == 0:
        return ZERO
    low -= abs(low) * _SLACK
    high += abs(high) * _SLACK
    if low > 0 or high < 0:  # the interval itself keeps elements away from 0
        floor = max(floor, min(abs(low), abs(high)))
    return Span(low, high, max(floor * (1 - _SLACK), 0.0))


#: the all-zero array: it has no nonzero element, so any floor holds
ZERO = Span(0.0, 0.0, math.inf)


def constant(value: float) -> Span | None:
    return make_span(value, value, abs(value))


def add(a: Span, b: Span) -> Span | None:
    if (a.low >= 0 and b.low >= 0) or (a.high <= 0 and b.high <= 0):
        floor = min(a.floor, b.floor)  # same signs: no cancellation, the sum is 0 only when both are
    else:
        floor = min(a.floor, b.floor) * UNIT  # a nonzero sum of two doubles is at least the smaller ulp
    return make_span(a.low + b.low, a.high + b.high, floor)


def negate(a: Span) -> Span:
    return Span(-a.high, -a.low, a.floor)


def multiply(a: Span, b: Span) -> Span | None:
    if ZERO in (a, b):
        return ZERO
    ends = [x * y for x in (a.low, a.high) for y in (b.low, b.high)]
    return make_span(min(ends), max(ends), a.floor * b.floor)


def reciprocal(a: Span) -> Span | None:
    if not a.excludes_zero:
        return None
    return make_span(1 / a.high, 1 / a.low, 1 / a.magnitude)


def join(a: Span, b: Span) -> Span:
    return Span(min(a.low, b.low), max(a.high, b.high), min(a.floor, b.floor))


def apply(op: ast.operator, left: Span, right: Span) -> Span | None:
    if isinstance(op, ast.Add):
        return add(left, right)
    if isinstance(op, ast.Sub):
        return add(left, negate(right))
    if isinstance(op, ast.Mult):
        return multiply(left, right)
    if isinstance(op, ast.Div):
        inverse = reciprocal(right)
        return multiply(left, inverse) if inverse is not None else None
    return None
