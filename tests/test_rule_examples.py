"""Every rule's own examples, run automatically: a new rule brings its tests."""
from __future__ import annotations

import pytest

from auditor import Config, scan_source
from auditor.catalog import load_catalog

CASES = [(rule.id, i, ex) for rule in load_catalog() for i, ex in enumerate(rule.examples)]


@pytest.mark.parametrize(("rule_id", "index", "example"), CASES, ids=[f"{r}-{i}" for r, i, _ in CASES])
def test_example(rule_id, index, example):
    report = scan_source(example.code, "example.py", Config(only=frozenset({rule_id})))
    assert not report.errors, report.errors
    hits = [f for f in report.findings if f.rule == rule_id]
    if example.flagged:
        assert hits, f"{rule_id} example {index} should be flagged:\n{example.code}"
        if example.rewrite is not None:
            offered = {f.rewrite.text for f in hits if f.rewrite is not None}
            assert example.rewrite in offered, (example.rewrite, offered)
    else:
        assert not hits, f"{rule_id} example {index} should be clean, got {[h.message for h in hits]}"


def test_examples_parse():
    import ast

    for rule_id, index, example in CASES:
        ast.parse(example.code)
