"""Plain-text splicing of replacements into 1-based spans: offsets, newline style, re-indentation."""
from __future__ import annotations

import re
import textwrap
from collections.abc import Iterator

from auditor.model import Span

#: The line breaks the Python tokenizer knows (form feed and the Unicode separators are not breaks).
LINE_BREAK = re.compile(r"\r\n|\r|\n")


def line_starts(text: str) -> list[int]:
    """Offset of the first character of every line (tokenizer line breaks)."""
    return [0, *(m.end() for m in LINE_BREAK.finditer(text))]


def split_lines(text: str) -> list[str]:
    """The lines of `text` with their own line endings kept (tokenizer line breaks only)."""
    starts = line_starts(text)
    lines = [text[a:b] for a, b in zip(starts, [*starts[1:], len(text)])]
    return lines[:-1] if lines and lines[-1] == "" else lines


def _line_end(text: str, starts: list[int], line: int) -> int:
    """Offset just past the content of `line` (before its line break)."""
    end = starts[line] if line < len(starts) else len(text)
    while end > starts[line - 1] and text[end - 1] in "\r\n":
        end -= 1
    return end


def offsets(text: str, span: Span, starts: list[int] | None = None) -> tuple[int, int] | None:
    """(start, end) character offsets of `span` in `text`, or None when it does not fit the text."""
    starts = starts if starts is not None else line_starts(text)
    if not (1 <= span.line <= span.end_line <= len(starts)) or span.column < 1 or span.end_column < 1:
        return None
    start = starts[span.line - 1] + span.column - 1
    end = starts[span.end_line - 1] + span.end_column - 1
    if start > _line_end(text, starts, span.line) or end > _line_end(text, starts, span.end_line) or end < start:
        return None
    return start, end


def newline_of(text: str, offset: int = 0) -> str:
    """The line break used at or after `offset` (the file's first one as fallback; '\\n' if none)."""
    found = LINE_BREAK.search(text, offset) or LINE_BREAK.search(text)
    return found.group() if found else "\n"


def line_indent(text: str, start: int) -> tuple[str, bool]:
    """(leading whitespace of the line holding `start`, True when `start` is the line's first token)."""
    line_start = max(text.rfind("\n", 0, start), text.rfind("\r", 0, start)) + 1
    before = text[line_start:start]
    stripped = before.lstrip(" \t")
    indent = before[: len(before) - len(stripped)]
    return indent, stripped == ""


def indent_variants(replacement: str, indent: str) -> Iterator[str]:
    """Candidate layouts of a (multi-line) replacement placed at a line indented by `indent`.

    Rules write multi-line replacements as if at column 0 (the way `ast.unparse` prints): the
    first goes first. A replacement already carrying absolute indentation is the fallback;
    the caller keeps the first candidate that parses.
    """
    body = LINE_BREAK.sub("\n", replacement).rstrip("\n")
    if "\n" not in body:
        yield body.strip() if body.strip() else body
        return
    relative = textwrap.dedent(body)
    first, _, rest = relative.partition("\n")
    shifted = [indent + line if line.strip() else "" for line in rest.split("\n")]
    yield "\n".join([first, *shifted])
    if body != relative or indent:
        yield body.lstrip(" \t")


def splice(text: str, start: int, end: int, replacement: str) -> str:
    """`text` with [start, end) replaced, the replacement's newlines converted to the file's style."""
    newline = newline_of(text, start)
    return text[:start] + replacement.replace("\n", newline) + text[end:]
