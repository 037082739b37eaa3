"""The command line against CONTRACT.md: commands, exit codes, config, baselines, acceptance."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from auditor.cli import main

ROOT = Path(__file__).resolve().parent.parent
BUG = "import math\n\n\ndef gain(r):\n    return math.exp(r) - 1.0\n"
CLEAN = "import math\n\n\ndef gain(r):\n    return math.expm1(r)\n"


def run(capsys, *args: str) -> tuple[int, str, str]:
    status = main(list(args))
    out, err = capsys.readouterr()
    return status, out, err


@pytest.fixture
def project(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "pkg").mkdir()
    (tmp_path / "pkg" / "bug.py").write_text(BUG)
    (tmp_path / "pkg" / "clean.py").write_text(CLEAN)
    return tmp_path


def test_exit_codes(project, capsys):
    assert run(capsys, "scan", "pkg/clean.py")[0] == 0
    assert run(capsys, "scan", "pkg")[0] == 1
    assert run(capsys, "scan", "pkg", "--fail-on", "error")[0] == 0
    assert run(capsys, "scan", "pkg", "--fail-on", "never")[0] == 0
    assert run(capsys, "scan", "pkg", "--fail-on", "note")[0] == 1
    status, _, err = run(capsys, "scan", "pkg", "--only", "no-such-rule")
    assert status == 2 and "unknown rule id no-such-rule" in err
    assert run(capsys, "scan", "pkg", "--fail-on", "sometimes")[0] == 2
    assert run(capsys, "bogus")[0] == 2


def test_text_report_is_plain_when_piped(project, capsys):
    status, out, _ = run(capsys, "scan", "pkg")
    assert status == 1
    assert "pkg/bug.py:5:12: warning [exp-minus-one]" in out
    assert "\x1b[" not in out
    assert ">" in out and "| " in out  # a code frame
    assert "1 finding(s)" in out


def test_json_report_shape(project, capsys):
    status, out, _ = run(capsys, "scan", "pkg", "--format", "json")
    data = json.loads(out)
    assert set(data) == {"schema", "findings", "errors", "stats"}
    assert data["schema"] == "auditor-report/1"
    (f,) = data["findings"]
    assert set(f) == {"rule", "severity", "path", "line", "column", "end_line", "end_column",
                      "message", "snippet", "measurement", "rewrite"}
    assert (f["path"], f["line"], f["column"], f["end_line"], f["end_column"]) == ("pkg/bug.py", 5, 12, 5, 29)
    assert f["snippet"] == "math.exp(r) - 1.0"
    assert set(data["stats"]) == {"files", "lines", "seconds"} and data["stats"]["files"] == 2


def test_sarif_is_valid(project, capsys, sarif_schema):
    jsonschema = pytest.importorskip("jsonschema")
    _, out, _ = run(capsys, "scan", "pkg", "--format", "sarif")
    data = json.loads(out)
    jsonschema.validate(data, sarif_schema)
    run_ = data["runs"][0]
    ids = [r["id"] for r in run_["tool"]["driver"]["rules"]]
    assert "alternating-series" in ids and "exp-minus-one" in ids
    (result,) = run_["results"]
    assert result["ruleId"] == "exp-minus-one" and result["level"] == "warning"
    region = result["locations"][0]["physicalLocation"]["region"]
    assert (region["startLine"], region["startColumn"]) == (5, 12)


def test_output_file_and_stdin(project, capsys, monkeypatch):
    import io

    assert run(capsys, "scan", "pkg", "--format", "json", "--output", "r.json")[0] == 1
    assert json.loads(Path("r.json").read_text())["findings"][0]["rule"] == "exp-minus-one"
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(BUG.encode())))
    status, out, _ = run(capsys, "scan", "-", "--format", "json")
    assert status == 1 and json.loads(out)["findings"][0]["path"] == "<stdin>"


def test_config_found_upward_and_overridden(project, capsys):
    (project / "pyproject.toml").write_text('[tool.auditor]\nskip = ["exp-minus-one"]\n')
    assert run(capsys, "scan", "pkg/bug.py")[0] == 0
    assert run(capsys, "scan", "pkg/bug.py", "--only", "exp-minus-one", "--skip", "log-of-one-plus")[0] == 1


@pytest.mark.parametrize(
    ("toml", "needle"),
    [
        ('[tool.auditor]\ncolour = "red"\n', "unknown key 'colour'"),
        ('[tool.auditor]\nonly = ["exp-minus-two"]\n', "unknown rule id exp-minus-two"),
        ('[tool.auditor]\njobs = 0\n', "jobs must be a positive integer"),
        ('[tool.auditor]\nfail-on = "loud"\n', "fail-on must be one of"),
        ("[tool.auditor\n", "cannot read"),
    ],
)
def test_bad_config_is_exit_2(project, capsys, toml, needle):
    (project / "pyproject.toml").write_text(toml)
    status, _, err = run(capsys, "scan", "pkg")
    assert status == 2 and needle in err, err


def test_config_exclude(project, capsys):
    (project / "pyproject.toml").write_text('[tool.auditor]\nexclude = ["pkg/bug.py"]\n')
    assert run(capsys, "scan", ".")[0] == 0


def test_acceptance_comments(project, capsys):
    Path("pkg/bug.py").write_text(BUG.replace("- 1.0\n", "- 1.0  # auditor: accept exp-minus-one -- r is large here\n"))
    assert run(capsys, "scan", "pkg")[0] == 0
    Path("pkg/bug.py").write_text(BUG.replace("    return", "    # auditor: accept -- reviewed\n    return"))
    assert run(capsys, "scan", "pkg")[0] == 0
    Path("pkg/bug.py").write_text(BUG.replace("- 1.0\n", "- 1.0  # auditor: accept log-of-one-plus -- other rule\n"))
    assert run(capsys, "scan", "pkg")[0] == 1


def test_baseline_survives_line_shifts(project, capsys):
    assert run(capsys, "scan", "pkg", "--write-baseline", "base.json")[0] == 1
    shifted = "# a new header comment\n\n\n" + BUG
    Path("pkg/bug.py").write_text(shifted)
    assert run(capsys, "scan", "pkg", "--baseline", "base.json")[0] == 0
    Path("pkg/bug.py").write_text(shifted + "\n\ndef loss(q):\n    return 1 - math.exp(-q)\n")
    status, out, _ = run(capsys, "scan", "pkg", "--baseline", "base.json", "--format", "json")
    assert status == 1
    assert [f["snippet"] for f in json.loads(out)["findings"]] == ["1 - math.exp(-q)"]


def test_bad_baseline_is_exit_2(project, capsys):
    Path("base.json").write_text("{not json")
    status, _, err = run(capsys, "scan", "pkg", "--baseline", "base.json")
    assert status == 2 and "not valid JSON" in err


def test_jobs_give_the_same_report(project, capsys):
    for i in range(6):
        Path(f"pkg/m{i}.py").write_text(BUG * (i + 1))
    one = json.loads(run(capsys, "scan", "pkg", "--format", "json")[1])
    two = json.loads(run(capsys, "scan", "pkg", "--format", "json", "--jobs", "2")[1])
    assert one["findings"] == two["findings"] and one["errors"] == two["errors"]


def test_rules_and_explain(capsys):
    status, out, _ = run(capsys, "rules")
    assert status == 0 and "alternating-series" in out and "exp-minus-one" in out
    status, out, _ = run(capsys, "explain", "exp-minus-one")
    assert status == 0 and "Flagged:" in out and "Clean:" in out and "Method behind the fix:" in out
    assert run(capsys, "explain", "no-such-rule")[0] == 2


def test_python_dash_m_entry_point(project):
    env_path = str(ROOT)
    done = subprocess.run([sys.executable, "-m", "auditor", "scan", "pkg"], capture_output=True, text=True,
                          env={"PYTHONPATH": env_path, "PATH": "/usr/bin:/bin", "NO_COLOR": "1"})
    assert done.returncode == 1, done.stderr
    assert "[exp-minus-one]" in done.stdout
