"""Survival-function values at points the code fixes, computed with scipy (when installed) as a reference.

Used to clear `1 - F(x)` when x and every parameter of F are literals: if the complement is not small
there, subtracting from 1 loses at most a few digits. Only the reference library runs; the scanned code
is never imported. Without scipy nothing is computed and the caller keeps its finding.
"""
from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

#: the smallest complement that still keeps all but about three of the sixteen digits of 1 - F
#: (the relative error of 1 - F is about 1.1e-16 / complement; common practice)
NOT_SMALL = 1e-3


def _smallest(values: Any) -> float | None:
    import numpy as np

    arr = np.asarray(values, dtype=float)
    if arr.size == 0 or not np.all(np.isfinite(arr)):
        return None
    return float(arr.min())


def stats_survival(name: str, x: Sequence[float], params: Sequence[Sequence[float]],
                   keywords: Mapping[str, Sequence[float]]) -> float | None:
    """min over x of `scipy.stats.<name>.sf(x, *params, **keywords)`; None when not computable."""
    try:
        from scipy import stats  # type: ignore[import-untyped]
    except ImportError:
        return None
    dist = getattr(stats, name, None)
    if not isinstance(dist, (stats.rv_continuous, stats.rv_discrete)):
        return None  # only the distribution objects; never call other scipy.stats callables
    try:
        return _smallest(dist.sf(list(x), *[_scalar_or_list(v) for v in params],
                                 **{k: _scalar_or_list(v) for k, v in keywords.items()}))
    except (TypeError, ValueError, ArithmeticError):
        return None


def special_value(name: str, args: Sequence[Sequence[float]]) -> float | None:
    """min of `scipy.special.<name>(*args)` (broadcast), or of math.erfc for 'erfc'; None when not computable."""
    func: Any
    try:
        from scipy import special

        func = getattr(special, name, None)
    except ImportError:
        func = math.erfc if name == "erfc" else None
    if func is None or not callable(func):
        return None
    try:
        import numpy as np

        return _smallest(np.vectorize(func)(*[_scalar_or_list(v) for v in args]))
    except (TypeError, ValueError, ArithmeticError):
        return None


def _scalar_or_list(values: Sequence[float]) -> float | list[float]:
    return values[0] if len(values) == 1 else list(values)
