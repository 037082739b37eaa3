"""Run a compiled unit over its samples in both backends and reduce the results to figures."""
from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import mpmath
import numpy as np

from auditor.numerics import metrics as mx
from auditor.numerics.budget import Budget, BudgetExceeded, NotEvaluable
from auditor.numerics.interp import Tracer
from auditor.numerics.reference import AGREE_DIGITS, MARGIN_BITS, START_BITS, NotConverged, converge

#: Wall-clock allowance for all samples of one unit; past it the samples done so far are used.
UNIT_SECONDS = 8.0
PILOT = 6


@dataclass(slots=True)
class Shadow:
    """One unit compiled for both backends, with the variables it is conditioned on."""

    float_fn: Callable[..., Any]
    ref_fn: Callable[..., Any]
    vary: tuple[str, ...]  #: float inputs (condition number is taken over these only)
    budget: Budget
    float_tracer: Tracer = field(default_factory=Tracer)
    ref_tracer: Tracer = field(default_factory=Tracer)


@dataclass(frozen=True, slots=True)
class Sample:
    """One input point and what both runs gave there."""

    inputs: dict[str, Any]
    float_value: Any = None  #: the float result (the output component that lost most)
    reference: Any = None  #: converged mpf (None when excluded)
    digits_lost: float | None = None
    condition_log10: float | None = None
    bits: int = 0  #: precision of the reference
    note: str = ""  #: why the sample was excluded, if it was


def flatten(value: Any) -> list[Any]:
    """Output components: a scalar, or the elements of a tuple, list or array."""
    if isinstance(value, (tuple, list)):
        return [x for v in value for x in flatten(v)]
    if isinstance(value, np.ndarray):
        return [x for v in value.ravel().tolist() for x in flatten(v)] if value.dtype == object else list(value.ravel())
    return [value]


def run_float(shadow: Shadow, point: dict[str, Any]) -> Any:
    shadow.budget.restart()
    with np.errstate(all="ignore"):
        return shadow.float_fn(**point)


def run_ref(shadow: Shadow, point: dict[str, Any], bits: int) -> Any:
    shadow.budget.restart()
    with mpmath.workprec(bits), np.errstate(all="ignore"):
        return shadow.ref_fn(**{k: _mp(v) for k, v in point.items()})


def _mp(v: Any) -> Any:
    return mpmath.mpf(v) if isinstance(v, float) else v


def settle_bits(shadow: Shadow, points: Sequence[dict[str, Any]]) -> int:
    """Precision the pilot points need for 30 stable digits, plus a margin (once per unit)."""
    pilot = _pilot(points, shadow.vary)
    needed = START_BITS
    for point in pilot:
        try:
            needed = max(needed, converge(lambda b: run_ref(shadow, point, b)).bits)
        except (NotConverged, ArithmeticError, ValueError, TypeError, IndexError):
            continue  # this sample is judged again (and excluded if need be) in the main pass
    return needed + MARGIN_BITS


def _pilot(points: Sequence[dict[str, Any]], vary: Sequence[str]) -> list[dict[str, Any]]:
    chosen = list(range(min(PILOT, len(points))))
    for name in vary:
        sizes = [abs(p[name]) if isinstance(p.get(name), float) else 0.0 for p in points]
        if sizes:
            chosen += [int(np.argmin(sizes)), int(np.argmax(sizes))]
    return [points[i] for i in sorted(set(chosen))]


def _needs_recheck(loss: float, digits: float, bits: int) -> bool:
    """The float run is a proxy for cancellation in the reference run (same operations):
    recheck where it lost more than the reference can spare, or lost everything."""
    spare = bits * math.log10(2) - AGREE_DIGITS - 2
    return loss >= digits - 0.05 or loss > spare


_FATAL = (NotEvaluable,)  # BudgetExceeded is a NotEvaluable: a runaway unit stops the whole unit


