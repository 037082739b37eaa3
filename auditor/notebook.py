"""Jupyter notebooks: read the nbformat 4 JSON, neutralise IPython syntax, scan the code cells.

Parsed with the standard library's json rather than nbformat, so notebooks cost no extra
dependency; the tests check the reading against notebooks written and validated by nbformat.
Cells are numbered from 1 counting every cell (markdown too), as a reader counts them on screen;
a finding's span is relative to its cell. The code cells are scanned together, in order, as the
kernel runs them (imports and variables carry across cells).
"""
from __future__ import annotations

import json
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from auditor.model import FileError, Finding, Span
from auditor.rule import Rule
from auditor.scan import FileResult, _with_fingerprints, parse_or_error, scan_text
from auditor.sources import SourceText

#: line magics (%), shell escapes (!), and `name = %magic` / `name = !cmd` captures
_MAGIC = re.compile(r"^\s*(?:%|!(?!=)|[A-Za-z_][\w.]*(?:\s*,\s*[A-Za-z_][\w.]*)*\s*=\s*[%!])")
#: help requests: `obj?`, `obj??`, `?obj`
_HELP = re.compile(r"^\s*(?:\?{1,2}[\w.]+|[\w.]+\?{1,2})\s*$")


class NotebookError(ValueError):
    """A notebook or cell that cannot be read; the message says why."""


@dataclass(frozen=True, slots=True)
class Cell:
    """One code cell, with IPython-only lines replaced so the text parses as Python."""

    number: int  #: 1-based position among all cells of the notebook
    text: str  #: the cell's source, magics neutralised, line numbers unchanged
    skipped: bool  #: True for a cell magic (%%...): the whole cell is another language or mode


def neutralise(source: str) -> tuple[str, bool]:
    """(Python text with the same line numbers, skipped?) for one cell's source."""
    lines = source.split("\n")
    first = next((line for line in lines if line.strip()), "")
    if first.lstrip().startswith("%%"):
        return "\n".join("" for _ in lines), True
    out: list[str] = []
    continued = False
    state = (0, "")  # open brackets, open triple quote: magics only count at a statement start
    for line in lines:
        if continued:
            out.append("")  # continuation of a magic or shell line
            continued = line.rstrip().endswith("\\")
        elif state == (0, "") and (_MAGIC.match(line) or _HELP.match(line)):
            indent = line[: len(line) - len(line.lstrip())]
            out.append(f"{indent}pass")  # `pass` keeps an indented block non-empty
            continued = line.rstrip().endswith("\\")
        else:
            out.append(line)
            state = _carry(line, state)
    return "\n".join(out), False


def _carry(line: str, state: tuple[int, str]) -> tuple[int, str]:
    """Bracket depth and open triple quote after `line` (a light tokenizer; magics break the real one)."""
    depth, triple = state
    i, n = 0, len(line)
    while i < n:
        if triple:
            end = line.find(triple, i)
            if end < 0:
                return depth, triple
            i, triple = end + 3, ""
            continue
        ch = line[i]
        if ch == "#":
            break
        if line.startswith(('"""', "\'\'\'"), i):
            triple, i = line[i : i + 3], i + 3
            continue
        if ch in "\"'":
            end = i + 1
            while end < n and line[end] != ch:
                end += 2 if line[end] == "\\" else 1
            i = end + 1
            continue
        depth += (ch in "([{") - (ch in ")]}")
        i += 1
    if line.rstrip().endswith("\\") and not triple:
        return max(depth, 0) or 1, triple  # an explicit line continuation: the next line goes on
    return max(depth, 0), triple


def _source_of(cell: dict[str, Any]) -> str:
    source = cell.get("source", "")
    if isinstance(source, list):
        return "".join(str(part) for part in source)
    return str(source)


def read_cells(text: str) -> list[Cell]:
    """The code cells of an nbformat 4 notebook; NotebookError when it is not one."""
    try:
        data = json.loads(text)
    except ValueError as exc:
        raise NotebookError(f"not a notebook: invalid JSON ({exc})") from None
    if not isinstance(data, dict) or not isinstance(data.get("cells"), list):
        version = data.get("nbformat") if isinstance(data, dict) else None
        raise NotebookError(f"not an nbformat 4 notebook (nbformat {version!r}); only version 4 is read")
    language = _language(data.get("metadata"))
    if language and language != "python":
        raise NotebookError(f"notebook kernel language is {language}, not Python")
    cells = []
    for number, cell in enumerate(data["cells"], start=1):
        if isinstance(cell, dict) and cell.get("cell_type") == "code":
            body, skipped = neutralise(_source_of(cell))
            cells.append(Cell(number, body, skipped))
    return cells


