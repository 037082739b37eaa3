"""Keep only findings on lines added or changed since a git ref (the pull-request view)."""
from __future__ import annotations

import difflib
import json
import re
import subprocess
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from auditor.config import ConfigError
from auditor.model import FileError, Finding, Report

_HUNK = re.compile(r"^@@ -\d+(?:,\d+)? \+(\d+)(?:,(\d+))? @@")
ALL_LINES = frozenset({0})  #: marker: the whole file is new (untracked, or added since the ref)


class ChangedError(ConfigError):
    """The ref is unknown or git cannot be run (exit 2, like any bad option value)."""


@dataclass(slots=True)
class RepoChanges:
    """Changed lines of one repository, keyed by path relative to its top folder."""

    top: Path
    lines: dict[str, frozenset[int]] = field(default_factory=dict)  #: new-side line numbers; ALL_LINES = every line
    notebooks: dict[str, dict[int, frozenset[int]]] = field(default_factory=dict)  #: path -> cell -> lines


def _git(args: list[str], cwd: Path) -> str:
    """Run git and return its output; a failure becomes ChangedError with git's own words."""
    try:
        done = subprocess.run(["git", *args], cwd=cwd, capture_output=True, text=True, encoding="utf-8", errors="replace")
    except OSError as exc:
        raise ChangedError(f"--changed-since needs git: {exc}") from None
    if done.returncode != 0:
        raise ChangedError(f"git {' '.join(args[:2])} failed: {done.stderr.strip() or done.returncode}")
    return done.stdout


def parse_diff(diff: str) -> dict[str, frozenset[int]]:
    """Lines added or changed per new-side path in `git diff --unified=0` output."""
    out: dict[str, set[int]] = {}
    current: set[int] | None = None
    for line in diff.splitlines():
        if line.startswith("+++ "):
            target = line[4:].removesuffix("\t")  # git adds a tab after names with spaces
            current = None if target == "/dev/null" else out.setdefault(_unquote(target)[2:], set())
        elif line.startswith("@@") and current is not None:
            match = _HUNK.match(line)
            if match:
                start, count = int(match.group(1)), int(match.group(2) or "1")
                current.update(range(start, start + count))
    return {path: frozenset(lines) for path, lines in out.items()}


def _unquote(path: str) -> str:
    """git quotes unusual paths C-style ("b/caf\\303\\251.py"); undo that."""
    if path.startswith('"') and path.endswith('"'):
        raw = path[1:-1].encode("latin-1", "backslashreplace").decode("unicode_escape")
        return raw.encode("latin-1").decode("utf-8", "replace")
    return path


def _added_files(diff: str) -> set[str]:
    """Paths git reports as new files (wholly added since the ref)."""
    added: set[str] = set()
    lines = diff.splitlines()
    for i, line in enumerate(lines):
        if line.startswith("new file mode"):
            for follow in lines[i + 1 : i + 4]:
                if follow.startswith("+++ "):
                    added.add(_unquote(follow[4:].removesuffix("\t"))[2:])
                    break
    return added


def repo_changes(top: Path, ref: str) -> RepoChanges:
    """Changed lines of the working tree against `ref`, plus untracked files as wholly new."""
    try:
        _git(["rev-parse", "--verify", "--quiet", f"{ref}^{{commit}}"], top)
    except ChangedError:
        raise ChangedError(f"--changed-since: {ref!r} is not a commit in the git repository at {top}") from None
    diff = _git(["-c", "core.quotepath=on", "diff", "--unified=0", "-M", "--no-color", "--no-ext-diff",
                  "--src-prefix=a/", "--dst-prefix=b/", ref, "--"], top)
    changes = RepoChanges(top, parse_diff(diff))
    for path in _added_files(diff):
        changes.lines[path] = ALL_LINES
    untracked = _git(["ls-files", "--others", "--exclude-standard", "-z"], top)
    for path in filter(None, untracked.split("\0")):
        changes.lines[path] = ALL_LINES
    for path, lines in list(changes.lines.items()):
        if path.endswith(".ipynb") and lines is not ALL_LINES:
            changes.notebooks[path] = _notebook_changes(top, ref, path)
    return changes


