"""Measure a rewrite on the original's samples and verify it against the original."""
from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from auditor.numerics import metrics as mx
from auditor.numerics.reference import START_BITS, agree
from auditor.numerics.figures import column_losses
from auditor.numerics.normwise import again_normwise
from auditor.numerics.run import FATAL, Sample, Shadow, spread, flatten, quiet, run_float, run_ref, uses_arrays
from auditor.numerics.sweep import float_column

#: After the rewrite, the worst loss may exceed what the condition number explains by this much.
WITHIN_CONDITION = 1.0
#: Extra digits allowed a rewrite of a unit with matrix inputs: the forward error of a backward-
#: stable solve is bounded by c(n) kappa(A) u with c(n) growing with the dimension (gamma_n = n u
#: in the LU and Householder QR error bounds: Higham, Accuracy and Stability of Numerical
#: Algorithms, chapters 9 and 19, from memory); log10 of the 10 rows sampled at most.
MATRIX_ALLOWANCE = 1.0
#: No sample may get worse than this many digits. With matrix inputs, samples where the rewrite
#: stays under the reporting threshold do not count: at kappa(A) near 1 a QR or SVD solve loses
#: a digit more than the normal equations, a difference of rounding constants, not of stability.
WORSE_ALLOWED = 0.5
#: Samples on which a rewrite's own reference is computed to check it is the same function.
SAME_FUNCTION_CHECKS = 16
#: Same-function tolerance: references within one float64 unit roundoff (2^-52 relative), so a
#: float user cannot tell them apart; this admits replacing a truncated series by its closed form.
SAME_VALUE_DIGITS = 15.65


def verify_rewrite(before: Sequence[Sample], after: Sequence[Sample]) -> tuple[bool, str]:
    """(verified, why). Verified only if the rewrite computes the same values, its worst loss
    is within WITHIN_CONDITION digits of what the condition number explains, and no sample
    gets worse by more than WORSE_ALLOWED digits."""
    pairs = _pairs(before, after)
    if not pairs:
        return False, "no sample measured"
    for b, a in pairs:
        if a.digits_lost is None:
            return False, f"the rewrite could not be measured at {b.inputs} ({a.note or 'excluded'})"
        if a.reference is not b.reference and not agree(_value(b), _value(a), SAME_VALUE_DIGITS):
            return False, f"the rewrite computes a different value at {b.inputs}"
    excess = max((a.digits_lost or 0.0) - mx.explained(b.condition_log10) - (MATRIX_ALLOWANCE if b.whole is not None else 0.0)
                 for b, a in pairs)
    # Compared as relative errors, so a float32 original and a float64 rewrite compare fairly.
    worse = max((((a.digits_lost or 0.0) - a.digits) - ((b.digits_lost or 0.0) - b.digits) for b, a in pairs
                 if b.whole is None or (a.digits_lost or 0.0) >= mx.BENIGN_BELOW), default=0.0)
    if excess > WITHIN_CONDITION:
        return False, f"the rewrite still loses {excess:.1f} digits more than the condition number explains"
    if worse > WORSE_ALLOWED:
        return False, f"the rewrite is worse by {worse:.1f} digits at some input"
    return True, "verified on the same samples"


def _pairs(before: Sequence[Sample], after: Sequence[Sample]) -> list[tuple[Sample, Sample]]:
    """Measured originals with the rewrite's sample at the same inputs (by position when
    `remeasure` made them, else by input values)."""
    if len(before) == len(after) and all(b.inputs is a.inputs for b, a in zip(before, after)):
        return [(b, a) for b, a in zip(before, after) if b.digits_lost is not None]
    by_input = {_key(a.inputs): a for a in after}
    return [(b, by_input[_key(b.inputs)]) for b in before if b.digits_lost is not None and _key(b.inputs) in by_input]


def _value(s: Sample) -> Any:
    """What the same-function check compares: the whole output where it was measured norm-wise."""
    return list(s.whole) if s.whole is not None else s.reference


def _key(inputs: dict[str, object]) -> tuple[tuple[str, object], ...]:
    return tuple(sorted(inputs.items()))


