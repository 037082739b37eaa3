"""The allow-list: every function and constant the shadow evaluator may call, as a
(float implementation, reference implementation) pair keyed by qualified name.

The float side is the real library function (math, cmath, numpy, scipy.special), so the
float run does exactly what the scanned code does; the reference side is its mpmath
equivalent, applied element by element to (object) arrays. Nothing outside this table runs.
"""
from __future__ import annotations

import builtins
import cmath
import math
from collections.abc import Callable, Iterable
from functools import lru_cache
from typing import Any

import mpmath
import numpy as np

from auditor.numerics.budget import MAX_FACTORIAL, MAX_LENGTH, BudgetExceeded, checked_pow

Pair = tuple[Callable[..., Any], Callable[..., Any]]


#: Largest binary exponent an mpmath argument may carry (|x| < 2**(2**20), about 1e315652).
#: Far beyond any float's range, so the verdict cannot depend on it, while elementary
#: functions of larger arguments can run for minutes and take gigabytes inside one call.
MAX_EXPONENT_BITS = 1 << 20


def _out_of_range(value: Any) -> bool:
    """True for an mpmath number whose binary exponent exceeds MAX_EXPONENT_BITS."""
    parts = (value._mpf_,) if hasattr(value, "_mpf_") else getattr(value, "_mpc_", ())
    for _sign, man, exp, bc in parts:
        if man and abs(exp + bc) > MAX_EXPONENT_BITS:
            return True
    return False


def _elementwise(fn: Callable[..., Any], nargs: int = 1) -> Callable[..., Any]:
    """Apply an mpmath function to scalars, or element by element to arrays."""

    def guarded(*args: Any) -> Any:
        for a in args:
            if _out_of_range(a):
                raise OverflowError(f"an argument of {getattr(fn, '__name__', 'a function')} is beyond 2**(2**20) in magnitude")
        return fn(*args)

    vec = np.frompyfunc(guarded, nargs, 1)

    def apply(*args: Any) -> Any:
        for a in args:
            if a.__class__ is np.ndarray:
                return vec(*args)
        return guarded(*args)

    return apply


def _factorial_float(n: Any) -> Any:
    if isinstance(n, int) and n > MAX_FACTORIAL:
        raise BudgetExceeded(f"factorial({n}) is too large to evaluate")
    return math.factorial(n)


def _factorial_ref(n: Any) -> Any:
    if isinstance(n, int):
        return _factorial_float(n)
    if n > MAX_FACTORIAL:
        raise BudgetExceeded("factorial argument too large to evaluate")
    return mpmath.factorial(n)


