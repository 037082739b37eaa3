"""Run a compiled unit over its samples in both backends and reduce the results to figures."""
from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any, NamedTuple, TypeVar

import mpmath
import numpy as np
from mpmath import libmp

from auditor.numerics import metrics as mx
from auditor.numerics import mpfr
from auditor.numerics.budget import Budget, BudgetExceeded, NotEvaluable
from auditor.numerics.interp import Tracer
from auditor.numerics.reference import AGREE_DIGITS, MARGIN_BITS, START_BITS, NotConverged, converge

#: Loop passes (of the float run) one unit may spend on all its samples; units with long loops
#: are measured on fewer samples (deterministic, unlike a clock).
STEP_ALLOWANCE = 60_000
MIN_SAMPLES = 8
#: Safety net on a unit's wall-clock time.
HARD_SECONDS = 10.0
#: Loop passes above which only two pilot points settle the precision.
LONG_LOOP = 2_000
PILOT = 6
#: Samples of a unit with matrix inputs (each reference factors small matrices in mpmath).
MATRIX_SAMPLES = 64


@dataclass(slots=True)
class Shadow:
    """One unit compiled for both backends, with the variables it is conditioned on."""

    float_fn: Callable[..., Any]
    ref_fn: Callable[..., Any]
    vary: tuple[str, ...]  #: float inputs (condition number is taken over these only)
    budget: Budget
    float_tracer: Tracer = field(default_factory=Tracer)
    ref_tracer: Tracer = field(default_factory=Tracer)
    arrays: bool = True  #: some input is an array (a tuple of floats); set per batch by `uses_arrays`
    conditions: bool = True  #: compute condition numbers (off only to time the bare float + reference pass)
    fast_fn: Callable[..., Any] | None = None  #: the unit on MPFR numbers (None: it needs mpmath)
    batches: tuple[Any, Any, Any, Any] | None = None  #: column-wise float, mpmath, MPFR, MPFR-with-gradient twins
    fast: bool = False  #: use `fast_fn` for this batch (scalar inputs only); set by `uses_arrays`
    matrices: tuple[str, ...] = ()  #: matrix inputs of this batch: norm-wise loss, kappa(A) (numerics/normwise.py)


def uses_arrays(shadow: Shadow, points: Sequence[dict[str, Any]]) -> None:
    shadow.arrays = any(v.__class__ is tuple for p in points[:1] for v in p.values())
    shadow.fast = shadow.fast_fn is not None and not shadow.arrays
    shadow.matrices = tuple(k for p in points[:1] for k, v in p.items() if v.__class__ is tuple and v and v[0].__class__ is tuple)


class Sample(NamedTuple):
    """One input point and what both runs gave there (immutable; a named tuple rather than a
    frozen dataclass because thousands are made per unit and this builds five times faster)."""

    inputs: dict[str, Any]
    float_value: Any = None  #: the float result (the output component that lost most)
    reference: Any = None  #: converged mpf or mpfr (None when excluded)
    digits_lost: float | None = None
    condition_log10: float | None = None
    bits: int = 0  #: precision of the reference
    note: str = ""  #: why the sample was excluded, if it was
    digits: float = mx.DIGITS_FLOAT64  #: digits the float result carries (7.22 for float32)
    component: int = 0  #: which output component (for tuple or array results)
    whole: tuple[Any, ...] | None = None  #: every reference component, for units measured norm-wise


def flatten(value: Any) -> list[Any]:
    """Output components: a scalar, or the elements of a tuple, list or array."""
    if isinstance(value, (tuple, list)):
        return [x for v in value for x in flatten(v)]
    if isinstance(value, np.ndarray):
        return [x for v in value.ravel().tolist() for x in flatten(v)] if value.dtype == object else list(value.ravel())
    return [value]


def run_float(shadow: Shadow, point: dict[str, Any]) -> Any:
    """The unit as written (callers silence numpy warnings once per batch: see `quiet`)."""
    shadow.budget.restart()
    if shadow.arrays:
        point = {k: np.array(v, dtype=np.float64) if v.__class__ is tuple else v for k, v in point.items()}
    return shadow.float_fn(**point)


