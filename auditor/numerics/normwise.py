"""Units with matrix inputs: digits lost norm-wise over the output's components and the matrix
condition number kappa(A) in place of the componentwise one (a solve's sensitivity is kappa)."""
from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import mpmath

from auditor.numerics import metrics as mx
from auditor.numerics.linalg import kappa_log10
from auditor.numerics.reference import NotConverged, converge
from auditor.numerics.run import FATAL, Sample, Shadow, _needs_recheck, flatten, run_ref

NORMWISE_NOTE = (
    "matrix inputs: digits lost norm-wise, max(0, 15.95 + log10(||float - ref||_2 / ||ref||_2)) over the "
    "output's components; condition number kappa(A) = sigma_max / sigma_min of the matrix inputs (2-norm, "
    "mpmath.svd_r; the largest where there are several), not componentwise"
)


def _number(v: Any) -> Any:
    """A component as an mpmath number (bools as 0/1; floats exactly)."""
    if isinstance(v, (bool, int)):
        return mpmath.mpf(int(v))
    if isinstance(v, complex) or getattr(v, "imag", False):
        return mpmath.mpc(complex(v))
    return mpmath.mpf(float(v)) if not isinstance(v, (mpmath.mpf, mpmath.mpc)) else v


def normwise_lost(fv: Sequence[Any], rv: Sequence[Any], digits: float) -> float:
    """max(0, digits + log10(||f - r|| / ||r||)) in the 2-norm, capped at `digits` (CONTRACT.md's
    formula with norms for a vector or matrix output); a zero reference loses nothing only if
    the float output is zero too."""
    if not all(mx.is_finite_number(f) for f in fv):
        return digits
    f, r = [_number(v) for v in fv], [_number(v) for v in rv]
    ref = mpmath.sqrt(mpmath.fsum(abs(x) ** 2 for x in r))
    err = mpmath.sqrt(mpmath.fsum(abs(a - b) ** 2 for a, b in zip(f, r)))
    if ref == 0:
        return 0.0 if err == 0 else digits
    if err == 0:
        return 0.0
    return min(digits, max(0.0, digits + float(mpmath.log10(err / ref))))


def _worst_index(fv: Sequence[Any], rv: Sequence[Any]) -> int:
    """The component with the largest absolute error (shown as the float and reference values)."""
    errors = [abs(_number(f) - _number(r)) for f, r in zip(fv, rv)]
    return max(range(len(errors)), key=lambda i: errors[i]) if errors else 0


def finish_normwise(shadow: Shadow, point: dict[str, Any], fv: list[Any], rv: list[Any], bits: int) -> Sample:
    """Norm-wise digits lost (the reference rechecked at higher precision where the float run
    lost nearly everything) and kappa(A) at one point with matrix inputs."""
    digits = mx.digits_of(fv[0]) if fv else mx.DIGITS_FLOAT64
    loss = normwise_lost(fv, rv, digits)
    if _needs_recheck(loss, digits, bits):
        try:
            found = converge(lambda b: flatten(run_ref(shadow, point, b)), start=bits)
        except NotConverged as exc:
            return Sample(point, note=str(exc))
        except FATAL:
            raise
        except Exception as exc:
            return Sample(point, note=f"reference run raised {type(exc).__name__}")
        rv, bits = found.value, found.bits
        loss = normwise_lost(fv, rv, digits)
    if not rv or all(_out_of_range(r) for r in rv):
        return Sample(point, note="exact result outside the float64 range")
    try:
        cond = kappa_log10([point[name] for name in shadow.matrices]) if shadow.conditions else None
    except (ArithmeticError, ValueError, ZeroDivisionError):
        cond = None
    j = _worst_index(fv, rv)
    return Sample(point, fv[j], rv[j], loss, cond, bits, digits=digits, component=j, whole=tuple(rv))


def _out_of_range(r: Any) -> bool:
    if isinstance(r, bool):
        return False
    try:
        return mx.out_of_range(r) and r != 0
    except TypeError:
        return False


def again_normwise(fv: list[Any], whole: Sequence[Any]) -> tuple[float, int]:
    """A rewrite's norm-wise loss against a reference vector, and its worst component."""
    digits = mx.digits_of(fv[0]) if fv else mx.DIGITS_FLOAT64
    if len(fv) != len(whole):
        return digits, 0
    return normwise_lost(fv, whole, digits), _worst_index(fv, whole)

