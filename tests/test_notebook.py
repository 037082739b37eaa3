"""Notebooks: real .ipynb files written with nbformat, scanned cell by cell, IPython syntax skipped."""
from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import jsonschema
import nbformat
import pytest
from nbformat.v4 import new_code_cell, new_markdown_cell, new_notebook

from auditor import Config, scan_paths
from auditor.cli import main
from auditor.notebook import NotebookError, cell_source, neutralise, program_source, read_cells

# exp-minus-one fires on `math.exp(x) - 1`, log-of-one-plus on `math.log(1 + x)`
CELLS = [
    new_markdown_cell("# Drift of the bench thermometer (invented lab)"),
    new_code_cell("%matplotlib inline\nimport math\nimport numpy as np"),
    new_code_cell("def gain(x):\n    %time y = 1\n    return math.exp(x) - 1\n"),
    new_code_cell("%%bash\necho math.exp(x) - 1"),
    new_code_cell("!pip list\nfiles = !ls\nnp.exp?\n??np.log\nloss = math.log(1 + drift)\n"),
    new_code_cell("total = (1.0\n        % 3)\nsame = (2\n        != 3)\n"),
]


def write(path: Path, cells: list, **meta) -> Path:
    nb = new_notebook(cells=cells, metadata={"language_info": {"name": "python"}, **meta})
    nbformat.validate(nb)  # the nbformat 4 JSON schema, as Jupyter writes it
    nbformat.write(nb, str(path))
    return path