def measure_sample(shadow: Shadow, point: dict[str, Any], bits: int) -> Sample:
    """Float run, reference run (rechecked where needed), digits lost and condition at one point."""
    try:
        fv = flatten(run_float(shadow, point))
    except _FATAL:
        raise
    except Exception as exc:  # the code's own failure at this input: the sample is outside its domain
        return Sample(point, note=f"float run raised {type(exc).__name__}")
    try:
        rv = flatten(run_ref(shadow, point, bits))
    except _FATAL:
        raise
    except Exception as exc:
        return Sample(point, note=f"reference run raised {type(exc).__name__}")
    if len(rv) != len(fv):
        return Sample(point, note="float and reference runs returned different shapes")
    j, loss = _worst_component(fv, rv)
    if _needs_recheck(loss, mx.digits_of(fv[j]), bits):
        try:
            found = converge(lambda b: flatten(run_ref(shadow, point, b)), start=bits)
        except NotConverged as exc:
            return Sample(point, float_value=fv[j], note=str(exc))
        except _FATAL:
            raise
        except Exception as exc:
            return Sample(point, note=f"reference run raised {type(exc).__name__}")
        rv, bits = found.value, found.bits
        j, loss = _worst_component(fv, rv)
    if mx.out_of_range(rv[j]):
        return Sample(point, float_value=fv[j], reference=rv[j], note="exact result outside the float64 range")
    cond = _condition(shadow, point, rv[j], j, bits)
    return Sample(point, fv[j], rv[j], loss, cond, bits)


def _worst_component(fv: list[Any], rv: list[Any]) -> tuple[int, float]:
    if len(fv) == 1:
        return 0, mx.digits_lost(fv[0], rv[0], mx.digits_of(fv[0]))
    losses = [mx.digits_lost(f, r, mx.digits_of(f)) for f, r in zip(fv, rv)]
    j = int(np.argmax(losses))
    return j, losses[j]


def _condition(shadow: Shadow, point: dict[str, Any], base: Any, j: int, bits: int) -> float | None:
    """Forward differences at the reference precision over the unit's float inputs only."""
    shifted = []
    for name in shadow.vary:
        x = point.get(name)
        if not isinstance(x, float) or x == 0 or not math.isfinite(x):
            continue  # |x df/dx| = 0 at x = 0; integers and literals are not varied
        with mpmath.workprec(bits):
            moved = mpmath.mpf(x) * (1 + mpmath.ldexp(1, -mx.STEP_BITS))
        try:
            shifted.append(flatten(run_ref(shadow, {**point, name: moved}, bits))[j])
        except _FATAL:
            raise
        except Exception:
            return None  # the step left the domain (a branch point or a domain edge)
    if not shifted:
        return None if base == 0 else -math.inf
    with mpmath.workprec(bits):
        return mx.condition_log10(base, shifted)


def measure_points(shadow: Shadow, points: Sequence[dict[str, Any]], seconds: float = UNIT_SECONDS) -> tuple[list[Sample], int, str]:
    """Every point measured (until the unit's time allowance runs out): samples, bits, note."""
    deadline = time.monotonic() + seconds
    bits = settle_bits(shadow, points)
    samples: list[Sample] = []
    for point in points:
        samples.append(measure_sample(shadow, point, bits))
        if time.monotonic() > deadline and len(samples) < len(points):
            return samples, bits, f"stopped after {len(samples)} of {len(points)} samples (time allowance {seconds:g} s)"
    return samples, bits, ""


def trace_terms(shadow: Shadow, point: dict[str, Any], bits: int) -> tuple[list[Any], list[Any]]:
    """Rerun one point with term tracing on: (float terms, reference terms)."""
    if not shadow.ref_tracer.nodes:
        return [], []
    shadow.float_tracer.log, shadow.ref_tracer.log = [], []
    try:
        run_float(shadow, point)
        run_ref(shadow, point, bits)
        return list(shadow.float_tracer.log), list(shadow.ref_tracer.log)
    except Exception:
        return [], []
    finally:
        shadow.float_tracer.log = shadow.ref_tracer.log = None
