"""Measure an expression unit column-wise: the float run, the reference run and the runs at moved
inputs (for the condition number) each in one pass over all samples (numerics/batch.py); the
per-sample figures then come from run.finish_sample, exactly as sample by sample."""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

from auditor.numerics import mpfr
from auditor.numerics.batch import BatchFn
from auditor.numerics.dual import DualFn
from auditor.numerics import metrics as mx
from auditor.numerics.figures import column_conditions, column_losses
from auditor.numerics.run import (
    _FACTOR, _FACTOR_FLOAT, _MAKE, _condition_of, _from_float, _needs_recheck, FATAL, Sample, Shadow,
    finish_sample, flatten, measure_sample,
)
import numpy as np
from mpmath import libmp

from auditor.numerics.reference import AGREE_DIGITS

Point = dict[str, Any]


def _reference_batch(shadow: Shadow) -> BatchFn | None:
    if shadow.batches is None or shadow.arrays:
        return None
    _, ref_fn, fast_fn, _ = shadow.batches
    return fast_fn if shadow.fast else ref_fn  # type: ignore[no-any-return]


def float_column(shadow: Shadow, points: Sequence[Point]) -> list[Any] | None:
    """The float outputs at all points in one pass, or None (no column form, or some point raised:
    the caller then runs sample by sample and judges each point alone)."""
    if shadow.batches is None or shadow.arrays or not points:
        return None
    try:
        out: list[Any] = shadow.batches[0]({k: [p[k] for p in points] for k in points[0]}, len(points))
        return out
    except FATAL:
        raise
    except Exception:
        return None


def _exact(shadow: Shadow, v: Any) -> Any:
    if v.__class__ is not float:
        return v
    return mpfr.exact(v) if shadow.fast else _MAKE(_from_float(v))


def _moved(shadow: Shadow, v: Any) -> Any | None:
    """v (1 + 2^-STEP_BITS), exact at the working precision; None where v is not moved (0, inf, int)."""
    if v.__class__ is not float or v == 0 or not math.isfinite(v):
        return None
    if shadow.fast:
        return mpfr.exact(v) * _FACTOR_FLOAT
    return _MAKE(libmp.mpf_mul(libmp.from_float(v), _FACTOR._mpf_, 0))


def _shifted(shadow: Shadow, run: BatchFn, points: Sequence[Point], columns: dict[str, list[Any]]) -> list[list[list[Any]]]:
    """Per point, the flattened reference outputs at each moved input (over the unit's variables)."""
    n = len(points)
    out: list[list[list[Any]]] = [[] for _ in range(n)]
    for name in shadow.vary:
        moved = [_moved(shadow, p.get(name)) for p in points]
        if all(m is None for m in moved):
            continue
        column = [columns[name][i] if m is None else m for i, m in enumerate(moved)]
        values = run({**columns, name: column}, n)
        for i, m in enumerate(moved):
            if m is not None:
                out[i].append(flatten(values[i]))
    return out


#: Below this many points a column that raised is measured point by point.
MIN_COLUMN = 16


def measure_split(shadow: Shadow, points: Sequence[Point], bits: int) -> list[Sample] | None:
    """`measure_columns`, halving the column where a run raised (the code's own error at some
    input, an MPFR trap) until the points that raise are measured one by one; None where the
    unit has no column form. Each level touches every point at most once."""
    if _reference_batch(shadow) is None or not points:
        return None
    done = measure_columns(shadow, points, bits)
    if done is not None:
        return done
    if len(points) <= MIN_COLUMN:
        return [measure_sample(shadow, p, bits) for p in points]
    mid = len(points) // 2
    return (measure_split(shadow, points[:mid], bits) or []) + (measure_split(shadow, points[mid:], bits) or [])


