"""A small terminal chart of digits lost against the first varying input (text, no colours)."""
from __future__ import annotations

import math
from collections.abc import Sequence

from auditor.numerics.run import Sample

WIDTH, HEIGHT = 60, 8


def _axis(values: Sequence[float]) -> tuple[list[float], str]:
    """Log10 of |x| when the samples are of one sign and span over two decades, else x itself."""
    positive = all(v > 0 for v in values) or all(v < 0 for v in values)
    if positive:
        mags = [abs(v) for v in values]
        if max(mags) / min(mags) > 100:
            return [math.log10(m) for m in mags], "log10 |x|" if values[0] > 0 else "log10 |x| (x < 0)"
    if any(v != 0 for v in values) and max(abs(v) for v in values) / max(min(abs(v) for v in values if v != 0), 1e-300) > 1e4:
        return [math.copysign(math.log10(1 + abs(v) / 1e-12), v) for v in values], "signed log scale"
    return list(values), "x"


def digits_chart(samples: Sequence[Sample]) -> str:
    """Rows of '#' up to the highest loss in each input bin; empty when fewer than 2 inputs differ."""
    measured = [s for s in samples if s.digits_lost is not None]
    names = [k for k, v in (measured[0].inputs.items() if measured else []) if isinstance(v, float)]
    if not names:
        return ""
    name = max(names, key=lambda n: len({s.inputs[n] for s in measured}))
    xs = [float(s.inputs[name]) for s in measured]
    if len(set(xs)) < 2:
        return ""
    pos, label = _axis(xs)
    lo, hi = min(pos), max(pos)
    top = max(16.0, max(s.digits_lost or 0.0 for s in measured))
    cols = [-1.0] * WIDTH
    for p, s in zip(pos, measured):
        c = min(WIDTH - 1, int((p - lo) / (hi - lo) * WIDTH)) if hi > lo else 0
        cols[c] = max(cols[c], s.digits_lost or 0.0)
    lines = [f"digits lost vs {name} ({label.replace('x', name)})"]
    for row in range(HEIGHT, 0, -1):
        level = top * (row - 0.5) / HEIGHT
        mark = "".join("#" if v >= level else ("." if v >= 0 and row == 1 else " ") for v in cols)
        lines.append(f"{top * row / HEIGHT:5.1f} |{mark}")
    lines.append("      +" + "-" * WIDTH)
    left, right = f"{min(xs):.3g}", f"{max(xs):.3g}"
    lines.append("       " + left + " " * max(1, WIDTH - len(left) - len(right)) + right)
    return "\n".join(lines)
