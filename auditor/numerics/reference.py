"""The high-precision reference: raise the working precision until the value stops changing."""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import mpmath

from auditor.numerics.mpfr import as_mpf

#: First working precision in bits (about 38 decimal digits).
START_BITS = 128
#: Precision cap; past it the reference is declared not converged.
CAP_BITS = 10_000
#: Significant decimal digits two successive precisions must share.
AGREE_DIGITS = 30
#: Extra bits kept above the precision the pilot samples needed, so later samples that
#: cancel a little more still get 30 digits (checked again where the float run lost most).
MARGIN_BITS = 64


class NotConverged(Exception):
    """The value kept changing up to CAP_BITS."""


@dataclass(frozen=True, slots=True)
class Converged:
    value: Any  #: the value at `bits`, good to AGREE_DIGITS significant digits
    bits: int  #: the precision that produced it


def agree(a: Any, b: Any, digits: float = AGREE_DIGITS) -> bool:
    """True when a and b share `digits` significant digits (both exactly 0 also agree)."""
    if isinstance(a, (tuple, list)) or isinstance(b, (tuple, list)):
        return len(a) == len(b) and all(agree(x, y, digits) for x, y in zip(a, b))
    if a.__class__ is not b.__class__:
        a, b = as_mpf(a), as_mpf(b)  # an MPFR value and an mpmath one (a sample mpmath re-evaluated)
    if a == b:
        return True
    scale = max(abs(a), abs(b))
    return bool(abs(a - b) <= scale * 10.0 ** (-digits))  # the tolerance need not be exact


def converge(evaluate: Callable[[int], Any], start: int = START_BITS, cap: int = CAP_BITS) -> Converged:
    """Evaluate at start, 2*start, ... bits until two successive values agree; the lower one is kept."""
    bits = start
    previous = evaluate(bits)
    while bits < cap:
        higher = min(cap, bits * 2)
        value = evaluate(higher)
        if agree(previous, value):
            return Converged(previous, bits)
        previous, bits = value, higher
    raise NotConverged(f"the reference kept changing up to {cap} bits")


def at_precision(fn: Callable[..., Any], bits: int, inputs: dict[str, Any]) -> Any:
    """fn(**inputs) inside a local mpmath working precision."""
    with mpmath.workprec(bits):
        return fn(**inputs)