def measure_columns(shadow: Shadow, points: Sequence[Point], bits: int) -> list[Sample] | None:
    """All points measured column-wise (inside run.quiet(bits)), or None where the unit has no
    column form or a column run raised (then it is measured sample by sample)."""
    run = _reference_batch(shadow)
    floats = float_column(shadow, points) if run is not None else None
    if run is None or floats is None:
        return None
    if shadow.fast and shadow.conditions and shadow.batches is not None and shadow.batches[3] is not None:
        found = _measure_dual(shadow, shadow.batches[3], points, floats, bits)
        if found is not None:
            return found
    n = len(points)
    try:
        columns = {k: [_exact(shadow, p[k]) for p in points] for k in points[0]}
        refs = run(columns, n)
    except FATAL:
        raise
    except Exception:
        return None  # an MPFR trap or an error at some point: each point is judged alone
    try:
        shifted = _shifted(shadow, run, points, columns) if shadow.conditions else None
    except FATAL:
        raise
    except Exception:
        shifted = None  # some step left the domain: condition numbers point by point
    if shifted is None:
        return finish_column(shadow, points, floats, refs, bits, None)
    conds = [_from_shifted(shifted[i]) for i in range(n)]
    return finish_column(shadow, points, floats, refs, bits, conds)


def _from_shifted(outputs: list[list[Any]]) -> Callable[[Any, int], float | None]:
    return lambda base, j: _condition_of(base, [out[j] for out in outputs])


def finish_column(shadow: Shadow, points: Sequence[Point], floats: list[Any], refs: list[Any], bits: int,
                  conds: Sequence[Callable[[Any, int], float | None] | float | None] | None) -> list[Sample]:
    """Samples from the float and reference columns. Scalar float outputs against MPFR values
    get their digits lost column-wise; a point that needs its reference rechecked (run._needs_recheck),
    lies outside the float range, or has another kind of output goes through run.finish_sample.
    `conds`: per point, the condition number or a function giving it (None: computed per point)."""
    losses = column_losses(floats, refs)
    plain = _plain_mask(losses, refs, bits)
    out = []
    for i, p in enumerate(points):
        c = conds[i] if conds is not None else None
        if plain[i] and losses is not None:
            cond = (c(refs[i], 0) if callable(c) else c) if shadow.conditions else None
            out.append(Sample(p, floats[i], refs[i], losses[i], cond, bits))
        else:
            at = c if callable(c) else (None if c is None and conds is None else (lambda base, j, c=c: c))
            out.append(finish_sample(shadow, p, flatten(floats[i]), flatten(refs[i]), bits, at))
    return out


def _plain_mask(losses: list[float] | None, refs: list[Any], bits: int) -> list[bool]:
    """Points whose column figures stand: no recheck needed (run._needs_recheck) and the exact
    result a normal float (metrics.out_of_range)."""
    if losses is None:
        return [False] * len(refs)
    loss = np.array(losses)
    size = np.abs(np.array(list(map(float, refs))))
    spare = bits * math.log10(2) - AGREE_DIGITS - 2
    ok = (loss < mx.DIGITS_FLOAT64 - 0.05) & (loss <= spare) & (size <= mx.LARGEST) & (size >= mx.SMALLEST_NORMAL)
    out: list[bool] = ok.tolist()
    return out


def _measure_dual(shadow: Shadow, run: DualFn, points: Sequence[Point], floats: list[Any], bits: int) -> list[Sample] | None:
    """Values and gradients in one pass (numerics/dual.py); None when that pass raised."""
    n = len(points)
    try:
        zero = mpfr.exact(0.0)
        columns = {k: [zero + v if v.__class__ is float else v for v in (p[k] for p in points)] for k in points[0]}
        for name in shadow.vary:
            columns[f"<seed {name}>"] = [1 if _movable(p.get(name)) else 0 for p in points]
        values, grads = run(columns, n)
        if any(v.__class__ is not mpfr.MPFR for v in values):
            return None  # an int or a tuple output: the general path
        conds = column_conditions(points, shadow.vary, values, grads)
    except FATAL:
        raise
    except Exception:
        return None
    return finish_column(shadow, points, floats, values, bits, conds)


def _movable(v: Any) -> bool:
    return v.__class__ is float and v != 0 and math.isfinite(v)
