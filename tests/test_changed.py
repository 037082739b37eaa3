"""--changed-since against real git repositories made in temp folders."""
from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path

import pytest

from auditor.changed import parse_diff
from auditor.cli import main

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")

# exp-minus-one and log-of-one-plus fire on these lines (rules/exp_minus_one.py, rules/log_of_one_plus.py)
EXPM1 = "    return math.exp(x) - 1\n"
LOG1P = "    return math.log(1 + x)\n"


def git(repo: Path, *args: str) -> str:
    env = {**os.environ, "GIT_AUTHOR_NAME": "t", "GIT_AUTHOR_EMAIL": "t@example.invalid",
           "GIT_COMMITTER_NAME": "t", "GIT_COMMITTER_EMAIL": "t@example.invalid", "GIT_CONFIG_GLOBAL": os.devnull}
    done = subprocess.run(["git", *args], cwd=repo, env=env, capture_output=True, text=True, check=True)
    return done.stdout


def module(*bodies: str) -> str:
    out = "import math\n"
    for i, body in enumerate(bodies):
        out += f"\n\ndef f{i}(x):\n{body}"
    return out


@pytest.fixture()
def repo(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    root = tmp_path / "lab"
    root.mkdir()
    git(root, "init", "-q", "-b", "main")
    (root / "pkg").mkdir()
    (root / "pkg" / "edited.py").write_text(module(EXPM1, LOG1P))
    (root / "pkg" / "moved.py").write_text(module(EXPM1))
    (root / "pkg" / "renamed_edit.py").write_text(module(EXPM1, "    y = x * 2\n    return y\n"))
    (root / "pkg" / "deleted.py").write_text(module(EXPM1))
    (root / "pkg" / "untouched.py").write_text(module(LOG1P))
    (root / ".gitignore").write_text("ignored/\n")
    git(root, "add", "-A")
    git(root, "commit", "-qm", "base")
    git(root, "checkout", "-qb", "feature")
    monkeypatch.chdir(root)
    return root


def scan_json(*args: str) -> dict:
    out = Path("report.json")
    status = main(["scan", *args, "--format", "json", "--output", str(out), "--fail-on", "never"])
    assert status == 0
    data = json.loads(out.read_text())
    out.unlink()
    return data


def where(data: dict) -> set[tuple[str, int, str]]:
    return {(f["path"], f["line"], f["rule"]) for f in data["findings"]}


def test_branch_edits_moves_renames_deletions_and_new_files(repo: Path) -> None:
    # an edit: f1 rewritten with a new finding on a changed line; f0 (line 5) untouched
    (repo / "pkg" / "edited.py").write_text(module(EXPM1, "    return math.log(1 + x * 2)\n"))
    # a pure move (rename, no content change): nothing to report
    git(repo, "mv", "pkg/moved.py", "pkg/relocated.py")
    # a rename with an edit: only the edited function's finding counts
    git(repo, "mv", "pkg/renamed_edit.py", "pkg/renamed.py")
    (repo / "pkg" / "renamed.py").write_text(module(EXPM1, "    y = math.exp(x) - 1\n    return y\n"))
    git(repo, "rm", "-q", "pkg/deleted.py")
    # a file new on the branch, committed (unlike deleted.py, so git does not pair them as a rename)
    fresh = "import numpy as np\n\n\ndef spread(gain, offset):\n    scale = np.exp(gain) - 1\n    return scale + offset\n"
    (repo / "pkg" / "fresh.py").write_text(fresh)
    git(repo, "add", "-A")
    git(repo, "commit", "-qm", "feature work")
    # an untracked file counts as wholly new; an ignored one is not scanned-as-changed
    (repo / "pkg" / "scratch.py").write_text(module(LOG1P))
    (repo / "ignored").mkdir()
    (repo / "ignored" / "junk.py").write_text(module(EXPM1))

    everything = where(scan_json("pkg", "ignored"))
    assert ("pkg/relocated.py", 5, "exp-minus-one") in everything  # the full scan still sees it
    changed = where(scan_json("pkg", "ignored", "--changed-since", "main"))
    assert changed == {
        ("pkg/edited.py", 9, "log-of-one-plus"),
        ("pkg/renamed.py", 9, "exp-minus-one"),
        ("pkg/fresh.py", 5, "exp-minus-one"),
        ("pkg/scratch.py", 5, "log-of-one-plus"),
    }


def test_uncommitted_edit_and_paths_relative_to_a_subfolder(repo: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # report paths are relative to cwd (pkg/), git's to the repo top: both must meet
    (repo / "pkg" / "untouched.py").write_text(module(LOG1P, EXPM1))
    monkeypatch.chdir(repo / "pkg")
    assert where(scan_json(".", "--changed-since", "main")) == {("untouched.py", 9, "exp-minus-one")}
    elsewhere = repo.parent / "elsewhere"  # cwd outside the repository: report paths are absolute
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    absolute = (repo / "pkg" / "untouched.py").as_posix()
    assert where(scan_json(absolute, "--changed-since", "HEAD")) == {(absolute, 9, "exp-minus-one")}


def test_multiline_finding_counts_when_any_of_its_lines_changed(repo: Path) -> None:
    body = "    return (math.exp(x)\n            - 1)\n"
    (repo / "pkg" / "multi.py").write_text(module(body))
    git(repo, "add", "-A")
    git(repo, "commit", "-qm", "multi")
    git(repo, "tag", "before")
    (repo / "pkg" / "multi.py").write_text(module("    return (math.exp(x)\n            - 1.0)\n"))
    assert where(scan_json("pkg/multi.py", "--changed-since", "before")) == {("pkg/multi.py", 5, "exp-minus-one")}


def test_unknown_ref_is_a_usage_error(repo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["scan", "pkg", "--changed-since", "no-such-ref"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("auditor: error:") and "no-such-ref" in err


def test_file_outside_any_repository_is_an_error_entry(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    loose = tmp_path / "loose"
    loose.mkdir()
    (loose / "calc.py").write_text(module(EXPM1))
    monkeypatch.chdir(loose)
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    data = scan_json("calc.py", "--changed-since", "HEAD")
    assert data["findings"] == []
    assert [e["path"] for e in data["errors"]] == ["calc.py"]
    assert "not in a git repository" in data["errors"][0]["message"]


def test_parse_diff_reads_hunk_headers() -> None:
    # hunk header grammar: git-diff(1), "combined diff format" / unified format (common practice)
    diff = (
        "diff --git a/x.py b/x.py\n--- a/x.py\n+++ b/x.py\n"
        "@@ -3 +3 @@\n-a\n+b\n@@ -10,0 +11,2 @@\n+c\n+d\n@@ -20,2 +21,0 @@\n-e\n-f\n"
        "diff --git a/gone.py b/gone.py\n--- a/gone.py\n+++ /dev/null\n@@ -1,2 +0,0 @@\n-g\n-h\n"
    )
    assert parse_diff(diff) == {"x.py": frozenset({3, 11, 12})}


def test_parse_diff_handles_spaces_and_quoted_names(repo: Path) -> None:
    (repo / "pkg" / "with space.py").write_text(module(EXPM1))
    (repo / "pkg" / "caf\u00e9.py").write_text(module(EXPM1))
    git(repo, "add", "-A")
    git(repo, "commit", "-qm", "odd names")
    (repo / "pkg" / "with space.py").write_text(module(LOG1P))
    (repo / "pkg" / "caf\u00e9.py").write_text(module(LOG1P))
    found = where(scan_json("pkg", "--changed-since", "HEAD"))
    assert found == {("pkg/with space.py", 5, "log-of-one-plus"), ("pkg/caf\u00e9.py", 5, "log-of-one-plus")}
