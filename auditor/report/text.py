"""The human report: path:line:col, rule, message, a code frame, a summary table."""
from __future__ import annotations

import io
from collections import Counter
from collections.abc import Sequence

from auditor.model import Finding, Measurement, Report, SeriesFigures

FRAME = 1  #: lines of context shown above and below a finding


def describe_series(s: SeriesFigures) -> str:
    """One sentence on a traced series, shared by the text and HTML reports."""
    text = f"{s.terms} terms, smallest term #{s.smallest_term_index} ({s.smallest_term:.3g})"
    if s.cancellation_log10 is not None:
        text += f", cancellation 10^{s.cancellation_log10:.1f}"
    if s.optimal_terms is not None:
        error = f"{s.truncation_error:.2g}" if s.truncation_error is not None else "unknown"
        text += f", divergent: stop at {s.optimal_terms} terms (error ~{error})"
    return text


def _measurement_line(m: Measurement) -> str:
    parts = [f"verdict {m.verdict.value}"]
    if m.digits_lost_max is not None:
        parts.append(f"digits lost max {m.digits_lost_max:.1f} (median {m.digits_lost_median or 0:.1f})")
    if m.condition_log10_max is not None:
        parts.append(f"log10 condition {m.condition_log10_max:.1f}")
    if m.worst_inputs:
        parts.append("worst at " + ", ".join(f"{k}={v:.6g}" for k, v in m.worst_inputs.items()))
    if m.series is not None:
        parts.append("series: " + describe_series(m.series))
    text = "; ".join(parts)
    return f"{text}. {m.reason}" if m.reason else text


def _frame(f: Finding, lines: Sequence[str] | None) -> list[str]:
    if not lines:
        return [f"    {line}" for line in f.snippet.splitlines()[:6]]
    first = max(1, f.span.line - FRAME)
    last = min(len(lines), f.span.end_line + FRAME, f.span.line + 8)
    width = len(str(last))
    out = []
    for n in range(first, last + 1):
        mark = ">" if f.span.line <= n <= f.span.end_line else " "
        out.append(f"  {mark} {n:>{width}} | {lines[n - 1]}")
        if n == f.span.line == f.span.end_line:
            out.append(f"    {' ' * width} | {' ' * (f.span.column - 1)}{'^' * max(1, f.span.end_column - f.span.column)}")
    return out


def where(f: Finding) -> str:
    """path:line:col, with the cell for notebooks: `lab.ipynb[cell 3]:2:5`."""
    cell = f"[cell {f.cell}]" if f.cell is not None else ""
    return f"{f.path}{cell}:{f.span.line}:{f.span.column}"


def _finding_lines(f: Finding, sources: dict[str, list[str]]) -> list[str]:
    head = f"{where(f)}: {f.severity.value} [{f.rule}] {f.message}"
    out = [head, *_frame(f, sources.get(f.path) if f.cell is None else None)]  # a notebook's lines are JSON
    if f.measurement is not None:
        out.append(f"    measured: {_measurement_line(f.measurement)}")
    if f.rewrite is not None:
        status = "verified" if f.rewrite.verified else ("advice, never applied" if f.rewrite.advice else "unverified")
        after = f", digits lost after {f.rewrite.digits_lost_max_after:.1f}" if f.rewrite.digits_lost_max_after is not None else ""
        out.append(f"    rewrite ({status}{after}): {f.rewrite.text}")
        if f.rewrite.note and not f.rewrite.verified:
            out.append(f"      {f.rewrite.note}")
    return out


def _summary(report: Report) -> list[str]:
    by_rule = Counter(f.rule for f in report.findings)
    by_sev = Counter(f.severity.value for f in report.findings)
    out = ["", "rule                             findings"]
    out += [f"{rule:<32} {count:>8}" for rule, count in sorted(by_rule.items())]
    s = report.stats
    counts = ", ".join(f"{by_sev[k]} {k}" for k in ("error", "warning", "note") if by_sev[k]) or "no findings"
    out.append(f"{len(report.findings)} finding(s) ({counts}) in {s.files} file(s), {s.lines} lines, {s.seconds:.2f}s")
    if report.unchanged:
        out.append(f"{len(report.unchanged)} finding(s) already in the baseline not shown")
    return out


def render_plain(report: Report, sources: dict[str, list[str]] | None = None) -> str:
    """Plain text, no colour: for pipes, files, NO_COLOR and golden tests."""
    sources = sources or {}
    out: list[str] = []
    for f in report.findings:
        out += _finding_lines(f, sources) + [""]
    for e in report.errors:
        out.append(f"{e.path}: error: {e.message}")
    out += _summary(report)
    return "\n".join(out) + "\n"


def render_text(report: Report, sources: dict[str, list[str]] | None = None, color: bool = False) -> str:
    """Coloured with rich when `color`, else plain."""
    if not color:
        return render_plain(report, sources)
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    buffer = io.StringIO()
    console = Console(file=buffer, force_terminal=True, width=120, highlight=False)
    styles = {"error": "bold red", "warning": "yellow", "note": "cyan"}
    for f in report.findings:
        lines = _finding_lines(f, sources or {})
        head = Text(f"{where(f)}: ", style="bold")
        head.append(f"{f.severity.value} ", style=styles[f.severity.value])
        head.append(f"[{f.rule}] ", style="magenta")
        head.append(f.message)
        console.print(head)
        for line in lines[1:]:
            console.print(Text(line, style="dim" if line.lstrip().startswith(("measured", "rewrite")) is False else ""))
        console.print()
    for e in report.errors:
        console.print(Text(f"{e.path}: error: {e.message}", style="red"))
    table = Table(title="findings by rule")
    table.add_column("rule")
    table.add_column("findings", justify="right")
    for rule, count in sorted(Counter(f.rule for f in report.findings).items()):
        table.add_row(rule, str(count))
    console.print(table)
    console.print(_summary(report)[-1] if not report.unchanged else "\n".join(_summary(report)[-2:]))
    return buffer.getvalue()