def remeasure(shadow: Shadow, before: Sequence[Sample]) -> list[Sample]:
    """A rewrite on the original's samples: its float run against the original's reference (the
    same function's exact value) and the original's condition number. Its own reference is
    computed on SAME_FUNCTION_CHECKS samples, spread out and including the worst ones, so a
    rewrite computing a different function is caught without paying a reference per sample;
    when one is caught, every sample is measured against the rewrite's own reference instead
    (its digits lost are then its own arithmetic's, e.g. a closed form replacing a series)."""
    measured = [i for i, b in enumerate(before) if b.digits_lost is not None]
    check = set(spread(measured, SAME_FUNCTION_CHECKS)) if measured else set()
    bits = max([b.bits for b in before if b.bits] or [START_BITS])  # excluded samples carry no precision
    uses_arrays(shadow, [b.inputs for b in before])
    with quiet(bits):
        column = _again_column(shadow, before, check)
        out = column if column is not None else [_again(shadow, b, i in check) for i, b in enumerate(before)]
        worst = sorted(range(len(out)), key=lambda i: -(out[i].digits_lost or 0.0))[:2]
        for i in worst:
            if i not in check and out[i].digits_lost is not None:
                out[i] = _again(shadow, before[i], True)
        if any(a.digits_lost is not None and a.reference is not b.reference
               and not agree(_value(a), _value(b), SAME_VALUE_DIGITS) for a, b in zip(out, before)):
            out = [_again(shadow, b, True, against_own=True) for b in before]
    return out


def _again(shadow: Shadow, b: Sample, own_reference: bool, against_own: bool = False) -> Sample:
    if b.digits_lost is None:
        return Sample(b.inputs, note=b.note or "excluded in the original")
    rv: list[object] = []
    try:
        fv = flatten(run_float(shadow, b.inputs))
        reference = b.reference
        if own_reference:
            rv = flatten(run_ref(shadow, b.inputs, b.bits))
            reference = rv[b.component] if b.component < len(rv) else None
    except FATAL:
        raise
    except Exception as exc:
        return Sample(b.inputs, note=f"rewrite raised {type(exc).__name__}")
    if b.whole is not None:
        return _again_whole(b, fv, rv if own_reference else None, against_own)
    if b.component >= len(fv) or reference is None:
        return Sample(b.inputs, note="the rewrite returns fewer values")
    f = fv[b.component]
    loss = mx.digits_lost(f, reference if against_own else b.reference, mx.digits_of(f))
    return Sample(b.inputs, f, reference, loss, b.condition_log10, b.bits, digits=mx.digits_of(f), component=b.component)


def _again_column(shadow: Shadow, before: Sequence[Sample], check: set[int]) -> list[Sample] | None:
    """`_again` for all samples with the rewrite's float run done column-wise (numerics/sweep.py);
    None when the rewrite has no column form or the column is not plain floats against MPFR."""
    measured = [b for b in before if b.digits_lost is not None]
    if not measured or any(b.component != 0 for b in measured):
        return None
    floats = float_column(shadow, [b.inputs for b in measured])
    losses = column_losses(floats, [b.reference for b in measured]) if floats is not None else None
    if floats is None or losses is None:
        return None
    again = iter(Sample(b.inputs, f, b.reference, loss, b.condition_log10, b.bits)
                 for b, f, loss in zip(measured, floats, losses))
    out = [next(again) if b.digits_lost is not None else _again(shadow, b, False) for b in before]
    for i in check:
        out[i] = _again(shadow, before[i], True)
    return out


def _again_whole(b: Sample, fv: list[Any], own: list[Any] | None, against_own: bool) -> Sample:
    """A norm-wise sample (matrix inputs) of the rewrite: its whole output against the original's
    reference vector, or against its own where that was asked for."""
    whole = b.whole if own is None else tuple(own)
    assert whole is not None
    if len(fv) != len(whole):
        return Sample(b.inputs, note="the rewrite returns a different number of values")
    loss, j = again_normwise(fv, whole if against_own else b.whole or whole)
    return Sample(b.inputs, fv[j], whole[j], loss, b.condition_log10, b.bits, digits=mx.digits_of(fv[j]), component=j, whole=whole)
