"""The fast reference: scalar units evaluated on gmpy2 (MPFR) numbers instead of mpmath.

MPFR rounds every operation and elementary function correctly at the working precision, so its
values converge to the same 30 digits as mpmath's, several times faster (measured in
bench/dynamic_speed.py). Only scalar operations with an MPFR twin are allowed here; a unit
using anything else is compiled for mpmath alone. Evaluation runs under traps (invalid
operation, division by zero, overflow, underflow): where MPFR would make a NaN or an infinity,
the sample is evaluated again by mpmath, whose results (complex logarithms, errors) are the
reference's semantics.
"""
from __future__ import annotations

import math
from collections.abc import Callable
from functools import lru_cache
from typing import Any

import gmpy2
import mpmath
from mpmath import libmp

MPFR = type(gmpy2.mpfr(0))
_ZERO = gmpy2.mpfr(0)


_TRAPS = dict(emax=gmpy2.get_emax_max(), emin=gmpy2.get_emin_min(), trap_invalid=True, trap_divzero=True,
              trap_overflow=True, trap_underflow=True)


def context(bits: int) -> Any:
    """A new gmpy2 context at `bits`, traps on, the widest exponent range (mpmath has no
    overflow). New each time: gmpy2 cannot re-enter one context object while it is active."""
    return gmpy2.context(precision=bits, **_TRAPS)


def active(bits: int) -> bool:
    """True when the current gmpy2 context is a trapping one at `bits`."""
    current = gmpy2.get_context()
    return bool(current.precision == bits and current.trap_invalid)


def exact(x: float) -> Any:
    """The exact binary value of a float (inside a context of >= 53 bits: 0 + x is exact)."""
    return _ZERO + x


def is_mpfr(value: Any) -> bool:
    return value.__class__ is MPFR


def as_mpf(value: Any) -> Any:
    """An mpfr as an mpmath mpf with the same binary value (no rounding); others unchanged."""
    if value.__class__ is not MPFR:
        return value
    if gmpy2.is_zero(value):
        return mpmath.mpf(0)
    if not gmpy2.is_finite(value):
        return mpmath.mpf(float(value))
    man, exp = value.as_mantissa_exp()
    return mpmath.mp.make_mpf(libmp.from_man_exp(int(man), int(exp)))


def log10_abs(value: Any) -> float:
    """log10 |value| of a non-zero mpfr, in double precision (exponents beyond float range too)."""
    as_float = abs(float(value))
    if as_float == 0 or math.isinf(as_float):
        return float(gmpy2.log10(abs(value)))
    return math.log10(as_float)


def _log(x: Any, base: Any = None) -> Any:
    return gmpy2.log(x) if base is None else gmpy2.log(x) / gmpy2.log(base)


def _round(x: Any, ndigits: Any = None) -> Any:
    if ndigits is None:
        return int(gmpy2.rint(x))
    return gmpy2.rint(x * 10**ndigits) / 10**ndigits


def _hypot(*args: Any) -> Any:
    return gmpy2.sqrt(sum(a * a for a in args))


def _factorial(n: Any) -> Any:
    from auditor.numerics.allow import _factorial_float

    if isinstance(n, int):
        return _factorial_float(n)
    raise TypeError("factorial of a non-integer (left to mpmath)")


def _copysign(a: Any, b: Any) -> Any:
    return abs(a) if b >= 0 else -abs(a)


def _lgamma(x: Any) -> Any:
    return gmpy2.lgamma(x)[0]


def _identity(x: Any, *_: Any, **__: Any) -> Any:
    return x


_SAME = ("exp", "expm1", "log1p", "log10", "log2", "exp2", "sqrt", "cbrt", "sin", "cos", "tan", "atan2",
         "sinh", "cosh", "tanh", "asinh", "acosh", "atanh", "erf", "erfc", "gamma", "fmod")
_INVERSE = {"asin": "asin", "acos": "acos", "atan": "atan", "arcsin": "asin", "arccos": "acos", "arctan": "atan",
            "arctan2": "atan2", "arcsinh": "asinh", "arccosh": "acosh", "arctanh": "atanh"}
_SCIPY = {"expm1": gmpy2.expm1, "log1p": gmpy2.log1p, "erf": gmpy2.erf, "erfc": gmpy2.erfc, "gamma": gmpy2.gamma,
          "gammaln": _lgamma, "psi": gmpy2.digamma, "digamma": gmpy2.digamma, "j0": gmpy2.j0, "j1": gmpy2.j1,
          "y0": gmpy2.y0, "y1": gmpy2.y1}


@lru_cache(maxsize=1)
def functions() -> dict[str, Callable[..., Any]]:
    """Qualified name -> MPFR implementation, for scalar arguments only."""
    table: dict[str, Callable[..., Any]] = {}
    for module in ("math", "numpy", "cmath"):
        for name in _SAME:
            table[f"{module}.{name}"] = getattr(gmpy2, name)
        for name, twin in _INVERSE.items():
            table[f"{module}.{name}"] = getattr(gmpy2, twin)
        table[f"{module}.log"] = _log
    for name, twin in (("isnan", gmpy2.is_nan), ("isinf", gmpy2.is_infinite), ("isfinite", gmpy2.is_finite)):
        table[f"math.{name}"] = table[f"numpy.{name}"] = twin
    table.update({f"scipy.special.{n}": f for n, f in _SCIPY.items()})
    table.update({
        "math.hypot": _hypot, "numpy.hypot": _hypot, "math.pow": lambda x, y: x ** y, "numpy.power": lambda x, y: x ** y,
        "math.fabs": abs, "numpy.abs": abs, "numpy.absolute": abs, "numpy.fabs": abs, "numpy.square": lambda x: x * x,
        "math.factorial": _factorial, "math.comb": math.comb, "math.lgamma": _lgamma, "math.copysign": _copysign,
        "math.fsum": lambda v: gmpy2.fsum(list(v)), "math.floor": lambda x: int(gmpy2.floor(x)),
        "math.ceil": lambda x: int(gmpy2.ceil(x)), "math.trunc": int, "math.ldexp": gmpy2.mul_2exp,
        "math.degrees": lambda x: x * 180 / gmpy2.const_pi(), "math.radians": lambda x: x * gmpy2.const_pi() / 180,
        "numpy.float64": _identity, "numpy.float32": _identity, "numpy.float16": _identity,
        "numpy.double": _identity, "numpy.single": _identity, "round": _round,
    })
    return table
