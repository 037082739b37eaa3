"""Verify a series rewrite: a closed form for a truncated alternating series, or a smallest-term stop."""
from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import mpmath

from auditor.numerics import metrics as mx
from auditor.numerics.mpfr import as_mpf
from auditor.numerics.reference import START_BITS
from auditor.numerics.run import Sample, Shadow, quiet, spread, trace_terms, uses_arrays
from auditor.numerics.verify import WITHIN_CONDITION, WORSE_ALLOWED, _again

ALTERNATING = "alternating-series"
DIVERGENT = "divergent-series"
#: Samples whose terms are traced (each trace reruns the loop in mpmath): spread over the range,
#: the worst ones of the original added.
TRACED_SAMPLES = 32
#: Fewer usable traced samples than this and nothing is verified.
MIN_CHECKED = 4
#: One float64 unit roundoff, relative (2^-52).
ROUNDOFF = mpmath.ldexp(1, -52)


def verify_series(rule: str, original: Shadow, rewrite: Shadow, before: Sequence[Sample]) -> tuple[list[Sample], bool, str]:
    """The rewrite measured against its own reference on the original's samples, and (verified,
    why) by the series criterion of `rule` on up to TRACED_SAMPLES traced samples."""
    bits = max([b.bits for b in before if b.bits] or [START_BITS])
    uses_arrays(rewrite, [b.inputs for b in before])
    with quiet(bits):
        after = [_again(rewrite, b, True, against_own=True) for b in before]
    picked = _picked(before)
    if not picked:
        return after, False, "no sample measured"
    check = _alternating if rule == ALTERNATING else _divergent
    verdicts = [check(original, rewrite, before[i], after[i]) for i in picked]
    failed = next((why for ok, why in verdicts if ok is False), None)
    if failed is not None:
        return after, False, f"{_criterion(rule)}; {failed}"
    used = [i for i, (ok, _) in zip(picked, verdicts) if ok]
    skipped = len(picked) - len(used)
    where = f"{len(used)} of {len(picked)} traced samples (of {len(before)})" + (f", {skipped} excluded: {_first_note(verdicts)}" if skipped else "")
    if len(used) < MIN_CHECKED:
        return after, False, f"too few samples where the series criterion applies: {where}"
    # Every sample has the rewrite's own reference already: the accuracy criterion uses them all.
    measured = [i for i, b in enumerate(before) if b.digits_lost is not None]
    ok, why = _accuracy(before, after, measured, rule == ALTERNATING)
    return after, ok, f"{_criterion(rule)}; values checked on {where}; accuracy on all {len(measured)}: {why}"


def _picked(before: Sequence[Sample]) -> list[int]:
    measured = [i for i, b in enumerate(before) if b.digits_lost is not None]
    worst = sorted(measured, key=lambda i: -(before[i].digits_lost or 0.0))[:2]
    return sorted(set(spread(measured, TRACED_SAMPLES - len(worst))) | set(worst))


def _criterion(rule: str) -> str:
    if rule == ALTERNATING:
        return ("series criterion: the closed form agrees with the truncated alternating series within its "
                "truncation bound (last term summed, + 2^-52 relative)")
    return "series criterion: the stopped loop equals the series summed up to its smallest term (2^-52 relative)"


def _first_note(verdicts: list[tuple[bool | None, str]]) -> str:
    return next(why for ok, why in verdicts if ok is None)


def _terms(shadow: Shadow, b: Sample) -> list[Any]:
    return [mpmath.mpmathify(as_mpf(t)) for t in trace_terms(shadow, b.inputs, b.bits or START_BITS)[1]]


def _alternating(original: Shadow, rewrite: Shadow, b: Sample, a: Sample) -> tuple[bool | None, str]:
    """(True, "") when the closed form is within the truncation bound at this sample, (None, why)
    when the sample does not apply, (False, why) when it is outside the bound."""
    if a.reference is None:
        return False, f"the rewrite could not be measured at {b.inputs} ({a.note or 'excluded'})"
    terms = _terms(original, b)
    if len(terms) < 2:
        return None, "no series terms traced"
    if abs(terms[-1]) > abs(terms[-2]):
        return None, "terms still growing at the end of the loop (the series has not started converging)"
    with mpmath.workprec(max(b.bits, START_BITS)):
        orig, new = mpmath.mpmathify(as_mpf(b.reference)), mpmath.mpmathify(as_mpf(a.reference))
        bound = abs(terms[-1]) + ROUNDOFF * abs(orig)
        if abs(new - orig) > bound:
            return False, (f"the closed form differs from the series by more than its truncation bound at {b.inputs} "
                           f"({mpmath.nstr(abs(new - orig), 3)} > {mpmath.nstr(bound, 3)})")
    return True, ""


def _divergent(original: Shadow, rewrite: Shadow, b: Sample, a: Sample) -> tuple[bool | None, str]:
    """(True, "") when the rewrite's loop sums exactly the original's terms up to a smallest one."""
    if a.reference is None:
        return False, f"the rewrite could not be measured at {b.inputs} ({a.note or 'excluded'})"
    terms, mine = _terms(original, b), _terms(rewrite, b)
    if not terms or not mine:
        return None, "no series terms traced"
    with mpmath.workprec(max(b.bits, START_BITS)):
        mags = [abs(t) for t in terms]
        least = min((m for m in mags if m != 0), default=mpmath.mpf(0))
        # Ties (lam an integer gives |t_(lam-1)| = |t_lam|) make either stop optimal.
        stops = [k for k, m in enumerate(mags) if m == least]
        got = mpmath.fsum(mine)
        for k in stops:
            scale = mpmath.fsum(mags[:k + 1])
            if abs(got - mpmath.fsum(terms[:k + 1])) <= ROUNDOFF * scale:
                return True, ""
    return False, f"the stopped loop does not end at the smallest term at {b.inputs}"


def _accuracy(before: Sequence[Sample], after: Sequence[Sample], used: list[int], compare: bool) -> tuple[bool, str]:
    """The usual criterion on the `used` samples, each against its own reference: the worst loss
    within WITHIN_CONDITION digits of what the condition number explains and (when `compare`)
    no sample worse than the original by more than WORSE_ALLOWED digits."""
    pairs = [(before[i], after[i]) for i in used]
    if any(a.digits_lost is None for _, a in pairs):
        return False, "the rewrite could not be measured at some traced sample"
    excess = max((a.digits_lost or 0.0) - mx.explained(b.condition_log10) for b, a in pairs)
    worse = max(((a.digits_lost or 0.0) - a.digits) - ((b.digits_lost or 0.0) - b.digits) for b, a in pairs)
    if excess > WITHIN_CONDITION:
        return False, f"the rewrite still loses {excess:.1f} digits more than the condition number explains"
    if compare and worse > WORSE_ALLOWED:
        return False, f"the rewrite is worse by {worse:.1f} digits at some input"
    return True, "verified"
