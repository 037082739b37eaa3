"""Series figures from the traced terms of a summation loop (CONTRACT.md, `series`)."""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import mpmath

from auditor.model import SeriesFigures


#: Term sizes kept for plots (the figures themselves use every term).
MAX_PLOTTED = 200


@dataclass(frozen=True, slots=True)
class PartialSums:
    """Where the running sum of the float terms peaked (the source of the cancellation)."""

    peak: float  #: max |partial sum|
    peak_index: int  #: 0-based index of the term after which it peaked
    final: float  #: the last partial sum


def partial_sums(terms: Sequence[Any]) -> PartialSums | None:
    """Running sums in the order the code added the terms, in the terms' own arithmetic."""
    if not terms:
        return None
    total: Any = 0
    peak, where = -1.0, 0
    for i, t in enumerate(terms):
        total = total + t
        size = abs(float(total))
        if size > peak:
            peak, where = size, i
    return PartialSums(peak, where, float(total))


def _scalar(t: Any) -> Any:
    """Terms of a vectorised sum are scalars already; anything else is reduced to its size."""
    try:
        return mpmath.mpmathify(t)
    except (TypeError, ValueError):
        return mpmath.mpf(float(abs(t)))


def series_figures(terms: Sequence[Any]) -> SeriesFigures | None:
    """Cancellation factor, smallest term and (for a divergent series) the optimal truncation.

    cancellation_log10 = log10(sum|t_k| / |sum t_k|) (CONTRACT.md). The series is called
    divergent when some term after the smallest one is larger than it: summing past the
    smallest term only adds error. Optimal truncation keeps the terms before the smallest one
    and takes the smallest term as the error estimate (the usual rule for asymptotic series,
    e.g. DLMF 2.11(v)).
    """
    if not terms:
        return None
    mags = [abs(_scalar(t)) for t in terms]
    total = abs(mpmath.fsum(_scalar(t) for t in terms))
    cancellation = None if total == 0 else float(mpmath.log10(mpmath.fsum(mags) / total))
    nonzero = [i for i, m in enumerate(mags) if m != 0] or [0]
    k = min(nonzero, key=lambda i: (mags[i], i))
    divergent = any(m > mags[k] for m in mags[k + 1:])
    return SeriesFigures(
        terms=len(terms),
        cancellation_log10=None if cancellation is None else round(cancellation, 3),
        smallest_term_index=k,
        smallest_term=_float(mags[k]),
        divergent=divergent,
        optimal_terms=k if divergent else None,
        truncation_error=_float(mags[k]) if divergent else None,
        term_magnitudes=tuple(_float(m) for m in mags[:MAX_PLOTTED]),
    )


def _float(value: Any) -> float:
    out = float(value)
    return out if math.isfinite(out) else math.inf
