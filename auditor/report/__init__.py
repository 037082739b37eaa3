"""Renderers: a Report to text, JSON v1, SARIF 2.1.0 (and HTML where installed)."""
from __future__ import annotations

from auditor.report.jsonv1 import finding_dict, measurement_dict, render_json
from auditor.report.sarif import render_sarif
from auditor.report.text import render_text

__all__ = ["finding_dict", "measurement_dict", "render_json", "render_sarif", "render_text"]
