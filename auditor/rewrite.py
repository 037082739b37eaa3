"""Apply rewrites to a file's text: splice each span, add needed imports once, keep every other byte.

The only libcst user. Spans are spliced by character offset (exactly byte-preserving outside
them); libcst parses the file only to place new import statements among the existing ones.
Every result is re-parsed with `ast`; an edit that would break the file is skipped, and a file
whose combined result does not parse is refused as a whole.
"""
from __future__ import annotations

import ast
import bisect
from collections.abc import Sequence
from dataclasses import dataclass

import libcst as cst

from auditor.import_needs import import_conflict, module_bindings, needed_imports
from auditor.model import Span
from auditor.splice import LINE_BREAK, indent_variants, line_indent, line_starts, newline_of, offsets, splice


#: a module's statement list as libcst types it
Body = list[cst.SimpleStatementLine | cst.BaseCompoundStatement]


@dataclass(frozen=True, slots=True)
class Edit:
    """One replacement: the text for a span, and the imports that text needs."""

    span: Span  #: 1-based, end column exclusive, in characters
    text: str  #: replacement source; multi-line statements written as if at column 0
    imports: tuple[str, ...] = ()  #: e.g. ("import math",); each added once if not already bound
    label: str = ""  #: how reports name this edit, e.g. "exp-minus-one at 12:5"
    original: str | None = None  #: the text the span must still hold (stale spans are skipped)


@dataclass(frozen=True, slots=True)
class Skipped:
    edit: Edit
    reason: str  #: why it was not applied, in words


@dataclass(frozen=True, slots=True)
class Outcome:
    """What applying a set of edits to one text gave."""

    text: str  #: the new text; the original unchanged when nothing applied or the file was refused
    applied: tuple[Edit, ...]
    skipped: tuple[Skipped, ...]
    imports_added: tuple[str, ...] = ()
    error: str | None = None  #: set when the file as a whole was refused
    #: where each applied replacement sits in `text` (same order as `applied`)
    new_spans: tuple[Span, ...] = ()

    @property
    def changed(self) -> bool:
        return bool(self.applied) and self.error is None


@dataclass(frozen=True, slots=True)
class _Placed:
    edit: Edit
    start: int
    end: int
    text: str = ""  #: the replacement as laid out at its place


def parses(text: str) -> str | None:
    """None when `text` is valid Python, else the parser's complaint."""
    try:
        ast.parse(text)
    except SyntaxError as exc:
        return f"syntax error at line {exc.lineno}: {exc.msg}"
    except (ValueError, RecursionError, MemoryError) as exc:
        return f"cannot parse: {type(exc).__name__}"
    return None


def apply_edits(source: str, edits: Sequence[Edit]) -> Outcome:
    """Splice the edits that fit, parse and do not overlap; add their imports; validate the result."""
    try:
        tree = ast.parse(source)
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return Outcome(source, (), tuple(Skipped(e, "the file does not parse") for e in edits), error="the file does not parse")
    bound = module_bindings(tree)
    skipped: list[Skipped] = []
    located = _locate(source, edits, bound, skipped)
    placed = [p for p in (_lay_out(source, p, skipped) for p in _without_overlaps(located, skipped)) if p]
    placed.sort(key=lambda p: p.start)
    text = source
    for p in reversed(placed):
        text = splice(text, p.start, p.end, p.text)
    spliced = text
    applied = tuple(p.edit for p in placed)
    needed = needed_imports((e.imports for e in applied), bound)
    if needed:
        try:
            text = add_imports(text, needed)
        except (cst.ParserSyntaxError, ValueError, RecursionError) as exc:
            return _refuse(source, edits, skipped, f"cannot place the imports: {type(exc).__name__}")
    complaint = parses(text)
    if complaint is not None:
        return _refuse(source, edits, skipped, f"the rewritten file would not parse ({complaint})")
    shift = len(line_starts(text)) - len(line_starts(spliced))
    return Outcome(text, applied, tuple(skipped), tuple(needed), None, _new_spans(source, spliced, placed, shift))


def _new_spans(source: str, spliced: str, placed: list[_Placed], shift: int) -> tuple[Span, ...]:
    """Spans of the replacements in the result; imports only ever add lines above every span."""
    out = []
    delta = 0
    for p in placed:
        start = p.start + delta
        end = start + len(p.text.replace("\n", newline_of(source, p.start)))
        delta = end - p.end
        (line, col), (end_line, end_col) = _position(spliced, start), _position(spliced, end)
        out.append(Span(line + shift, col, end_line + shift, end_col))
    return tuple(out)


