"""Digits lost and condition numbers for whole columns of samples (float outputs against MPFR
references): the same formulas as metrics.py, with the logarithms taken by numpy over the column."""
from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from auditor.numerics import metrics as mx
from auditor.numerics.mpfr import MPFR, log10_abs


def _relative(f: float, r: Any) -> float:
    """|f - r| / |r| as a float (0.0 where r == 0 and f == 0; inf where f is no finite number)."""
    if f - f != 0.0:
        return math.inf
    if r == 0:
        return 0.0 if f == 0 else math.inf
    return abs(float((f - r) / r))  # MPFR rounds the difference correctly: 53 bits of it suffice


def column_losses(floats: Sequence[Any], refs: Sequence[Any]) -> list[float] | None:
    """Digits lost per sample, max(0, 15.95 + log10(|f - r| / |r|)) capped at 15.95 (CONTRACT.md),
    for Python-float outputs against MPFR references; None for any other kind of column."""
    if set(map(type, floats)) != {float} or set(map(type, refs)) != {MPFR}:
        return None
    as_float = np.array(floats)
    plain = (np.isfinite(as_float) & (np.array(list(map(float, refs))) != 0)).tolist()
    # The common case inline; zero references and non-finite floats by `_relative`.
    rel = np.abs(np.array([float((f - r) / r) if ok else _relative(f, r) for f, r, ok in zip(floats, refs, plain)]))
    with np.errstate(divide="ignore"):
        losses = np.clip(mx.DIGITS_FLOAT64 + np.log10(rel), 0.0, mx.DIGITS_FLOAT64)
    out: list[float] = losses.tolist()
    for i in np.flatnonzero(losses > 0).tolist():
        if float(refs[i]) == floats[i]:  # correctly rounded (subnormal outputs): nothing lost
            out[i] = 0.0
    return out


def column_conditions(points: Sequence[dict[str, Any]], vary: Sequence[str], values: Sequence[Any],
                      grads: dict[str, list[Any]]) -> list[float | None]:
    """log10 of sum_i |x_i df/dx_i| / |f| per sample (CONTRACT.md) from gradients, over the float
    inputs that are neither 0 nor infinite (as the forward differences of run._moves). Terms are
    summed in floats (3 digits are needed); samples where a float would under- or overflow, or
    f is 0, or no input moves, are computed one by one."""
    y = np.array(list(map(float, values)))
    total = np.zeros(len(values))
    moved = np.zeros(len(values), dtype=bool)
    risky = ~(np.abs(y) >= 1e-300) | ~(np.abs(y) <= 1e300)
    for name in vary:
        x = np.array([p.get(name) if _movable(p.get(name)) else 0.0 for p in points])
        moved |= x != 0
        if name not in grads:
            continue
        g = np.array(list(map(float, grads[name])))
        risky |= ~(np.abs(g) <= 1e300) | ((g == 0) & (x != 0))  # 0 may be an underflow: checked in MPFR
        total += np.abs(x * g)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        logs = np.log10(total / np.abs(y))
    risky |= ~moved | ~np.isfinite(logs)
    out: list[float | None] = logs.tolist()
    for i in np.flatnonzero(risky).tolist():
        out[i] = _one_condition(points[i], vary, values[i], grads, i)
    return out


def _one_condition(p: dict[str, Any], vary: Sequence[str], y: Any, grads: dict[str, list[Any]], i: int) -> float | None:
    """One sample's condition number in MPFR arithmetic (the special cases of metrics.condition_log10)."""
    terms = [abs(p[n] * grads[n][i]) if n in grads else 0 for n in vary if _movable(p.get(n))]
    if not terms:
        return None if y == 0 else -math.inf
    if y == 0:
        return math.inf if any(t != 0 for t in terms) else None
    return _outside_float_log10(p, vary, y, grads, i)


def _outside_float_log10(p: dict[str, Any], vary: Sequence[str], y: Any, grads: dict[str, list[Any]], i: int) -> float:
    """The condition of one sample whose total is 0 or beyond the float range (log10 by MPFR)."""
    total = sum(abs(p[n] * grads[n][i]) for n in vary if n in grads and _movable(p.get(n))) / abs(y)
    return -math.inf if total == 0 else log10_abs(total)


def _movable(v: Any) -> bool:
    return v.__class__ is float and v != 0 and math.isfinite(v)
