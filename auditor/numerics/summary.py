"""Reduce measured samples to the contract's Measurement: worst case, median, verdict, reason."""
from __future__ import annotations

import math
import statistics
from collections import Counter
from collections.abc import Sequence
from typing import Any

import mpmath

from auditor.model import Measurement, SeriesFigures, Verdict
from auditor.numerics import metrics as mx
from auditor.numerics.mpfr import as_mpf
from auditor.numerics.run import Sample


def not_measured(reason: str, samples: int = 0) -> Measurement:
    return Measurement(samples, None, None, None, {}, None, None, Verdict.NOT_MEASURED, reason)


def _plain(value: Any) -> Any:
    if isinstance(value, bool):
        return value
    try:
        return int(value) if isinstance(value, int) else float(value)
    except (TypeError, ValueError):
        return None


def reference_text(value: Any) -> str | None:
    """The converged reference as a decimal string of 32 significant digits."""
    if value is None:
        return None
    try:
        return str(mpmath.nstr(as_mpf(value), 32, min_fixed=-4, max_fixed=6))
    except (TypeError, ValueError):
        return str(value)


def worst_of(samples: Sequence[Sample]) -> Sample | None:
    measured = [s for s in samples if s.digits_lost is not None]
    if not measured:
        return None
    return max(measured, key=lambda s: s.digits_lost or 0.0)


def _float_out(value: Any) -> float | None:
    try:
        out = float(value) if not isinstance(value, complex) else abs(value)
    except (TypeError, ValueError):
        return None
    return out


def summarize(samples: Sequence[Sample], inputs_reason: str, note: str = "", series: SeriesFigures | None = None) -> Measurement:
    """The Measurement over all samples; excluded samples are counted in the reason."""
    measured = [s for s in samples if s.digits_lost is not None]
    excluded = Counter(s.note for s in samples if s.digits_lost is None)
    if not measured:
        why = excluded.most_common(1)[0][0] if excluded else "no input samples"
        return not_measured(f"no sample could be measured: {why}; {inputs_reason}", len(samples))
    losses = [s.digits_lost or 0.0 for s in measured]
    conds = [s.condition_log10 for s in measured]
    worst = worst_of(measured)
    assert worst is not None
    finite = [c for c in conds if c is not None and math.isfinite(c)]
    verdict = mx.verdict(losses, conds)
    parts = [_explain(verdict, worst), inputs_reason]
    if excluded:
        parts.append("excluded: " + "; ".join(f"{n} sample(s): {why}" for why, n in excluded.most_common()))
    if any(c is not None and c == math.inf for c in conds):
        parts.append("the condition number is infinite where the exact result is 0")
    if isinstance(worst.reference, bool):
        parts.append("a true/false result: no digit is lost where the float test agrees with the exact one, "
                     "all where it does not")
    if note:
        parts.append(note)
    return Measurement(
        samples=len(measured),
        digits_lost_max=round(max(losses), 2),
        digits_lost_median=round(statistics.median(losses), 2),
        condition_log10_max=round(max(finite), 2) if finite else None,
        worst_inputs={k: _plain(v) for k, v in worst.inputs.items() if v.__class__ is not tuple},
        float_value=_float_out(worst.float_value),
        reference_value=reference_text(worst.reference),
        verdict=verdict,
        reason="; ".join(p for p in parts if p),
        series=series,
    )


def _explain(verdict: Verdict, worst: Sample) -> str:
    loss = worst.digits_lost or 0.0
    cond = mx.explained(worst.condition_log10)
    where = ", ".join(f"{k}={_plain(v):.6g}" if isinstance(_plain(v), float) else f"{k}={v}"
                      for k, v in worst.inputs.items() if v.__class__ is not tuple) or "an array input"
    if verdict is Verdict.BENIGN:
        return f"at most {loss:.1f} digits lost (under the {mx.BENIGN_BELOW:g}-digit threshold)"
    if verdict is Verdict.UNSTABLE:
        return (f"the float code loses up to {loss:.1f} digits (at {where}), more than the condition number "
                f"explains ({cond:.1f}): the arithmetic, not the problem; a stable rewrite can help")
    return (f"up to {loss:.1f} digits lost (at {where}), explained by the condition number "
            f"(log10 {cond:.1f}): the problem itself amplifies input error")
