"""The two backends of the shadow evaluator: float (the code as written) and reference (mpmath)."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import gmpy2
import mpmath

from auditor.numerics import mpfr
from auditor.numerics.allow import _BUILTINS, CONSTANTS, DTYPES, Pair, lookup
from auditor.numerics.budget import NotEvaluable

#: Builtins whose mpmath-side implementation is indifferent to the number type.
_GENERIC_BUILTINS = frozenset(_BUILTINS) - {"complex", "round"}


@dataclass(frozen=True, slots=True)
class Backend:
    """How literals, constants and allowed functions look in one backend."""

    reference: bool  #: False: float run with the real functions; True: mpmath at the working precision
    fast: bool = False  #: with `reference`: MPFR (gmpy2) numbers, scalar operations only (numerics/mpfr.py)

    @property
    def name(self) -> str:
        return ("fast reference" if self.fast else "reference") if self.reference else "float"

    def literal(self, value: Any) -> Any:
        """A numeric literal: floats enter the reference as their exact binary value."""
        if not self.reference or isinstance(value, (bool, int)) or value is None:
            return value
        if isinstance(value, float):
            return gmpy2.mpfr(value) if self.fast else mpmath.mpf(value)  # 53 bits or more: exact
        if isinstance(value, complex):
            if self.fast:
                raise NotEvaluable("complex numbers are left to the mpmath reference")
            return mpmath.mpc(value)
        return value

    def constant(self, qualname: str) -> Any | None:
        """`math.pi`, `np.inf`, dtype objects; None when the name is no allowed constant."""
        if qualname in CONSTANTS:
            return self.literal(CONSTANTS[qualname])
        if qualname in DTYPES:
            return DTYPES[qualname]
        return None

    def function(self, qualname: str) -> Any | None:
        if self.fast:
            return _fast_function(qualname)
        pair: Pair | None = lookup(qualname)
        if pair is None:
            return None
        return pair[1] if self.reference else pair[0]

    def input(self, value: Any) -> Any:
        """An input value: exact binary value in the reference, unchanged in the float run."""
        return self.literal(value) if self.reference else value


def _fast_function(qualname: str) -> Any | None:
    found = mpfr.functions().get(qualname)
    if found is None and qualname in _GENERIC_BUILTINS:
        found = _BUILTINS[qualname][1]
    return found


FLOAT = Backend(reference=False)
REFERENCE = Backend(reference=True)
FAST = Backend(reference=True, fast=True)