def _position(text: str, offset: int) -> tuple[int, int]:
    starts = line_starts(text)
    line = bisect.bisect_right(starts, offset)
    return line, offset - starts[line - 1] + 1


def rewrite_one(source: str, span: Span, text: str, imports: Sequence[str] = ()) -> tuple[str, Span] | str:
    """`source` with one rewrite applied exactly as `fix` applies it, and the span the replacement
    now occupies (for measuring the rewritten unit); or why it cannot be applied."""
    out = apply_edits(source, [Edit(span, text, tuple(imports))])
    if not out.changed:
        return out.error or (out.skipped[0].reason if out.skipped else "nothing to apply")
    return out.text, out.new_spans[0]


def _refuse(source: str, edits: Sequence[Edit], skipped: list[Skipped], why: str) -> Outcome:
    done = {id(s.edit) for s in skipped}
    rest = [Skipped(e, why) for e in edits if id(e) not in done]
    return Outcome(source, (), (*skipped, *rest), error=why)


def _locate(source: str, edits: Sequence[Edit], bound: dict[str, str], skipped: list[Skipped]) -> list[_Placed]:
    """Offsets of each edit; drop spans outside the text, stale spans and conflicting imports."""
    starts = line_starts(source)
    out: list[_Placed] = []
    for edit in edits:
        where = offsets(source, edit.span, starts)
        why = import_conflict(edit.imports, bound)
        if where is None:
            why = "its span lies outside the file"
        elif edit.original is not None and source[where[0] : where[1]] != edit.original:
            why = "the source changed since it was measured"
        elif _already_applied(source, *where, edit):
            why = "already rewritten: the code around it is this rewrite"
        if why:
            skipped.append(Skipped(edit, why))
        else:
            out.append(_Placed(edit, *where))  # type: ignore[misc]
    return out


def _squeeze(text: str) -> str:
    return "".join(text.split())


def _already_applied(source: str, start: int, end: int, edit: Edit) -> bool:
    """True when the rewrite keeps the flagged text inside it (a guarded form such as
    `A if cond else ORIGINAL`) and the code around the span already is that rewrite, so
    applying it again would only nest it."""
    if not edit.original:
        return False
    text, original = _squeeze(edit.text), _squeeze(edit.original)
    at = text.find(original)
    while at != -1:
        before, after = text[:at], text[at + len(original) :]
        if (before or after) and _squeeze(source[:start]).endswith(before) and _squeeze(source[end:]).startswith(after):
            return True
        at = text.find(original, at + 1)
    return False


def _without_overlaps(located: list[_Placed], skipped: list[Skipped]) -> list[_Placed]:
    """Keep the outer of nested edits and the first of crossing ones."""
    kept: list[_Placed] = []
    for p in sorted(located, key=lambda p: (p.start, -p.end)):
        last = kept[-1] if kept else None
        if last is not None and (p.start < last.end or (p.start, p.end) == (last.start, last.end)):
            same = (p.start, p.end, p.edit.text) == (last.start, last.end, last.edit.text)
            other = last.edit.label or "another rewrite"
            why = f"duplicate of {other}" if same else f"overlaps {other}, which is applied; run fix again for this one"
            skipped.append(Skipped(p.edit, why))
            continue
        kept.append(p)
    return kept


def _lay_out(source: str, p: _Placed, skipped: list[Skipped]) -> _Placed | None:
    """The layout of the replacement (re-indented to its place) with which the file parses.

    When both readings of a multi-line replacement parse (column 0 or absolute indentation),
    the one whose continuation lines sit as deep as the replaced code's wins.
    """
    indent, _ = line_indent(source, p.start)
    complaint, fitting = "empty replacement", []
    for candidate in indent_variants(p.edit.text, indent):
        complaint = parses(splice(source, p.start, p.end, candidate)) or ""
        if not complaint:
            fitting.append(candidate)
    if not fitting:
        skipped.append(Skipped(p.edit, f"the rewrite does not parse in place ({complaint})"))
        return None
    depth = _continuation_depth(source[p.start : p.end])
    best = next((c for c in fitting if depth is not None and _continuation_depth(c) == depth), fitting[0])
    return _Placed(p.edit, p.start, p.end, best)


