"""Verify a rewrite against the original on the same samples (both measured by the dynamic pass)."""
from __future__ import annotations

from collections.abc import Sequence

from auditor.numerics import metrics as mx
from auditor.numerics.reference import agree
from auditor.numerics.run import SAME_VALUE_DIGITS, Sample

#: After the rewrite, the worst loss may exceed what the condition number explains by this much.
WITHIN_CONDITION = 1.0
#: No sample may get worse than this many digits.
WORSE_ALLOWED = 0.5


def verify_rewrite(before: Sequence[Sample], after: Sequence[Sample]) -> tuple[bool, str]:
    """(verified, why). Verified only if the rewrite computes the same values, its worst loss
    is within WITHIN_CONDITION digits of what the condition number explains, and no sample
    gets worse by more than WORSE_ALLOWED digits."""
    by_input = {_key(a.inputs): a for a in after}
    pairs = [(b, by_input[_key(b.inputs)]) for b in before if b.digits_lost is not None and _key(b.inputs) in by_input]
    if not pairs:
        return False, "no sample measured"
    for b, a in pairs:
        if a.digits_lost is None:
            return False, f"the rewrite could not be measured at {b.inputs} ({a.note or 'excluded'})"
        if not agree(b.reference, a.reference, SAME_VALUE_DIGITS):
            return False, f"the rewrite computes a different value at {b.inputs}"
    excess = max((a.digits_lost or 0.0) - mx.explained(b.condition_log10) for b, a in pairs)
    # Compared as relative errors, so a float32 original and a float64 rewrite compare fairly.
    worse = max(((a.digits_lost or 0.0) - a.digits) - ((b.digits_lost or 0.0) - b.digits) for b, a in pairs)
    if excess > WITHIN_CONDITION:
        return False, f"the rewrite still loses {excess:.1f} digits more than the condition number explains"
    if worse > WORSE_ALLOWED:
        return False, f"the rewrite is worse by {worse:.1f} digits at some input"
    return True, "verified on the same samples"


def _key(inputs: dict[str, object]) -> tuple[tuple[str, object], ...]:
    return tuple(sorted(inputs.items()))
