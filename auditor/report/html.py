"""The HTML report: one self-contained page (inline CSS, inline SVG plots, no script, no links out)."""
from __future__ import annotations

import difflib
import math
from collections import Counter
from html import escape

from auditor.model import Finding, Measurement, Report, Rewrite
from auditor.report import plots
from auditor.report.text import describe_series, where
from auditor.version import __version__

STYLE = """
body{font:15px/1.45 system-ui,sans-serif;margin:0 auto;max-width:980px;padding:1.5em;color:#1b1b1b;background:#fff}
h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.15em;margin:0 0 .4em}
table{border-collapse:collapse;margin:.6em 0}td,th{border:1px solid #ccc;padding:.25em .6em;text-align:left}
th{background:#f2f2f2}td.num{text-align:right;font-variant-numeric:tabular-nums}
.finding{border:1px solid #ccc;border-left-width:6px;border-radius:4px;padding:.8em 1em;margin:1.2em 0}
.error{border-left-color:#b00020}.warning{border-left-color:#c77700}.note{border-left-color:#2a6fb0}
.sev{font-weight:600;text-transform:uppercase;font-size:.8em;letter-spacing:.04em}
.where{font-family:ui-monospace,monospace;color:#444}
pre{background:#f6f6f6;padding:.6em;overflow-x:auto;border-radius:3px;font-size:13px}
.diff span{display:block}.diff .add{background:#dcf5dc}.diff .del{background:#f9dcdc}
.notice{background:#fff6d6;border:1px solid #e6cf7a;padding:.5em .8em;border-radius:3px}
.plot svg{max-width:100%;height:auto}.muted{color:#666}
"""


def _fmt(value: float | None, spec: str = ".3g") -> str:
    if value is None or not math.isfinite(value):
        return "-"
    return format(value, spec)


def _summary(report: Report) -> str:
    by_sev = Counter(f.severity.value for f in report.findings)
    worst: dict[str, float] = {}
    for f in report.findings:
        d = f.measurement.digits_lost_max if f.measurement else None
        if d is not None:
            worst[f.rule] = max(worst.get(f.rule, 0.0), d)
    rows = "".join(
        f"<tr><td>{escape(rule)}</td><td class=num>{n}</td><td class=num>{_fmt(worst.get(rule), '.1f')}</td></tr>"
        for rule, n in sorted(Counter(f.rule for f in report.findings).items())
    )
    s = report.stats
    counts = ", ".join(f"{by_sev[k]} {k}" for k in ("error", "warning", "note") if by_sev[k]) or "no findings"
    head = (f"<p>{len(report.findings)} finding(s) ({counts}) in {s.files} file(s), {s.lines} lines, "
            f"{s.seconds:.2f} s.</p>")
    if report.unchanged:
        head += f"<p class=muted>{len(report.unchanged)} finding(s) already in the baseline are not shown.</p>"
    table = ("<table><tr><th>rule</th><th>findings</th><th>worst digits lost</th></tr>" + rows + "</table>") if rows else ""
    return f"<section id=summary><h2>Summary</h2>{head}{table}{_errors(report)}</section>"


def _errors(report: Report) -> str:
    if not report.errors:
        return ""
    items = "".join(f"<li><span class=where>{escape(e.path)}</span>: {escape(e.message)}</li>" for e in report.errors)
    return f"<h2>Files not scanned</h2><ul>{items}</ul>"


def _figures(m: Measurement) -> str:
    rows = [
        ("verdict", escape(m.verdict.value)),
        ("samples", str(m.samples)),
        ("digits lost, worst / median", f"{_fmt(m.digits_lost_max, '.1f')} / {_fmt(m.digits_lost_median, '.1f')}"),
        ("log10 condition number, worst", _fmt(m.condition_log10_max, ".1f")),
        ("worst input", escape(", ".join(f"{k} = {v:.6g}" for k, v in m.worst_inputs.items())) or "-"),
        ("float result there", _fmt(m.float_value, ".17g")),
        ("reference there", escape(m.reference_value or "-")),
    ]
    if m.series is not None:
        rows.append(("series", escape(describe_series(m.series))))
    body = "".join(f"<tr><th>{k}</th><td>{v}</td></tr>" for k, v in rows)
    reason = f"<p>{escape(m.reason)}</p>" if m.reason else ""
    return f"<table class=figures>{body}</table>{reason}"


def _diff(f: Finding, r: Rewrite) -> str:
    """A unified diff of the flagged text against its rewrite (imports it needs shown as added lines)."""
    old = f.snippet.splitlines() or [""]
    new = [*r.imports, *r.text.splitlines()] if r.imports else r.text.splitlines()
    lines = list(difflib.unified_diff(old, new, "flagged", "rewrite", lineterm="", n=3))
    out = []
    for line in lines:  # one block per line: no newlines between them, or pre doubles the breaks
        cls = "add" if line.startswith("+") and not line.startswith("+++") else (
            "del" if line.startswith("-") and not line.startswith("---") else "ctx")
        out.append(f'<span class="{cls}">{escape(line) or " "}</span>')
    status = "verified" if r.verified else "not verified"
    after = f", worst digits lost after: {r.digits_lost_max_after:.1f}" if r.digits_lost_max_after is not None else ""
    note = f" <span class=muted>{escape(r.note)}</span>" if r.note and not r.verified else ""
    return f"<p>Rewrite ({status}{after}).{note}</p><pre class=diff>" + "".join(out) + "</pre>"


def _plots(f: Finding, index: int, can_plot: bool) -> str:
    m = f.measurement
    if m is None or not can_plot:
        return ""
    after = f.rewrite.digits_lost_max_after if f.rewrite is not None and f.rewrite.verified else None
    variable = next(iter(m.worst_inputs), "x")
    svgs = [plots.digits_lost_svg(m, variable, after, f"f{index}d")]
    if m.series is not None:
        svgs.append(plots.series_svg(m.series, f"f{index}s"))
    return "".join(f"<div class=plot>{svg}</div>" for svg in svgs if svg)


def _finding(f: Finding, index: int, can_plot: bool) -> str:
    sev = f.severity.value
    head = (f'<h2><span class=sev>{sev}</span> <code>{escape(f.rule)}</code> '
            f'<span class=where>{escape(where(f))}</span></h2>')
    parts = [head, f"<p>{escape(f.message)}</p>"]
    if f.function:
        parts.append(f"<p class=muted>in <code>{escape(f.function)}</code></p>")
    parts.append(f"<pre>{escape(f.snippet)}</pre>")
    if f.measurement is not None:
        parts.append(_figures(f.measurement))
        parts.append(_plots(f, index, can_plot))
    if f.rewrite is not None:
        parts.append(_diff(f, f.rewrite))
    return f'<section class="finding {sev}" id="finding-{index}">' + "".join(parts) + "</section>"


def render_html(report: Report) -> str:
    """The whole report as one HTML document, openable offline in any browser."""
    can_plot = plots.available()
    measured = any(f.measurement is not None and f.measurement.points for f in report.findings)
    notice = ""
    if measured and not can_plot:
        notice = ('<p class=notice>Plots are not shown: matplotlib is not installed '
                  '(install the <code>html</code> extra to draw them).</p>')
    body = "".join(_finding(f, i, can_plot) for i, f in enumerate(report.findings, start=1))
    return (
        "<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>"
        '<meta name=viewport content="width=device-width, initial-scale=1">'
        f"<title>auditor report</title><style>{STYLE}</style></head><body>"
        f"<h1>Numerical audit</h1><p class=muted>auditor {escape(__version__)}</p>"
        f"{notice}{_summary(report)}{body}</body></html>\n"
    )