def run_ref(shadow: Shadow, point: dict[str, Any], bits: int, fast: bool = True) -> Any:
    """The unit at `bits` on MPFR numbers where it can (`fast`), else in mpmath; the local
    contexts are entered only when not already there."""
    shadow.budget.restart()
    if fast and shadow.fast:
        try:
            return _run_fast(shadow, point, bits)
        except FATAL:
            raise
        except Exception:
            shadow.budget.restart()  # MPFR trapped a NaN or an infinity, or met a type it lacks: mpmath decides
    args = {k: _mp(v) for k, v in point.items()} if shadow.arrays else {k: _mp_scalar(v) for k, v in point.items()}
    if mpmath.mp.prec == bits:
        return shadow.ref_fn(**args)
    with mpmath.workprec(bits):
        return shadow.ref_fn(**args)


def _run_fast(shadow: Shadow, point: dict[str, Any], bits: int) -> Any:
    fn = shadow.fast_fn
    assert fn is not None
    if mpfr.active(bits):
        return fn(**{k: _EXACT(v) if v.__class__ is float else v for k, v in point.items()})
    with mpfr.context(bits):
        return fn(**{k: _EXACT(v) if v.__class__ is float else v for k, v in point.items()})


def _mp_scalar(v: Any) -> Any:
    if v.__class__ is float:
        return _MAKE(_from_float(v))
    return mpfr.as_mpf(v)


class quiet:
    """numpy warnings off and the working precisions (mpmath, MPFR) set, once for a whole batch."""

    def __init__(self, bits: int) -> None:
        self.contexts = (np.errstate(all="ignore"), mpmath.workprec(bits), mpfr.context(bits))

    def __enter__(self) -> None:
        for c in self.contexts:
            c.__enter__()

    def __exit__(self, *exc: object) -> None:
        for c in reversed(self.contexts):
            c.__exit__(*exc)


def _mp(v: Any) -> Any:
    if v.__class__ is tuple:
        return np.array([_mp(x) for x in v], dtype=object)
    return mpmath.mpf(v) if isinstance(v, float) else v


def settle_bits(shadow: Shadow, points: Sequence[dict[str, Any]], limit: int = PILOT + 8) -> int:
    """Precision the pilot points (at most `limit`) need for 30 stable digits, plus a margin
    (once per unit; samples that cancel more are rechecked in `measure_sample`)."""
    needed = START_BITS
    for point in _pilot(points, shadow.vary)[:limit]:
        try:
            needed = max(needed, converge(lambda b: run_ref(shadow, point, b)).bits)
        except FATAL:
            raise
        except Exception:
            pass  # this sample is judged again (and excluded if need be) in the main pass
    return needed + MARGIN_BITS


def _pilot(points: Sequence[dict[str, Any]], vary: Sequence[str]) -> list[dict[str, Any]]:
    chosen = [0]
    for name in vary:
        sizes = np.abs(np.array([v if v.__class__ is float else 0.0 for v in (p.get(name) for p in points)]))
        if sizes.size:
            chosen += [int(np.argmax(sizes)), int(np.argmin(sizes))]
    chosen += list(range(1, min(PILOT, len(points))))
    return [points[i] for i in dict.fromkeys(chosen)]


def _needs_recheck(loss: float, digits: float, bits: int) -> bool:
    """The float run is a proxy for cancellation in the reference run (same operations):
    recheck where it lost more than the reference can spare, or lost everything."""
    spare = bits * math.log10(2) - AGREE_DIGITS - 2
    return loss >= digits - 0.05 or loss > spare


FATAL = (NotEvaluable,)  # BudgetExceeded is a NotEvaluable: a runaway unit stops the whole unit


