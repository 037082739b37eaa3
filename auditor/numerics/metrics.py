"""Digits lost, relative componentwise condition number, and the verdict (formulas: CONTRACT.md)."""
from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import mpmath
import numpy as np
from mpmath import libmp

from auditor.model import Verdict
from auditor.numerics import mpfr
from auditor.numerics.mpfr import MPFR

#: -log10 of the unit roundoff: 2^-53 for float64, 2^-24 for float32 (CONTRACT.md).
DIGITS_FLOAT64 = 15.95
DIGITS_FLOAT32 = 7.22
#: Below this many digits lost a unit is benign (reporting threshold).
BENIGN_BELOW = 2.0
#: Loss beyond what the condition number explains, in digits, that makes a unit unstable.
UNSTABLE_EXCESS = 2.0
#: Relative step of the forward difference used for derivatives (see `condition_log10`).
STEP_BITS = 30
LARGEST = 1.7976931348623157e308
SMALLEST_NORMAL = 2.2250738585072014e-308


def digits_of(value: Any) -> float:
    """Decimal digits the float type of `value` carries: 7.22 for float32, else 15.95."""
    dtype = getattr(value, "dtype", None)
    if dtype is not None and dtype in (np.float32, np.complex64):
        return DIGITS_FLOAT32
    return DIGITS_FLOAT64


def is_finite_number(value: Any) -> bool:
    if value.__class__ is float:
        return bool(value - value == 0.0)  # False for inf and nan
    try:
        return bool(np.isfinite(complex(value)))
    except (TypeError, ValueError, OverflowError):
        return False


def digits_lost(float_value: Any, reference: Any, digits: float = DIGITS_FLOAT64) -> float:
    """max(0, digits + log10(|float - ref| / |ref|)) (CONTRACT.md), capped at `digits`.

    The cap says "no correct digit left": a relative error above 1 carries no more information.
    When ref == 0 exactly, a float 0 loses nothing and anything else loses every digit.
    """
    if not is_finite_number(float_value):
        return digits
    if reference == 0:
        return 0.0 if float_value == 0 else digits
    if _as_float(reference) == float_value:
        return 0.0  # correctly rounded: the error is at most half an ulp, 2^-53 relative
    return min(digits, max(0.0, digits + log10_relative(_as_plain(float_value), reference)))


def log10_relative(value: Any, reference: Any) -> float:
    """log10(|value - ref| / |ref|): the difference exact, the ratio to 53 bits (mpmath.libmp
    directly, as this runs once per sample), its logarithm in double precision."""
    if reference.__class__ is MPFR and value.__class__ is not float:
        reference = mpfr.as_mpf(reference)
    elif reference.__class__ is MPFR:
        # MPFR rounds the difference correctly, so 53 bits of it (any context) are as good as exact.
        return mpfr.log10_abs((value - reference) / reference) if value != reference else -math.inf
    raw = getattr(reference, "_mpf_", None)
    if raw is not None and value.__class__ is float:
        diff = libmp.mpf_sub(libmp.from_float(value), raw, 0)  # prec 0: exact
        return _log10_raw(libmp.mpf_div(diff, raw, 53, "n"))
    rel = (mpmath.mpmathify(value) - reference) / reference
    return _log10(abs(rel))


def _log10_raw(raw: tuple[Any, ...]) -> float:
    as_float = abs(libmp.to_float(raw))
    if as_float == 0 or math.isinf(as_float):
        return -math.inf if raw == libmp.fzero else float(mpmath.log10(abs(mpmath.mpf(raw))))
    return math.log10(as_float)


def _as_plain(value: Any) -> Any:
    if value.__class__ is float:
        return value
    if isinstance(value, (complex, np.complexfloating)):
        return complex(value)
    return float(value)


def _as_float(reference: Any) -> float | complex:
    try:
        return float(reference)
    except TypeError:
        return complex(reference)


def _log10(value: Any) -> float:
    """log10 of a non-negative mpf, in double precision (plenty for a figure shown to 2 decimals)."""
    as_float = float(value)
    if as_float == 0:
        return -math.inf if value == 0 else float(mpmath.log10(value))
    if math.isinf(as_float):
        return float(mpmath.log10(value))
    return math.log10(as_float)


def out_of_range(reference: Any) -> bool:
    """True when the exact result itself overflows or underflows float64 (no arithmetic can help)."""
    try:
        size = abs(float(reference))
    except TypeError:
        size = abs(complex(reference))
    if size == 0:
        return bool(reference != 0)
    return size > LARGEST or size < SMALLEST_NORMAL


def condition_log10(base: Any, shifted: Sequence[Any]) -> float | None:
    """log10 of sum_i |x_i df/dx_i| / |f| from forward differences f(x_i (1 + 2^-STEP_BITS)).

    Evaluated at a precision where f is good to 30 digits, so the difference keeps about
    30 - STEP_BITS*log10(2) = 21 digits and the O(h) truncation error is about 1e-9 relative:
    ample for a condition number reported to one decimal.
    """
    if base == 0:
        return math.inf if any(s != 0 for s in shifted) else None
    if base.__class__ is MPFR or any(x.__class__ is MPFR for x in shifted):
        if not (base.__class__ is MPFR and all(x.__class__ is MPFR for x in shifted)):
            base, shifted = mpfr.as_mpf(base), [mpfr.as_mpf(x) for x in shifted]  # one fell back to mpmath
        else:
            total_q = sum(abs((x - base) / base) for x in shifted)
            return -math.inf if total_q == 0 else mpfr.log10_abs(total_q) + STEP_BITS * math.log10(2)
    raw = getattr(base, "_mpf_", None)
    if raw is not None and all(getattr(x, "_mpf_", None) is not None for x in shifted):
        # Real values: each relative difference exact, divided to 53 bits (mpmath.libmp directly).
        parts = [libmp.mpf_div(libmp.mpf_sub(x._mpf_, raw, 0), raw, 53, "n") for x in shifted]
        total_raw = parts[0] if len(parts) == 1 else libmp.mpf_sum([libmp.mpf_abs(q) for q in parts], 53, "n")
        if total_raw == libmp.fzero:
            return -math.inf
        return _log10_raw(libmp.mpf_abs(total_raw)) + STEP_BITS * math.log10(2)
    total = sum(abs(x - base) for x in shifted) / abs(base)
    if total == 0:
        return -math.inf
    return _log10(total) + STEP_BITS * math.log10(2)


def explained(condition: float | None) -> float:
    """Digits of loss the condition number accounts for (never negative)."""
    if condition is None or condition != condition:
        return 0.0
    return max(0.0, condition)


def verdict(losses: Sequence[float], conditions: Sequence[float | None]) -> Verdict:
    """unstable: loss exceeds log10(cond) by more than UNSTABLE_EXCESS digits somewhere;
    ill-conditioned: a loss at or above the threshold that the condition number explains;
    benign: every sample loses fewer than BENIGN_BELOW digits."""
    if not losses or max(losses) < BENIGN_BELOW:
        return Verdict.BENIGN
    excess = max(d - explained(c) for d, c in zip(losses, conditions))
    return Verdict.UNSTABLE if excess > UNSTABLE_EXCESS else Verdict.ILL_CONDITIONED