def _continuation_depth(text: str) -> int | None:
    """Least indentation of the non-blank lines after the first (None for one line)."""
    rest = [ln for ln in LINE_BREAK.split(text)[1:] if ln.strip()]
    return min((len(ln) - len(ln.lstrip(" \t")) for ln in rest), default=None)


def add_imports(text: str, statements: Sequence[str]) -> str:
    """Insert each import statement among the module's leading imports, in their sort order."""
    module = cst.parse_module(text)
    body = list(module.body)
    for statement in statements:
        new = cst.parse_statement(statement)
        assert isinstance(new, cst.SimpleStatementLine)
        body = _merge_from_import(body, new) or _insert_import(body, new)
    return module.with_changes(body=body).code


def _import_line(stmt: cst.BaseStatement) -> cst.Import | cst.ImportFrom | None:
    if isinstance(stmt, cst.SimpleStatementLine) and len(stmt.body) == 1:
        node = stmt.body[0]
        if isinstance(node, (cst.Import, cst.ImportFrom)):
            return node
    return None


def _dotted(node: cst.BaseExpression | None) -> str:
    if isinstance(node, cst.Name):
        return node.value
    if isinstance(node, cst.Attribute):
        return f"{_dotted(node.value)}.{node.attr.value}"
    return ""


def _sort_key(node: cst.Import | cst.ImportFrom) -> str:
    if isinstance(node, cst.Import):
        return _dotted(node.names[0].name).lower()
    return ("." * len(node.relative) + _dotted(node.module)).lower()


def _is_future(node: cst.Import | cst.ImportFrom | None) -> bool:
    return isinstance(node, cst.ImportFrom) and _dotted(node.module) == "__future__"


def _is_docstring(stmt: cst.BaseStatement) -> bool:
    return (isinstance(stmt, cst.SimpleStatementLine) and len(stmt.body) == 1 and isinstance(stmt.body[0], cst.Expr)
            and isinstance(stmt.body[0].value, (cst.SimpleString, cst.ConcatenatedString)))


def _leading_block(body: Body) -> tuple[int, list[int]]:
    """(first index after the docstring and __future__ imports, indexes of the imports that follow)."""
    lo = 1 if body and _is_docstring(body[0]) else 0
    while lo < len(body) and _is_future(_import_line(body[lo])):
        lo += 1
    block: list[int] = []
    while lo + len(block) < len(body) and _import_line(body[lo + len(block)]) is not None:
        block.append(lo + len(block))
    return lo, block


def _insert_import(body: Body, new: cst.SimpleStatementLine) -> Body:
    lo, block = _leading_block(body)
    node = _import_line(new)
    assert node is not None
    key = _sort_key(node)
    before = [i for i in block if _sort_key(_import_line(body[i]) or node) <= key]
    if before:
        return [*body[: before[-1] + 1], new, *body[before[-1] + 1 :]]
    if lo >= len(body):
        return [*body, new]
    # New first line of the block (or of the code): blank lines above stay above, comments stay with their code.
    head = body[lo]
    lines = list(head.leading_lines)
    blanks = next((i for i, ln in enumerate(lines) if ln.comment is not None), len(lines))
    gap = 1 if block else (2 if isinstance(head, (cst.FunctionDef, cst.ClassDef)) else 1)
    head = head.with_changes(leading_lines=[*([] if block else [cst.EmptyLine()] * gap), *lines[blanks:]])
    return [*body[:lo], new.with_changes(leading_lines=lines[:blanks]), head, *body[lo + 1 :]]


def _merge_from_import(body: Body, new: cst.SimpleStatementLine) -> Body | None:
    """Add `name` to an existing one-line `from M import a, b` instead of a second `from M` line."""
    node = _import_line(new)
    if not isinstance(node, cst.ImportFrom) or isinstance(node.names, cst.ImportStar):
        return None
    for i, stmt in enumerate(body):
        old = _import_line(stmt)
        if (isinstance(old, cst.ImportFrom) and not isinstance(old.names, cst.ImportStar) and old.lpar is None
                and _sort_key(old) == _sort_key(node) and not _is_future(old)):
            names = list(old.names)
            names[-1] = names[-1].with_changes(comma=cst.Comma(whitespace_after=cst.SimpleWhitespace(" ")))
            names.extend(a.with_changes(comma=cst.MaybeSentinel.DEFAULT) for a in node.names)
            merged = stmt.with_changes(body=[old.with_changes(names=names)])
            return [*body[:i], merged, *body[i + 1 :]]
    return None