def measure_sample(shadow: Shadow, point: dict[str, Any], bits: int) -> Sample:
    """Float run, reference run (rechecked where needed), digits lost and condition at one point."""
    try:
        fv = flatten(run_float(shadow, point))
    except FATAL:
        raise
    except Exception as exc:  # the code's own failure at this input: the sample is outside its domain
        return Sample(point, note=f"float run raised {type(exc).__name__}")
    try:
        rv = flatten(run_ref(shadow, point, bits))
    except FATAL:
        raise
    except Exception as exc:
        return Sample(point, note=f"reference run raised {type(exc).__name__}")
    return finish_sample(shadow, point, fv, rv, bits)


def finish_sample(shadow: Shadow, point: dict[str, Any], fv: list[Any], rv: list[Any], bits: int,
                  condition: Callable[[Any, int], float | None] | None = None) -> Sample:
    """Digits lost (the reference rechecked where needed) and condition at one point, from its
    float and reference outputs; `condition(reference, component)`: the condition number where a
    column run prepared it at `bits` (numerics/sweep.py), else it is computed here."""
    if len(rv) != len(fv):
        return Sample(point, note="float and reference runs returned different shapes")
    if shadow.matrices:
        from auditor.numerics.normwise import finish_normwise  # it builds on this module

        return finish_normwise(shadow, point, fv, rv, bits)
    j, loss = _worst_component(fv, rv)
    if _needs_recheck(loss, mx.digits_of(fv[j]), bits):
        condition = None  # computed again at the higher precision
        try:
            found = converge(lambda b: flatten(run_ref(shadow, point, b)), start=bits)
        except NotConverged as exc:
            return Sample(point, float_value=fv[j], note=str(exc))
        except FATAL:
            raise
        except Exception as exc:
            return Sample(point, note=f"reference run raised {type(exc).__name__}")
        rv, bits = found.value, found.bits
        j, loss = _worst_component(fv, rv)
    if mx.out_of_range(rv[j]):
        return Sample(point, float_value=fv[j], reference=rv[j], note="exact result outside the float64 range")
    if not shadow.conditions:
        cond = None
    elif condition is not None:
        cond = condition(rv[j], j)
    else:
        cond = _condition(shadow, point, rv[j], j, bits)
    return Sample(point, fv[j], rv[j], loss, cond, bits, digits=mx.digits_of(fv[j]), component=j)


def _worst_component(fv: list[Any], rv: list[Any]) -> tuple[int, float]:
    if len(fv) == 1:
        return 0, mx.digits_lost(fv[0], rv[0], mx.digits_of(fv[0]))
    losses = [mx.digits_lost(f, r, mx.digits_of(f)) for f, r in zip(fv, rv)]
    j = int(np.argmax(losses))
    return j, losses[j]


def _condition(shadow: Shadow, point: dict[str, Any], base: Any, j: int, bits: int) -> float | None:
    """Forward differences at the reference precision over the unit's float inputs only."""
    shifted = []
    for name, moved in _moves(shadow, point, bits):
        try:
            shifted.append(flatten(run_ref(shadow, {**point, name: moved}, bits))[j])
        except FATAL:
            raise
        except Exception:
            return None  # the step left the domain (a branch point or a domain edge)
    return _condition_of(base, shifted)


def _condition_of(base: Any, shifted: list[Any]) -> float | None:
    if not shifted:
        return None if base == 0 else -math.inf
    return mx.condition_log10(base, shifted)


T = TypeVar("T")
_FACTOR = mpmath.mpf(1) + mpmath.ldexp(1, -mx.STEP_BITS)
_FACTOR_FLOAT = 1.0 + 2.0 ** -mx.STEP_BITS  # a float exactly (STEP_BITS < 53)
_MAKE = mpmath.mp.make_mpf
_EXACT = mpfr.exact
_from_float = libmp.from_float


