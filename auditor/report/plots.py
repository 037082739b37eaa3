"""Figures for the HTML report, drawn with matplotlib (optional extra `html`) as inline SVG."""
from __future__ import annotations

import io
import math
import re
from collections.abc import Sequence

from typing import TYPE_CHECKING

from auditor.model import Measurement, SeriesFigures

if TYPE_CHECKING:  # matplotlib is optional: imported for real only inside the drawing functions
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

FULL_DIGITS = 15.95  #: digits of a double (-log10 of 2^-53), the top of the digits-lost axis (CONTRACT.md)
SIZE = (6.4, 3.2)  #: inches; 100 dpi in SVG user units


def available() -> bool:
    """True when matplotlib can be imported (the `html` extra)."""
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return False
    return True


def _svg(fig: Figure, salt: str) -> str:
    """The figure as an <svg> element: no XML prolog or metadata, ids salted so figures never collide."""
    import matplotlib

    buffer = io.StringIO()
    # text stays text (selectable, searchable); the browser supplies the sans-serif font
    with matplotlib.rc_context({"svg.hashsalt": salt, "svg.fonttype": "none"}):
        fig.savefig(buffer, format="svg", bbox_inches="tight")
    text = buffer.getvalue()
    text = text[text.index("<svg") :]
    text = re.sub(r"<metadata>.*?</metadata>\s*", "", text, flags=re.S)
    # plain ids such as "axes_1" repeat in every figure; salt them too (only clip paths and markers are referenced)
    return re.sub(r'id="(?!' + re.escape(salt) + r')([^"]+)"', lambda m: f'id="{salt}-{m.group(1)}"', _salt_refs(text, salt))


def _salt_refs(text: str, salt: str) -> str:
    text = re.sub(r'url\(#([^)]+)\)', lambda m: f"url(#{salt}-{m.group(1)})", text)
    return re.sub(r'((?:xlink:)?href)="#([^"]+)"', lambda m: f'{m.group(1)}="#{salt}-{m.group(2)}"', text)


def _figure() -> tuple[Figure, Axes]:
    from matplotlib.figure import Figure  # no pyplot: no global state, no GUI backend

    fig = Figure(figsize=SIZE)
    return fig, fig.add_subplot()


def _wide(xs: Sequence[float]) -> bool:
    """True when the nonzero inputs span two decades or more: a log axis shows them best."""
    mags = [abs(x) for x in xs if x != 0]
    return len(mags) >= 2 and max(mags) / min(mags) >= 100


def digits_lost_svg(m: Measurement, variable: str, after: float | None, salt: str) -> str | None:
    """Digits lost at each sampled input of the main variable; None when there are no points.

    Over a wide range the axis is log |input|, with the sign as colour: a symmetric log axis
    across twenty decades has unreadable ticks, and these errors depend on magnitude.
    """
    from matplotlib.ticker import LogLocator

    points = [(x, d) for x, d in m.points if math.isfinite(x) and math.isfinite(d)]
    if not points:
        return None
    fig, ax = _figure()
    xs = [x for x, _ in points]
    if _wide(xs):
        for label, color, keep in (("input > 0", "tab:blue", 1), ("input < 0", "tab:purple", -1)):
            side = [(abs(x), d) for x, d in points if x * keep > 0]
            if side:
                ax.scatter([x for x, _ in side], [d for _, d in side], s=12, color=color, label=label, zorder=3)
        ax.set_xscale("log")
        ax.xaxis.set_major_locator(LogLocator(base=10, numticks=9))
        ax.set_xlabel(f"|{variable}|")
    else:
        ax.scatter(xs, [d for _, d in points], s=12, color="tab:blue", label="input", zorder=3)
        ax.set_xlabel(variable)
    if after is not None:
        ax.axhline(after, color="tab:green", linestyle="--", label=f"rewrite, worst ({after:.1f})")
    ax.set_ylim(-0.3, FULL_DIGITS + 0.5)
    ax.set_ylabel("decimal digits lost")
    ax.set_title("digits lost across the sampled inputs")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize="small")
    return _svg(fig, salt)


def series_svg(s: SeriesFigures, salt: str) -> str | None:
    """Term magnitudes |t_k| by index on a log axis, the smallest term marked; None without terms."""
    terms = [(k, t) for k, t in enumerate(s.term_magnitudes) if math.isfinite(t) and t > 0]
    if not terms:
        return None
    fig, ax = _figure()
    ax.semilogy([k for k, _ in terms], [t for _, t in terms], marker="o", markersize=3,
                color="tab:blue", label="|term|")
    if 0 <= s.smallest_term_index < len(s.term_magnitudes) and s.term_magnitudes[s.smallest_term_index] > 0:
        k, t = s.smallest_term_index, s.term_magnitudes[s.smallest_term_index]
        ax.plot([k], [t], marker="*", markersize=14, color="tab:red", linestyle="none",
                label=f"smallest term, k={k}")
    if s.optimal_terms is not None:
        ax.axvline(s.optimal_terms - 0.5, color="tab:orange", linestyle=":",
                   label=f"optimal truncation: {s.optimal_terms} terms")
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel("term index k")
    ax.set_ylabel("|t_k|")
    ax.set_title("term magnitudes at the worst input")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(loc="best", fontsize="small")
    return _svg(fig, salt)
