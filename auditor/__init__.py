"""auditor: find and measure floating-point cancellation and ill-conditioning in Python code.

The public face: the library API (`scan_source`, `scan_paths`), the report values, and the
rule API that the modules in `rules/` import.
"""
from __future__ import annotations

from auditor.config import Config, ConfigError
from auditor.model import FileError, Finding, Measurement, Report, Rewrite, SeriesFigures, Severity, Span, Stats, Verdict
from auditor.rule import Context, Example, Hit, Rule
from auditor.scan import scan_paths, scan_source
from auditor.version import __version__

__all__ = [
    "Config",
    "ConfigError",
    "Context",
    "Example",
    "FileError",
    "Finding",
    "Hit",
    "Measurement",
    "Report",
    "Rewrite",
    "Rule",
    "SeriesFigures",
    "Severity",
    "Span",
    "Stats",
    "Verdict",
    "__version__",
    "scan_paths",
    "scan_source",
]