def _moves(shadow: Shadow, point: dict[str, Any], bits: int) -> list[tuple[str, Any]]:
    """Each float input (and each element of an array input) times (1 + 2^-STEP_BITS)."""
    factor = _FACTOR  # 1 + 2^-30: x * factor is exact at any precision >= 84 bits (callers use >= 128)
    out: list[tuple[str, Any]] = []
    for name in shadow.vary:
        x = point.get(name)
        if x.__class__ is tuple:
            for i, v in enumerate(x):
                if isinstance(v, float) and v != 0 and math.isfinite(v):
                    out.append((name, tuple(mpmath.mpf(u) * factor if k == i else u for k, u in enumerate(x))))
        elif isinstance(x, float) and x != 0 and math.isfinite(x):  # |x df/dx| = 0 at x = 0: skipped
            if shadow.fast:
                out.append((name, _EXACT(x) * _FACTOR_FLOAT))  # exact: 53 + 31 bits < the precision
            else:
                out.append((name, _MAKE(libmp.mpf_mul(libmp.from_float(x), factor._mpf_, 0))))
    return out


def measure_points(shadow: Shadow, points: Sequence[dict[str, Any]], seconds: float = HARD_SECONDS) -> tuple[list[Sample], int, str]:
    """The points measured: samples, reference bits, and a note when fewer were measured.

    Units with long loops get fewer samples, chosen deterministically (same seed, same report):
    the loop passes of one float run set how many fit in STEP_ALLOWANCE (at least MIN_SAMPLES,
    spread evenly over the planned points). `seconds` is only a safety net on wall-clock time.
    """
    start = time.monotonic()
    uses_arrays(shadow, points)
    with quiet(START_BITS):
        steps = _float_first(shadow, points[0])
        bits = settle_bits(shadow, points, PILOT + 8 if steps <= LONG_LOOP else 2)
    count = len(points) if steps == 0 else max(MIN_SAMPLES, STEP_ALLOWANCE // steps)
    if shadow.matrices:
        count = min(count, MATRIX_SAMPLES)
    chosen = spread(points, count)
    samples: list[Sample] = []
    with quiet(bits):
        if steps == 0:
            from auditor.numerics.sweep import measure_split  # sweep builds on this module

            columns = measure_split(shadow, chosen, bits)
            if columns is not None:
                return columns, bits, ""
        for point in chosen:
            samples.append(measure_sample(shadow, point, bits))
            if time.monotonic() - start > seconds and len(samples) < len(chosen):
                return samples, bits, f"stopped after {len(samples)} of {len(points)} samples (time limit {seconds:g} s)"
    if shadow.matrices:
        from auditor.numerics.normwise import NORMWISE_NOTE

        fewer = f"measured {len(samples)} of {len(points)} samples (matrix inputs: each reference runs in mpmath); " if len(samples) < len(points) else ""
        return samples, bits, fewer + NORMWISE_NOTE
    if len(samples) < len(points):
        return samples, bits, f"measured {len(samples)} of {len(points)} samples (each runs {steps} loop passes)"
    return samples, bits, ""


def _float_first(shadow: Shadow, point: dict[str, Any]) -> int:
    """One cheap float run before any reference run: a runaway loop is caught at float speed,
    and its loop passes measure the unit's cost. Returns the loop passes."""
    try:
        run_float(shadow, point)
    except FATAL:
        raise
    except Exception:
        pass  # judged per sample later
    return shadow.budget.steps


def spread(points: Sequence[T], count: int) -> list[T]:
    """`count` items evenly spread over `points`, the first quarter kept in order."""
    if count >= len(points):
        return list(points)
    head = min(len(points), max(4, count // 4))
    step = (len(points) - head) / max(1, count - head)
    return [*points[:head], *(points[head + int(i * step)] for i in range(count - head))]


def trace_terms(shadow: Shadow, point: dict[str, Any], bits: int) -> tuple[list[Any], list[Any]]:
    """Rerun one point with term tracing on: (float terms, reference terms)."""
    if not shadow.ref_tracer.nodes:
        return [], []
    shadow.float_tracer.log, shadow.ref_tracer.log = [], []
    try:
        with quiet(bits):
            run_float(shadow, point)
            run_ref(shadow, point, bits, fast=False)  # the fast twin traces nothing
        return list(shadow.float_tracer.log), list(shadow.ref_tracer.log)
    except Exception:
        return [], []
    finally:
        shadow.float_tracer.log = shadow.ref_tracer.log = None