def _sized(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Refuse array constructors asked for more than MAX_LENGTH elements."""

    def build(*args: Any, **kwargs: Any) -> Any:
        out = fn(*args, **kwargs)
        if getattr(out, "size", 0) > MAX_LENGTH:
            raise BudgetExceeded("array too large")
        return out

    def guarded(*args: Any, **kwargs: Any) -> Any:
        first = args[0] if args else kwargs.get("shape", 0)
        if isinstance(first, (int, np.integer)) and first > MAX_LENGTH:
            raise BudgetExceeded("array too large")
        return build(*args, **kwargs)

    return guarded


def _bounded_list(kind: type) -> Callable[..., Any]:
    def make(items: Iterable[Any] = ()) -> Any:
        out = []
        for item in items:
            out.append(item)
            if len(out) > MAX_LENGTH:
                raise BudgetExceeded("list too long")
        return kind(out)

    return make


def _obj(values: Any) -> Any:
    """An object array of mpf numbers (the reference form of a float array)."""
    arr = np.array(values, dtype=object)
    if arr.size > MAX_LENGTH:
        raise BudgetExceeded("array too large")
    return np.vectorize(_to_mp, otypes=[object])(arr) if arr.size else arr


def _to_mp(v: Any) -> Any:
    if isinstance(v, (bool, int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return mpmath.mpf(float(v))
    if isinstance(v, (complex, np.complexfloating)):
        return mpmath.mpc(complex(v))
    return v


def _ref_array(values: Any, dtype: Any = None, **_: Any) -> Any:
    return _obj(values)


def _ref_fill(value: Any) -> Callable[..., Any]:
    def make(n: Any, *args: Any, dtype: Any = None, **_: Any) -> Any:
        if int(n) > MAX_LENGTH:
            raise BudgetExceeded("array too large")
        return np.array([mpmath.mpf(value)] * int(n), dtype=object)

    return make


def _ref_full(n: Any, fill: Any, dtype: Any = None, **_: Any) -> Any:
    if int(n) > MAX_LENGTH:
        raise BudgetExceeded("array too large")
    return np.array([fill] * int(n), dtype=object)


def _ref_arange(*args: Any, dtype: Any = None, **_: Any) -> Any:
    out = _sized(np.arange)(*[float(a) if isinstance(a, mpmath.mpf) else a for a in args])
    # Object arrays even for integers: numpy would turn mpf operands of an int64 array into float64.
    return np.array([int(v) for v in out], dtype=object) if out.dtype.kind in "iu" else _obj(out)


def _ref_linspace(lo: Any, hi: Any, num: int = 50, endpoint: bool = True, **_: Any) -> Any:
    if num > MAX_LENGTH:
        raise BudgetExceeded("array too large")
    div = (num - 1) if endpoint else num
    lo, hi = mpmath.mpf(lo), mpmath.mpf(hi)
    return np.array([lo + (hi - lo) * i / div for i in range(num)] if div else [lo] * num, dtype=object)


def _identity(x: Any, *_: Any, **__: Any) -> Any:
    return x


def _ref_hypot(*args: Any) -> Any:
    return mpmath.sqrt(builtins.sum(a * a for a in args))


def _ref_round(x: Any, ndigits: Any = None) -> Any:
    if ndigits is None:
        return int(mpmath.nint(x))
    return mpmath.nint(x * 10**ndigits) / 10**ndigits


def _ref_copysign(a: Any, b: Any) -> Any:
    return abs(a) if b >= 0 else -abs(a)


def _ref_lgamma(x: Any) -> Any:
    return mpmath.log(abs(mpmath.gamma(x)))


def _ref_var(a: Any, axis: Any = None, ddof: int = 0, **_: Any) -> Any:
    values = list(np.ravel(np.asarray(a, dtype=object)))
    mean = mpmath.fsum(values) / len(values)
    return mpmath.fsum((v - mean) ** 2 for v in values) / (len(values) - ddof)


def _ref_sign(x: Any) -> Any:
    return mpmath.sign(x)


_SAME = {  # mpmath names equal to the float ones
    "exp", "expm1", "log", "log1p", "log10", "sqrt", "cbrt", "sin", "cos", "tan", "asin", "acos",
    "atan", "atan2", "sinh", "cosh", "tanh", "asinh", "acosh", "atanh", "erf", "erfc", "gamma",
    "fmod", "ldexp", "isnan", "isinf", "isfinite",
}
_NP_TO_MP = {
    "arcsin": "asin", "arccos": "acos", "arctan": "atan", "arctan2": "atan2", "arcsinh": "asinh",
    "arccosh": "acosh", "arctanh": "atanh",
}
_MATH = [n for n in _SAME if hasattr(math, n)] + ["log2", "exp2"]
_NUMPY = [n for n in _SAME if hasattr(np, n)] + list(_NP_TO_MP) + ["log2", "exp2"]
_CMATH = [n for n in _SAME if hasattr(cmath, n)]


def _mp(name: str) -> Callable[..., Any]:
    if name == "log2":
        return lambda x: mpmath.log(x, 2)
    if name == "exp2":
        return lambda x: mpmath.power(2, x)
    fn: Callable[..., Any] = getattr(mpmath, _NP_TO_MP.get(name, name))
    return fn


def _ref_sum(values: Any, *args: Any, **kwargs: Any) -> Any:
    if values.__class__ is np.ndarray:
        return np.sum(values, *args, **kwargs)
    if isinstance(values, (mpmath.mpf, mpmath.mpc, int, float)):
        return values  # np.sum of a scalar is the scalar
    return builtins.sum(values)


@lru_cache(maxsize=1)
def _core() -> dict[str, Pair]:
    table: dict[str, Pair] = {}
    for n in _MATH:
        table[f"math.{n}"] = (getattr(math, n), _mp(n))
    for n in _CMATH:
        table[f"cmath.{n}"] = (getattr(cmath, n), _mp(n))
    for n in _NUMPY:
        table[f"numpy.{n}"] = (getattr(np, n), _elementwise(_mp(n), 2 if n in ("arctan2", "atan2") else 1))
    table.update({
        "math.hypot": (math.hypot, _ref_hypot), "numpy.hypot": (np.hypot, _elementwise(_ref_hypot, 2)),
        "math.pow": (math.pow, mpmath.power), "numpy.power": (np.power, lambda x, y: x ** y),
        "math.fabs": (math.fabs, abs), "numpy.abs": (np.abs, abs), "numpy.absolute": (np.abs, abs),
        "numpy.fabs": (np.fabs, abs), "numpy.square": (np.square, lambda x: x * x),
        "math.factorial": (_factorial_float, _factorial_ref), "math.comb": (math.comb, math.comb),
        "math.lgamma": (math.lgamma, _ref_lgamma), "math.fsum": (math.fsum, lambda v: mpmath.fsum(list(v))),
        "math.prod": (math.prod, math.prod), "math.copysign": (math.copysign, _ref_copysign),
        "math.floor": (math.floor, lambda x: int(mpmath.floor(x))), "math.ceil": (math.ceil, lambda x: int(mpmath.ceil(x))),
        "math.trunc": (math.trunc, int), "math.degrees": (math.degrees, lambda x: x * 180 / mpmath.pi),
        "math.radians": (math.radians, lambda x: x * mpmath.pi / 180),
        "numpy.sign": (np.sign, _elementwise(_ref_sign)), "numpy.floor": (np.floor, _elementwise(mpmath.floor)),
        "numpy.ceil": (np.ceil, _elementwise(mpmath.ceil)),
        "numpy.logaddexp": (np.logaddexp, _elementwise(lambda a, b: mpmath.log(mpmath.exp(a) + mpmath.exp(b)), 2)),
        "numpy.sum": (np.sum, _ref_sum), "numpy.prod": (np.prod, np.prod), "numpy.cumsum": (np.cumsum, np.cumsum),
        "numpy.mean": (np.mean, np.mean), "numpy.var": (np.var, _ref_var),
        "numpy.std": (np.std, lambda *a, **k: mpmath.sqrt(_ref_var(*a, **k))), "numpy.dot": (np.dot, np.dot), "numpy.max": (np.max, np.max),
        "numpy.min": (np.min, np.min), "numpy.amax": (np.amax, np.amax), "numpy.amin": (np.amin, np.amin),
        "numpy.maximum": (np.maximum, np.maximum), "numpy.minimum": (np.minimum, np.minimum),
        "numpy.array": (_sized(np.array), _ref_array), "numpy.asarray": (_sized(np.asarray), _ref_array),
        "numpy.arange": (_sized(np.arange), _ref_arange), "numpy.linspace": (_sized(np.linspace), _ref_linspace),
        "numpy.zeros": (_sized(np.zeros), _ref_fill(0)), "numpy.ones": (_sized(np.ones), _ref_fill(1)),
        "numpy.full": (_sized(np.full), _ref_full),
        "numpy.float64": (np.float64, _identity), "numpy.float32": (np.float32, _identity),
        "numpy.float16": (np.float16, _identity), "numpy.double": (np.float64, _identity),
        "numpy.single": (np.float32, _identity),
    })
    table.update(_BUILTINS)
    return table


_BUILTINS: dict[str, Pair] = {
    "abs": (abs, abs), "min": (min, min), "max": (max, max), "sum": (builtins.sum, _ref_sum),
    "len": (len, len), "range": (range, range), "float": (float, _identity), "int": (int, int),
    "round": (round, _ref_round), "pow": (checked_pow, checked_pow), "enumerate": (enumerate, enumerate),
    "zip": (zip, zip), "reversed": (reversed, reversed), "list": (_bounded_list(list), _bounded_list(list)),
    "tuple": (_bounded_list(tuple), _bounded_list(tuple)), "complex": (complex, mpmath.mpc), "bool": (bool, bool),
    "divmod": (divmod, divmod),
}

def _float_method(name: str) -> Callable[..., Any]:
    def call(obj: Any, *args: Any, **kwargs: Any) -> Any:
        if not isinstance(obj, (np.ndarray, np.generic)):
            raise TypeError(f"{type(obj).__name__} has no method {name} here")
        return getattr(obj, name)(*args, **kwargs)

    return call


def _ref_method(name: str) -> Callable[..., Any]:
    special = {"var": _ref_var, "std": lambda *a, **k: mpmath.sqrt(_ref_var(*a, **k))}.get(name)

    def call(obj: Any, *args: Any, **kwargs: Any) -> Any:
        arr = obj if obj.__class__ is np.ndarray else np.array(obj, dtype=object)
        if special is not None:
            if args or kwargs.get("axis") is not None:
                raise TypeError(f"{name} along an axis is not evaluated")
            return special(arr, **kwargs)
        return getattr(arr, name)(*args, **kwargs)

    return call


#: Array methods (`v.sum()`, `A.dot(b)`, `A.T` is an attribute): the real numpy method on the
#: float side; on the reference side the same method of the object array (sums and products of
#: mpf numbers at the working precision), variance and deviation two-pass over mpf.
METHODS: dict[str, Pair] = {
    n: (_float_method(n), _ref_method(n))
    for n in ("sum", "mean", "var", "std", "max", "min", "prod", "cumsum", "dot", "copy", "ravel", "flatten", "transpose")
}

#: Named constants: float value as the code sees it; the reference takes the same binary value,
#: so the constant's own rounding is part of the unit as written, not an error of the arithmetic.
CONSTANTS: dict[str, Any] = {
    "math.pi": math.pi, "math.e": math.e, "math.tau": math.tau, "math.inf": math.inf, "math.nan": math.nan,
    "numpy.pi": math.pi, "numpy.e": math.e, "numpy.inf": math.inf, "numpy.nan": math.nan,
    "cmath.pi": math.pi, "cmath.e": math.e,
}
#: dtypes may appear as values (`dtype=np.float32`); the reference ignores them.
DTYPES: dict[str, Any] = {"numpy.float32": np.float32, "numpy.float64": np.float64, "numpy.float16": np.float16}


def lookup(qualname: str) -> Pair | None:
    """The (float, reference) pair for an allowed function, or None."""
    table = _core()
    if qualname in table:
        return table[qualname]
    if qualname.startswith("scipy.special."):
        return _scipy_table().get(qualname)
    return _linalg_table().get(qualname)


@lru_cache(maxsize=1)
def _linalg_table() -> dict[str, Pair]:
    from auditor.numerics.linalg import pairs

    return pairs()


@lru_cache(maxsize=1)
def _scipy_table() -> dict[str, Pair]:
    from auditor.numerics.special import scipy_pairs

    return scipy_pairs()


def is_builtin(name: str) -> bool:
    return name in _BUILTINS
