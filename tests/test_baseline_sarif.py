"""Baselines in SARIF terms: baselineState new / unchanged / absent, valid against the SARIF 2.1.0 schema."""
from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest

from auditor.cli import main

# exp-minus-one fires on `math.exp(x) - 1`, log-of-one-plus on `math.log(1 + x)`
BEFORE = "import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n\n\ndef loss(x):\n    return math.log(1 + x)\n"
AFTER = (
    "import math\n\n# a new comment shifts every line\n\ndef gain(x):\n    return math.exp(x) - 1\n\n\n"
    "def drift(x):\n    return math.exp(2 * x) - 1\n"
)


def sarif_run(tmp_path: Path, *extra: str) -> dict:
    out = tmp_path / "out.sarif"
    status = main(["scan", "probe_lab", "--format", "sarif", "--output", str(out), *extra])
    assert status in (0, 1)
    return json.loads(out.read_text(encoding="utf-8"))


@pytest.fixture()
def lab(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "probe_lab").mkdir()
    (tmp_path / "probe_lab" / "gauge.py").write_text(BEFORE)
    assert main(["scan", "probe_lab", "--write-baseline", "baseline.json", "--format", "json", "--output", "first.json"]) == 1
    (tmp_path / "probe_lab" / "gauge.py").write_text(AFTER)
    return tmp_path


def states(doc: dict) -> list[tuple[str, int, str]]:
    out = []
    for r in doc["runs"][0]["results"]:
        region = r["locations"][0]["physicalLocation"]["region"]
        out.append((r["ruleId"], region["startLine"], r.get("baselineState")))
    return sorted(out)


def test_baseline_states_are_valid_sarif(lab: Path, sarif_schema: dict) -> None:
    doc = sarif_run(lab, "--baseline", "baseline.json")
    # SARIF 2.1.0 (OASIS standard) section 3.27.24: baselineState is one of new, unchanged, updated, absent
    jsonschema.validate(doc, sarif_schema)
    assert states(doc) == [
        ("exp-minus-one", 6, "unchanged"),  # moved down a line, same fingerprint
        ("exp-minus-one", 10, "new"),
        ("log-of-one-plus", 9, "absent"),  # gone; reported where the baseline last saw it
    ]


def test_every_result_carries_a_state_when_any_does(lab: Path, sarif_schema: dict) -> None:
    # SARIF 2.1.0 section 3.27.24: if baselineState is present on any result it shall be present on all
    doc = sarif_run(lab, "--baseline", "baseline.json")
    results = doc["runs"][0]["results"]
    assert results and all("baselineState" in r for r in results)
    jsonschema.validate(doc, sarif_schema)


def test_no_baseline_no_state(lab: Path, sarif_schema: dict) -> None:
    doc = sarif_run(lab)
    jsonschema.validate(doc, sarif_schema)
    results = doc["runs"][0]["results"]
    assert len(results) == 2 and not any("baselineState" in r for r in results)


def test_only_new_findings_fail_the_run(lab: Path) -> None:
    (lab / "probe_lab" / "gauge.py").write_text(BEFORE.replace("math.log(1 + x)", "x"))
    assert main(["scan", "probe_lab", "--baseline", "baseline.json", "--format", "sarif", "--output", "o.sarif"]) == 0
    doc = json.loads((lab / "o.sarif").read_text())
    assert states(doc) == [("exp-minus-one", 5, "unchanged"), ("log-of-one-plus", 9, "absent")]
