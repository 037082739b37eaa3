"""Input domains: parse `x=1e-8..1e3, n=0..50`, and draw deterministic samples from a box."""
from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

#: The box assumed where nothing says otherwise: |x| log-uniform in [1e-12, 1e12], both signs.
DEFAULT_MAGNITUDES = (1e-12, 1e12)
#: Points near 0, 1 and large values, tried first in the default box.
SPECIAL_POINTS = (1e-15, 1e-8, 1e-3, 0.5, 1.0 - 2**-30, 1.0, 1.0 + 2**-30, 2.0, 1e3, 1e8, 1e12, -1e-8, -1.0, -1e3)
_ITEM = re.compile(r"^\s*([A-Za-z_]\w*)\s*=\s*(\S+?)\s*(?:\.\.\s*(\S+))?\s*$")


class DomainSyntaxError(ValueError):
    """A domain text that does not read as NAME=LO..HI, ... (the message says where)."""


@dataclass(frozen=True, slots=True)
class Range:
    """One variable's interval; LO == HI is a single point."""

    lo: float
    hi: float
    integer: bool  #: both ends written as integers: draw integers


def _number(text: str, where: str) -> tuple[float, bool]:
    try:
        value = int(text)
        return float(value), True
    except ValueError:
        pass
    try:
        value_f = float(text)
    except ValueError:
        raise DomainSyntaxError(f"{where}: {text!r} is not a number") from None
    if not math.isfinite(value_f):
        raise DomainSyntaxError(f"{where}: bounds must be finite")
    return value_f, False


def parse_domain(text: str) -> dict[str, Range]:
    """`x=1e-8..1e3, n=0..50` -> {"x": Range(1e-8, 1e3, False), "n": Range(0, 50, True)}."""
    out: dict[str, Range] = {}
    for item in (p for p in text.split(",") if p.strip()):
        match = _ITEM.match(item.replace("…", ".."))
        if match is None:
            raise DomainSyntaxError(f"cannot read {item.strip()!r} (expected NAME=LO..HI)")
        name, lo_text, hi_text = match.group(1), match.group(2), match.group(3) or match.group(2)
        lo, lo_int = _number(lo_text, name)
        hi, hi_int = _number(hi_text, name)
        if lo > hi:
            raise DomainSyntaxError(f"{name}: LO {lo_text} is above HI {hi_text}")
        out[name] = Range(lo, hi, lo_int and hi_int)
    return out


def _log_uniform(rng: np.random.Generator, lo: float, hi: float, n: int) -> np.ndarray:
    return np.exp(rng.uniform(math.log(lo), math.log(hi), n))


def sample_range(r: Range, n: int, rng: np.random.Generator) -> list[Any]:
    """n values from a range: its ends first, then log-uniform magnitudes where it spans more
    than two decades (both signs where it crosses zero), else uniform; integers for integer ranges."""
    if r.lo == r.hi or n <= 1:
        return [r.lo if not r.integer else int(r.lo)] * max(n, 1)
    ends = [r.lo, r.hi] + ([0.0] if r.lo < 0 < r.hi else [])
    rest = max(0, n - len(ends))
    if r.integer:
        values = [int(v) for v in ends] + [int(v) for v in rng.integers(int(r.lo), int(r.hi) + 1, rest)]
        return values[:n]
    if r.lo > 0 and r.hi / r.lo > 100:
        drawn = _log_uniform(rng, r.lo, r.hi, rest)
    elif r.hi < 0 and r.lo / r.hi > 100:
        drawn = -_log_uniform(rng, -r.hi, -r.lo, rest)
    elif r.lo < 0 < r.hi:
        big = max(-r.lo, r.hi)
        mags = _log_uniform(rng, big * 1e-12, big, rest)
        signs = np.where(rng.uniform(0, 1, rest) < -r.lo / (r.hi - r.lo), -1.0, 1.0)
        drawn = np.clip(mags * signs, r.lo, r.hi)
    else:
        drawn = rng.uniform(r.lo, r.hi, rest)
    return [float(v) for v in [*ends, *drawn]][:n]


def sample_default(n: int, rng: np.random.Generator) -> list[float]:
    """The assumed box: special points near 0, 1 and large values, then log-uniform magnitudes
    in DEFAULT_MAGNITUDES with random signs."""
    special = list(SPECIAL_POINTS)[:n]
    rest = max(0, n - len(special))
    mags = _log_uniform(rng, *DEFAULT_MAGNITUDES, rest)
    signs = np.where(rng.uniform(0, 1, rest) < 0.5, -1.0, 1.0)
    return special + [float(v) for v in mags * signs]


def sample_points(
    ranges: Mapping[str, Range], assumed: Sequence[str], fixed: Mapping[str, float], n: int, seed: int
) -> list[dict[str, float]]:
    """Independent draws per variable (sorted by name, so the same seed gives the same points)."""
    rng = np.random.default_rng(seed)
    columns: dict[str, list[float]] = {}
    for name in sorted(ranges):
        values = sample_range(ranges[name], n, rng)
        columns[name] = _shuffled_tail(values, rng, 3)
    for name in sorted(assumed):
        columns[name] = _shuffled_tail(sample_default(n, rng), rng, 0)
    size = max((len(c) for c in columns.values()), default=n)  # no scalar column: n points to fill with arrays
    points = []
    for i in range(size):
        point = {name: col[i % len(col)] for name, col in columns.items()}
        point.update(fixed)
        points.append(point)
    return points


def _shuffled_tail(values: list[float], rng: np.random.Generator, keep: int) -> list[float]:
    """Shuffle all but the first `keep` values, so several variables do not move in lockstep."""
    tail = values[keep:]
    order = rng.permutation(len(tail))
    return values[:keep] + [tail[i] for i in order]
