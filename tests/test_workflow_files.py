"""The pre-commit manifest and the CI recipes in docs/ci.md: well-formed, and the commands they run work."""
from __future__ import annotations

import json
import re
import shlex
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
import yaml

from auditor.cli import main

ROOT = Path(__file__).resolve().parent.parent
DOC = (ROOT / "docs" / "ci.md").read_text(encoding="utf-8")


def yaml_blocks() -> list[object]:
    return [yaml.safe_load(b) for b in re.findall(r"```yaml\n(.*?)```", DOC, flags=re.S)]


def test_pre_commit_manifest() -> None:
    hooks = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text())
    # pre-commit manifest: a list of hooks, each with id, name, entry and language (pre-commit docs, from memory)
    assert isinstance(hooks, list) and len(hooks) == 1
    hook = hooks[0]
    assert {"id", "name", "entry", "language"} <= set(hook)
    assert hook["id"] == "auditor" and hook["language"] == "python"
    assert set(hook["types_or"]) == {"python", "jupyter"}
    assert hook["entry"].split()[0] == "auditor"  # the console script the package installs
    scripts = (ROOT / "pyproject.toml").read_text()
    assert 'auditor = "auditor.cli:entry"' in scripts


def test_hook_entry_runs_on_file_names(tmp_path: Path) -> None:
    # pre-commit appends the staged file names to `entry`
    hook = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text())[0]
    (tmp_path / "clean.py").write_text("def area(r):\n    return 3.14159 * r * r\n")
    (tmp_path / "gauge.py").write_text("import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n")
    command = [sys.executable, "-m", *shlex.split(hook["entry"])]
    clean = subprocess.run([*command, "clean.py"], cwd=tmp_path, capture_output=True, text=True,
                           env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})
    flagged = subprocess.run([*command, "clean.py", "gauge.py"], cwd=tmp_path, capture_output=True, text=True,
                             env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})
    assert clean.returncode == 0, clean.stderr
    assert flagged.returncode == 1 and "gauge.py:5:12" in flagged.stdout


def test_doc_yaml_blocks_parse_and_upload_sarif() -> None:
    blocks = yaml_blocks()
    assert len(blocks) == 3
    workflow = blocks[0]
    steps = workflow["jobs"]["audit"]["steps"]
    assert workflow["permissions"]["security-events"] == "write"
    uploads = [s for s in steps if str(s.get("uses", "")).startswith("github/codeql-action/upload-sarif")]
    assert uploads and uploads[0]["with"]["sarif_file"] == "auditor.sarif"
    runs = " ".join(str(s.get("run", "")) for s in steps)
    assert "--format sarif --output auditor.sarif" in runs and "--changed-since" in runs
    assert blocks[1]["repos"][0]["hooks"][0]["id"] == "auditor"


def test_documented_scan_writes_valid_sarif(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                             sarif_schema: dict) -> None:
    step = next(s for s in yaml_blocks()[0]["jobs"]["audit"]["steps"] if "sarif" in str(s.get("run", "")))
    argv = shlex.split(step["run"])
    assert argv[:2] == ["auditor", "scan"]
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    (tmp_path / "src").mkdir()
    (tmp_path / "src" / "gauge.py").write_text("import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n")
    assert main(argv[1:]) == 0  # --fail-on never: the report is always written and uploaded
    doc = json.loads((tmp_path / "auditor.sarif").read_text())
    jsonschema.validate(doc, sarif_schema)
    assert [r["ruleId"] for r in doc["runs"][0]["results"]] == ["exp-minus-one"]