@pytest.fixture()
def lab(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.chdir(tmp_path)
    write(tmp_path / "thermo.ipynb", CELLS)
    return tmp_path


def test_findings_located_by_cell_and_line(lab: Path) -> None:
    report = scan_paths(["thermo.ipynb"])
    assert report.errors == ()
    got = [(f.path, f.cell, f.span.line, f.span.column, f.rule) for f in report.findings]
    assert got == [
        ("thermo.ipynb", 3, 3, 12, "exp-minus-one"),
        ("thermo.ipynb", 5, 5, 8, "log-of-one-plus"),
    ]
    assert report.findings[0].snippet == "math.exp(x) - 1"
    assert report.findings[0].function == "gain"


def test_imports_carry_across_cells(lab: Path) -> None:
    # cell 2 imports math; without it `math.exp` in cell 3 would be an unknown name, not exp
    alone = [new_code_cell("def gain(x):\n    return math.exp(x) - 1\n")]
    write(lab / "alone.ipynb", alone)
    assert scan_paths(["alone.ipynb"]).findings == ()
    program = program_source(lab / "thermo.ipynb")
    assert program.text.startswith("pass\nimport math\nimport numpy as np\n")
    assert program.locate(4) == (3, 1) and program.locate(6) == (3, 3)


def test_reading_agrees_with_nbformat(lab: Path) -> None:
    nb = nbformat.read(str(lab / "thermo.ipynb"), as_version=4)
    code = [i + 1 for i, c in enumerate(nb.cells) if c.cell_type == "code"]
    cells = read_cells((lab / "thermo.ipynb").read_text())
    assert [c.number for c in cells] == code
    for cell in cells:  # same line count as the cell: every span maps straight back
        assert cell.text.count("\n") == nb.cells[cell.number - 1].source.count("\n")


def test_magics_are_neutralised_not_misread() -> None:
    text, skipped = neutralise("x = 1\n%timeit f(x)\n!ls \\\n  -l\nif x:\n    %env A=1\nr = (x\n     % 2)\n")
    assert not skipped
    assert text.split("\n") == ["x = 1", "pass", "pass", "", "if x:", "    pass", "r = (x", "     % 2)", ""]
    assert neutralise("\n%%writefile a.py\nprint(1)\n") == ("\n\n\n", True)
    assert neutralise('s = """\n%d kept\n!kept\n"""\n')[0] == 's = """\n%d kept\n!kept\n"""\n'


def test_json_text_and_sarif_show_the_cell(lab: Path, sarif_schema: dict, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["scan", "thermo.ipynb", "--format", "json", "--output", "r.json"]) == 1
    findings = json.loads((lab / "r.json").read_text())["findings"]
    assert [(f["cell"], f["line"]) for f in findings] == [(3, 3), (5, 5)]
    assert main(["scan", "thermo.ipynb", "--format", "sarif", "--output", "r.sarif"]) == 1
    doc = json.loads((lab / "r.sarif").read_text())
    jsonschema.validate(doc, sarif_schema)
    assert [r["properties"]["cell"] for r in doc["runs"][0]["results"]] == [3, 5]
    assert main(["scan", "thermo.ipynb"]) == 1
    out = capsys.readouterr().out
    assert "thermo.ipynb[cell 3]:3:12: warning [exp-minus-one]" in out
    assert '"cells"' not in out  # no code frame cut from the notebook's JSON


def test_python_file_json_has_no_cell_key(lab: Path) -> None:
    (lab / "plain.py").write_text("import math\nv = math.exp(rate) - 1\n")
    assert main(["scan", "plain.py", "--format", "json", "--output", "r.json"]) == 1
    assert "cell" not in json.loads((lab / "r.json").read_text())["findings"][0]


def test_bad_cells_and_bad_notebooks_are_errors_as_data(lab: Path) -> None:
    write(lab / "broken.ipynb", [new_code_cell("def f(:\n  pass"), new_code_cell("import math\nv = math.exp(t) - 1")])
    (lab / "garbage.ipynb").write_text("{ not json")
    (lab / "old.ipynb").write_text(json.dumps({"nbformat": 3, "worksheets": []}))
    write(lab / "other.ipynb", [new_code_cell("x <- 1")], kernelspec={"name": "ir", "language": "R", "display_name": "R"})
    (lab / "other.ipynb").write_text((lab / "other.ipynb").read_text().replace('"python"', '"R"'))
    report = scan_paths(["."])
    errors = {e.path: e.message for e in report.errors}
    assert errors["broken.ipynb"].startswith("cell 1: syntax error at line 1")
    assert "invalid JSON" in errors["garbage.ipynb"]
    assert "nbformat 3" in errors["old.ipynb"]
    assert "kernel language is r" in errors["other.ipynb"]
    assert [(f.path, f.cell) for f in report.findings if f.path == "broken.ipynb"] == [("broken.ipynb", 2)]


def test_inserting_a_cell_keeps_fingerprints(lab: Path) -> None:
    before = {f.rule: f.fingerprint for f in scan_paths(["thermo.ipynb"]).findings}
    write(lab / "thermo.ipynb", [new_code_cell("import math\nscale = 3.0")] + CELLS)
    after = scan_paths(["thermo.ipynb"]).findings
    assert [f.cell for f in after] == [4, 6]
    assert {f.rule: f.fingerprint for f in after} == before


def test_accept_directive_inside_a_cell(lab: Path) -> None:
    body = "import math\nv = math.exp(t) - 1  # auditor: accept exp-minus-one -- calibration offset only\n"
    write(lab / "quiet.ipynb", [new_code_cell(body)])
    assert scan_paths(["quiet.ipynb"]).findings == ()


def test_cell_source_matches_spans(lab: Path) -> None:
    for f in scan_paths(["thermo.ipynb"]).findings:
        text = cell_source("thermo.ipynb", f.cell).split("\n")
        line = text[f.span.line - 1]
        assert line[f.span.column - 1 : f.span.end_column - 1] == f.snippet
    with pytest.raises(NotebookError, match="no code cell number 1"):
        cell_source(lab / "thermo.ipynb", 1)  # markdown
    with pytest.raises(NotebookError, match="cell magic"):
        cell_source(lab / "thermo.ipynb", 4)


def test_folder_scan_finds_notebooks_but_not_checkpoints(lab: Path) -> None:
    (lab / ".ipynb_checkpoints").mkdir()
    shutil.copy(lab / "thermo.ipynb", lab / ".ipynb_checkpoints" / "thermo-checkpoint.ipynb")
    paths = {f.path for f in scan_paths(["."], Config()).findings}
    assert paths == {"thermo.ipynb"}


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_changed_since_maps_notebook_edits_to_cells(lab: Path) -> None:
    def git(*args: str) -> None:
        subprocess.run(["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid", *args],
                       cwd=lab, check=True, capture_output=True)

    git("init", "-q")
    git("add", "thermo.ipynb")
    git("commit", "-qm", "notebook")
    edited = list(CELLS)
    edited[4] = new_code_cell("!pip list\nfiles = !ls\nnp.exp?\n??np.log\nloss = math.log(1 + 2 * drift)\n")
    write(lab / "thermo.ipynb", edited)
    assert main(["scan", "thermo.ipynb", "--changed-since", "HEAD", "--format", "json", "--output", "r.json"]) == 1
    findings = json.loads((lab / "r.json").read_text())["findings"]
    assert [(f["cell"], f["line"], f["rule"]) for f in findings] == [(5, 5, "log-of-one-plus")]


def test_program_coordinates_round_trip(lab: Path) -> None:
    from auditor.notebook import from_program, to_program

    program = program_source(lab / "thermo.ipynb")
    lines = program.text.split("\n")
    for f in scan_paths(["thermo.ipynb"]).findings:
        moved = to_program(f, program)
        assert lines[moved.span.line - 1][moved.span.column - 1 : moved.span.end_column - 1] == f.snippet
        assert program.locate(moved.span.line) == (f.cell, f.span.line)
        assert from_program(moved, f) == f
