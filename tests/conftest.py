"""Shared fixtures: the catalog, a scan helper, the contract's SARIF schema."""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from auditor import Config, scan_source
from auditor.catalog import load_catalog

ROOT = Path(__file__).resolve().parent.parent
SHARED = ROOT.parent / "shared"


def rules_hit(code: str, only: str | None = None) -> list[str]:
    """Rule ids flagged in `code` (optionally by one rule only)."""
    config = Config(only=frozenset({only})) if only else Config()
    report = scan_source(code, "example.py", config)
    assert not report.errors, report.errors
    return [f.rule for f in report.findings]


@pytest.fixture(scope="session")
def catalog():
    return load_catalog()


@pytest.fixture(scope="session")
def sarif_schema() -> dict:
    path = SHARED / "sarif-schema-2.1.0.json"
    if not path.is_file():
        path = ROOT / "tests" / "data" / "sarif-schema-2.1.0.json"
    return json.loads(path.read_text(encoding="utf-8"))