def _code_cells(text: str) -> list[tuple[int, list[str]]]:
    """(1-based cell number, source lines) of each code cell; [] when it is not a notebook."""
    try:
        cells = json.loads(text).get("cells", [])
    except (ValueError, AttributeError):
        return []
    out = []
    for number, cell in enumerate(cells, start=1):
        if isinstance(cell, dict) and cell.get("cell_type") == "code":
            source = cell.get("source", "")
            source = "".join(source) if isinstance(source, list) else str(source)
            out.append((number, source.splitlines()))
    return out


def _notebook_changes(top: Path, ref: str, path: str) -> dict[int, frozenset[int]]:
    """Changed lines per cell: the JSON diff is meaningless here, so diff the code cells' text."""
    try:
        old_text = _git(["show", f"{ref}:{path}"], top)
    except ChangedError:
        old_text = ""
    old = [line for _, lines in _code_cells(old_text) for line in lines]
    new_cells = _code_cells((top / path).read_text(encoding="utf-8", errors="replace"))
    where = [(number, i + 1) for number, lines in new_cells for i in range(len(lines))]
    new = [line for _, lines in new_cells for line in lines]
    changed: dict[int, set[int]] = {}
    matcher = difflib.SequenceMatcher(a=old, b=new, autojunk=False)
    for tag, _i1, _i2, j1, j2 in matcher.get_opcodes():
        if tag in ("replace", "insert"):
            for number, line in where[j1:j2]:
                changed.setdefault(number, set()).add(line)
    return {number: frozenset(lines) for number, lines in changed.items()}


class ChangeIndex:
    """Answers 'is this finding on a changed line?' for files in any repository."""

    def __init__(self, ref: str, cwd: Path | None = None) -> None:
        self.ref = ref
        self.cwd = (cwd or Path.cwd()).resolve()
        self._tops: dict[Path, Path | None] = {}
        self._repos: dict[Path, RepoChanges] = {}

    def _top(self, folder: Path) -> Path | None:
        if folder not in self._tops:
            try:
                self._tops[folder] = Path(_git(["rev-parse", "--show-toplevel"], folder).strip()).resolve()
            except (ChangedError, FileNotFoundError, NotADirectoryError):
                self._tops[folder] = None
        return self._tops[folder]

    def locate(self, display: str) -> tuple[RepoChanges, str] | None:
        """The repository holding a report path (relative to cwd, or absolute) and its path there."""
        raw = self.cwd / display
        folder = raw.parent.resolve()  # resolve the folder, not the file: a symlinked file stays put
        path = folder / raw.name
        while not folder.is_dir() and folder != folder.parent:
            folder = folder.parent  # the file may have been deleted; its repo still answers
        top = self._top(folder)
        if top is None:
            return None
        if top not in self._repos:
            self._repos[top] = repo_changes(top, self.ref)
        return self._repos[top], path.relative_to(top).as_posix()

    def touches(self, finding: Finding) -> bool | None:
        """True when any line of the finding changed; None when its file is in no repository."""
        found = self.locate(finding.path)
        if found is None:
            return None
        repo, rel = found
        lines = repo.lines.get(rel)
        if lines is None:
            return False
        if lines is ALL_LINES:
            return True
        if finding.cell is not None:
            lines = repo.notebooks.get(rel, {}).get(finding.cell, frozenset())
        return any(n in lines for n in range(finding.span.line, finding.span.end_line + 1))


def _keep(findings: Iterable[Finding], index: ChangeIndex, outside: set[str]) -> tuple[Finding, ...]:
    kept = []
    for f in findings:
        if f.path == "<stdin>":
            kept.append(f)  # text on standard input has no history: all of it is under review
            continue
        verdict = index.touches(f)
        if verdict is None:
            outside.add(f.path)
        elif verdict:
            kept.append(f)
    return tuple(kept)


def keep_changed(report: Report, ref: str) -> Report:
    """The report narrowed to findings whose lines were added or changed since `ref`."""
    index = ChangeIndex(ref)
    outside: set[str] = set()
    findings = _keep(report.findings, index, outside)
    unchanged = _keep(report.unchanged, index, outside)
    errors = list(report.errors) + [
        FileError(p, f"not in a git repository: cannot tell which lines changed since {ref}; findings not shown")
        for p in sorted(outside)
    ]
    return Report(findings, tuple(errors), report.stats, absent=report.absent, unchanged=unchanged)
