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
    if any(f.__class__ is not float for f in floats) or any(r.__class__ is not MPFR for r in refs):
        return None
    rel = np.array([_relative(f, r) for f, r in zip(floats, refs)])
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
    inputs that are neither 0 nor infinite (as the forward differences of run._moves)."""
    totals: list[float] = []
    special: dict[int, float | None] = {}
    for i, (p, y) in enumerate(zip(points, values)):
        terms = [abs(p[n] * grads[n][i]) if n in grads else 0 for n in vary if _movable(p.get(n))]
        if not terms:
            special[i] = None if y == 0 else -math.inf
        elif y == 0:
            special[i] = math.inf if any(t != 0 for t in terms) else None
        totals.append(0.0 if i in special else float(sum(terms) / abs(y)))
    with np.errstate(divide="ignore"):
        logs = np.log10(np.array(totals)).tolist() if totals else []
    for i in [i for i, t in enumerate(totals) if i not in special and (t == 0 or math.isinf(t))]:
        logs[i] = _outside_float_log10(points[i], vary, values[i], grads, i)
    return [special[i] if i in special else logs[i] for i in range(len(values))]


def _outside_float_log10(p: dict[str, Any], vary: Sequence[str], y: Any, grads: dict[str, list[Any]], i: int) -> float:
    """The condition of one sample whose total is 0 or beyond the float range (log10 by MPFR)."""
    total = sum(abs(p[n] * grads[n][i]) for n in vary if n in grads and _movable(p.get(n))) / abs(y)
    return -math.inf if total == 0 else log10_abs(total)


def _movable(v: Any) -> bool:
    return v.__class__ is float and v != 0 and math.isfinite(v)
