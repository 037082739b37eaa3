"""The two backends of the shadow evaluator: float (the code as written) and reference (mpmath)."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import mpmath

from auditor.numerics.allow import CONSTANTS, DTYPES, Pair, lookup


@dataclass(frozen=True, slots=True)
class Backend:
    """How literals, constants and allowed functions look in one backend."""

    reference: bool  #: False: float run with the real functions; True: mpmath at the working precision

    @property
    def name(self) -> str:
        return "reference" if self.reference else "float"

    def literal(self, value: Any) -> Any:
        """A numeric literal: floats enter the reference as their exact binary value."""
        if not self.reference or isinstance(value, (bool, int)) or value is None:
            return value
        if isinstance(value, float):
            return mpmath.mpf(value)
        if isinstance(value, complex):
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
        pair: Pair | None = lookup(qualname)
        if pair is None:
            return None
        return pair[1] if self.reference else pair[0]

    def input(self, value: Any) -> Any:
        """An input value: exact binary value in the reference, unchanged in the float run."""
        return self.literal(value) if self.reference else value


FLOAT = Backend(reference=False)
REFERENCE = Backend(reference=True)
