"""Test helpers for the dynamic pass: measure a unit of a code string without the static rules."""
from __future__ import annotations

import ast

from auditor.config import Config
from auditor.measure import FindingMeasurement, measure_finding
from auditor.model import Finding, Severity
from auditor.numerics.unit import char_span


def finding_for(code: str, rule: str, kind: type[ast.AST], nth: int = 0) -> Finding:
    """A finding on the nth node of type `kind` in `code` (as the static pass would report it)."""
    tree = ast.parse(code)
    nodes = [n for n in ast.walk(tree) if isinstance(n, kind)]
    nodes.sort(key=lambda n: (n.lineno, n.col_offset))
    node = nodes[nth]
    span = char_span(node, code.splitlines())
    assert span is not None
    return Finding(rule, Severity.WARNING, "example.py", span, "flagged", ast.get_source_segment(code, node) or "")


def measure_code(code: str, rule: str, kind: type[ast.AST], nth: int = 0, replacement: str | None = None,
                 samples: int = 64, seed: int = 0) -> FindingMeasurement:
    finding = finding_for(code, rule, kind, nth)
    return measure_finding(finding, code, Config(samples=samples, seed=seed), replacement)
