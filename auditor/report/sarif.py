"""SARIF 2.1.0: one run, the catalog as rules, one result per finding."""
from __future__ import annotations

import json
from typing import Any

from auditor.catalog import load_catalog
from auditor.model import Finding, Report
from auditor.report.jsonv1 import measurement_dict, rewrite_dict
from auditor.version import __version__

SARIF_SCHEMA = "https://json.schemastore.org/sarif-2.1.0.json"
INFO_URI = "https://example.invalid/auditor"  # no public home yet; SARIF requires a URI form


def _rules() -> list[dict[str, Any]]:
    return [
        {
            "id": rule.id,
            "name": rule.__class__.__name__,
            "shortDescription": {"text": rule.title},
            "fullDescription": {"text": rule.summary},
            "help": {"text": rule.rationale, "markdown": rule.rationale},
            "defaultConfiguration": {"level": rule.severity.value},
            "properties": {"method": rule.method},
        }
        for rule in load_catalog()
    ]


def _region(f: Finding) -> dict[str, int]:
    s = f.span
    return {"startLine": s.line, "startColumn": s.column, "endLine": s.end_line, "endColumn": max(s.end_column, 1)}


def _result(f: Finding, index: dict[str, int], with_state: bool) -> dict[str, Any]:
    result: dict[str, Any] = {
        "ruleId": f.rule,
        "level": f.severity.value,
        "message": {"text": f.message},
        "locations": [
            {"physicalLocation": {"artifactLocation": {"uri": f.path, "uriBaseId": "SRCROOT"}, "region": _region(f)}}
        ],
        "partialFingerprints": {"auditorFingerprint/v1": f.fingerprint},
        "properties": {"measurement": measurement_dict(f.measurement), "rewrite": rewrite_dict(f.rewrite)},
    }
    if f.rule in index:
        result["ruleIndex"] = index[f.rule]
    if f.cell is not None:  # notebooks: the region's lines count within this cell (1-based, all cells)
        result["properties"]["cell"] = f.cell
    if with_state and f.baseline_state:
        result["baselineState"] = f.baseline_state
    if f.rewrite is not None and f.rewrite.verified:
        result["fixes"] = [
            {
                "description": {"text": f"replace with {f.rewrite.text}"},
                "artifactChanges": [
                    {
                        "artifactLocation": {"uri": f.path, "uriBaseId": "SRCROOT"},
                        "replacements": [{"deletedRegion": _region(f), "insertedContent": {"text": f.rewrite.text}}],
                    }
                ],
            }
        ]
    return result


def sarif_dict(report: Report) -> dict[str, Any]:
    rules = _rules()
    index = {r["id"]: i for i, r in enumerate(rules)}
    with_state = bool(report.unchanged or report.absent or any(f.baseline_state for f in report.findings))
    everything = [*report.findings, *report.unchanged, *report.absent] if with_state else list(report.findings)
    notifications = [
        {"level": "error", "message": {"text": f"{e.path}: {e.message}"},
         "locations": [{"physicalLocation": {"artifactLocation": {"uri": e.path, "uriBaseId": "SRCROOT"}}}]}
        for e in report.errors
    ]
    return {
        "$schema": SARIF_SCHEMA,
        "version": "2.1.0",
        "runs": [
            {
                "tool": {"driver": {"name": "auditor", "version": __version__, "informationUri": INFO_URI, "rules": rules}},
                "invocations": [{"executionSuccessful": True, "toolExecutionNotifications": notifications}],
                "results": [_result(f, index, with_state) for f in sorted(everything, key=Finding.sort_key)],
            }
        ],
    }


def render_sarif(report: Report) -> str:
    return json.dumps(sarif_dict(report), indent=2, ensure_ascii=False) + "\n"
