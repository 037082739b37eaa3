"""Limits on one shadow evaluation (steps, wall time, integer sizes) and the errors they raise."""
from __future__ import annotations

import time

#: Loop passes (all loops together) allowed in one evaluation of a unit.
MAX_STEPS = 1_000_000
#: Largest integer, in bits, the interpreter lets exist (10**10**10 is refused before it is built).
MAX_INT_BITS = 1 << 16
#: Largest argument of an exact factorial (math.factorial(10**9) would run for hours).
MAX_FACTORIAL = 5_000
#: Largest list or array the interpreter builds.
MAX_LENGTH = 100_000
#: Depth of calls into other functions of the same file.
MAX_CALL_DEPTH = 32


class NotEvaluable(Exception):
    """The unit uses something the interpreter does not allow or know; the message names it."""


class BudgetExceeded(NotEvaluable):
    """The unit ran out of steps or time, or asked for an absurdly large number."""


class Budget:
    """Counts loop passes and checks the clock every 256 of them (cheap enough per pass)."""

    __slots__ = ("steps", "deadline", "seconds", "depth")

    def __init__(self, seconds: float = 2.0) -> None:
        self.seconds = seconds
        self.steps = 0
        self.depth = 0
        self.deadline = time.monotonic() + seconds

    def restart(self) -> None:
        """A fresh allowance for the next evaluation."""
        self.steps = 0
        self.depth = 0
        self.deadline = time.monotonic() + self.seconds

    def tick(self) -> None:
        self.steps += 1
        if self.steps & 255 == 0:
            if self.steps > MAX_STEPS:
                raise BudgetExceeded(f"ran past {MAX_STEPS} loop passes (runaway loop)")
            if time.monotonic() > self.deadline:
                raise BudgetExceeded(f"ran past the {self.seconds:g} s budget per evaluation")

    def check_time(self) -> None:
        if time.monotonic() > self.deadline:
            raise BudgetExceeded(f"ran past the {self.seconds:g} s budget per evaluation")


def check_int(value: object) -> object:
    """Refuse integers too large to be a sensible numeric input."""
    if isinstance(value, int) and value.bit_length() > MAX_INT_BITS:
        raise BudgetExceeded(f"integer of more than {MAX_INT_BITS} bits")
    return value


def checked_pow(base: object, exponent: object) -> object:
    """`base ** exponent`, refusing integer powers whose result would be huge (10**10**10)."""
    if isinstance(base, int) and isinstance(exponent, int) and exponent > 0:
        if abs(base) > 1 and base.bit_length() * exponent > MAX_INT_BITS:
            raise BudgetExceeded(f"integer power {base}**{exponent} is too large")
    return base ** exponent  # type: ignore[operator]


def checked_mul(a: object, b: object) -> object:
    """`a * b`, refusing huge integers and huge repeated sequences before they are built."""
    ta, tb = a.__class__, b.__class__
    if ta is list or ta is tuple or tb is list or tb is tuple:
        seq, count = (a, b) if ta in (list, tuple) else (b, a)
        if not isinstance(count, int) or len(seq) * max(count, 0) > MAX_LENGTH:  # type: ignore[arg-type]
            raise BudgetExceeded("sequence repetition too long")
    result = a * b  # type: ignore[operator]
    if result.__class__ is int and result.bit_length() > MAX_INT_BITS:
        raise BudgetExceeded(f"integer of more than {MAX_INT_BITS} bits")
    return result