def _language(metadata: Any) -> str:
    if not isinstance(metadata, dict):
        return ""
    for key, field in (("language_info", "name"), ("kernelspec", "language")):
        table = metadata.get(key)
        value = table.get(field) if isinstance(table, dict) else None
        if isinstance(value, str):
            return value.strip().lower()
    return ""


@dataclass(frozen=True, slots=True)
class Program:
    """The code cells joined in order, as the kernel runs them: imports in cell 1 serve cell 5."""

    text: str  #: every runnable cell's text, one after another; cells that do not parse are blank
    starts: tuple[tuple[int, int, int], ...]  #: (cell number, first line, last line) in `text`
    errors: tuple[str, ...]  #: "cell N: why", for cells that could not be parsed

    def locate(self, line: int) -> tuple[int, int]:
        """(cell number, line within the cell) of a line of `text`."""
        for number, first, last in self.starts:
            if first <= line <= last:
                return number, line - first + 1
        raise NotebookError(f"line {line} is in no cell")


def build_program(cells: Sequence[Cell], path: str = "<notebook>") -> Program:
    """Join the cells; a cell that does not parse on its own is blanked (and named) so the rest still scans."""
    parts: list[str] = []
    starts: list[tuple[int, int, int]] = []
    errors: list[str] = []
    line = 1
    for cell in cells:
        if cell.skipped:
            continue
        text = cell.text
        count = text.count("\n") + 1
        parsed = parse_or_error(text, path)
        if isinstance(parsed, FileError):
            errors.append(f"cell {cell.number}: {parsed.message}")
            text = "\n" * (count - 1)
        parts.append(text)
        starts.append((cell.number, line, line + count - 1))
        line += count
    return Program("\n".join(parts), tuple(starts), tuple(errors))


def scan_notebook(source: SourceText, rules: Sequence[Rule]) -> FileResult:
    """Scan the code cells as one program; findings carry the cell number, errors name the cell."""
    path = source.ref.display
    try:
        program = build_program(read_cells(source.text), path)
    except NotebookError as exc:
        return FileResult(path, (), (FileError(path, str(exc)),), 0)
    result = scan_text(program.text, path, rules)
    findings: list[Finding] = []
    for f in result.findings:
        cell, line = program.locate(f.span.line)
        span = Span(line, f.span.column, line + f.span.end_line - f.span.line, f.span.end_column)
        findings.append(f.with_(cell=cell, span=span))
    errors = [FileError(path, message) for message in program.errors] + list(result.errors)
    lines = sum(last - first + 1 for _, first, last in program.starts)
    # fingerprints ignore the cell number, so inserting a cell does not make old findings new
    return FileResult(path, tuple(_with_fingerprints(findings)), tuple(errors), lines)


def program_source(path: str | Path) -> Program:
    """The notebook's code cells as one program (see Program.locate); NotebookError when unreadable."""
    return build_program(read_cells(_read(path)), str(path))


def _read(path: str | Path) -> str:
    try:
        return Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise NotebookError(f"{path}: cannot read: {exc}") from None


def cell_source(path: str | Path, cell: int) -> str:
    """The neutralised text of cell `cell` (1-based, all cells counted); spans of findings index into it.

    Raises NotebookError when the file cannot be read, is not a notebook, or that cell is not code.
    """
    for found in read_cells(_read(path)):
        if found.number == cell:
            if found.skipped:
                raise NotebookError(f"{path}: cell {cell} is a cell magic, not Python")
            return found.text
    raise NotebookError(f"{path}: no code cell number {cell}")


def _first_line(program: Program, cell: int) -> int:
    for number, first, _ in program.starts:
        if number == cell:
            return first
    raise NotebookError(f"no scanned code cell number {cell}")


def to_program(finding: Finding, program: Program) -> Finding:
    """The finding with its span in the joined program's lines (for measuring with every cell's imports)."""
    if finding.cell is None:
        return finding
    shift = _first_line(program, finding.cell) - 1
    s = finding.span
    return finding.with_(span=Span(s.line + shift, s.column, s.end_line + shift, s.end_column))


def from_program(measured: Finding, original: Finding) -> Finding:
    """A finding measured in program coordinates, put back at its cell and line."""
    return measured.with_(span=original.span, cell=original.cell)
