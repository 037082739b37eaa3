"""The JSON report, version 1, exactly as CONTRACT.md lays it out."""
from __future__ import annotations

import json
import math
from typing import Any

from auditor.model import Finding, Measurement, Report, Rewrite, SeriesFigures

SCHEMA = "auditor-report/1"


def _num(value: float | None) -> float | None:
    """JSON has no NaN or infinity: those become null."""
    if value is None or not math.isfinite(value):
        return None
    return value


def series_dict(series: SeriesFigures | None) -> dict[str, Any] | None:
    if series is None:
        return None
    out: dict[str, Any] = {
        "terms": series.terms,
        "cancellation_log10": _num(series.cancellation_log10),
        "smallest_term_index": series.smallest_term_index,
        "smallest_term": _num(series.smallest_term),
        "divergent": series.divergent,
    }
    if series.optimal_terms is not None:
        out["optimal_terms"] = series.optimal_terms
        out["truncation_error"] = _num(series.truncation_error)
    return out


def measurement_dict(m: Measurement | None) -> dict[str, Any] | None:
    if m is None:
        return None
    return {
        "samples": m.samples,
        "digits_lost_max": _num(m.digits_lost_max),
        "digits_lost_median": _num(m.digits_lost_median),
        "condition_log10_max": _num(m.condition_log10_max),
        "worst_inputs": {k: _num(v) for k, v in m.worst_inputs.items()},
        "float_value": _num(m.float_value),
        "reference_value": m.reference_value,
        "verdict": m.verdict.value,
        "reason": m.reason,
        "series": series_dict(m.series),
    }


def rewrite_dict(r: Rewrite | None) -> dict[str, Any] | None:
    if r is None:
        return None
    return {"text": r.text, "verified": r.verified, "digits_lost_max_after": _num(r.digits_lost_max_after)}


def finding_dict(f: Finding) -> dict[str, Any]:
    out = {
        "rule": f.rule,
        "severity": f.severity.value,
        "path": f.path,
        "line": f.span.line,
        "column": f.span.column,
        "end_line": f.span.end_line,
        "end_column": f.span.end_column,
        "message": f.message,
        "snippet": f.snippet,
        "measurement": measurement_dict(f.measurement),
        "rewrite": rewrite_dict(f.rewrite),
    }
    if f.cell is not None:  # notebooks only: 1-based cell number; line and column are within the cell
        out["cell"] = f.cell
    return out


def report_dict(report: Report) -> dict[str, Any]:
    return {
        "schema": SCHEMA,
        "findings": [finding_dict(f) for f in report.findings],
        "errors": [{"path": e.path, "message": e.message} for e in report.errors],
        "stats": {"files": report.stats.files, "lines": report.stats.lines, "seconds": report.stats.seconds},
    }


def render_json(report: Report) -> str:
    return json.dumps(report_dict(report), indent=2, ensure_ascii=False) + "\n"
