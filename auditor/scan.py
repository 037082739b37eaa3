"""The static pass: one parse and one walk per file, dispatching nodes to the rules that want them."""
from __future__ import annotations

import ast
import contextlib
import gc
import hashlib
import re
import time
from collections.abc import Iterable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass

from auditor.catalog import load_catalog
from auditor.config import Config
from auditor.directives import parse_directives
from auditor.model import FileError, Finding, Report, Rewrite, Span, Stats
from auditor.nodes import CHILD_FIELDS
from auditor.rule import Context, Hit, Rule, text_mentions
from auditor.cache import ResultCache, default_folder, entry_key
from auditor.sources import SourceRef, SourceText, decode, discover, read_bytes


@dataclass(frozen=True, slots=True)
class FileResult:
    """What scanning one file gave: findings or an error, and its line count."""

    path: str
    findings: tuple[Finding, ...]
    errors: tuple[FileError, ...]
    lines: int


def _dispatch_table(rules: Iterable[Rule]) -> dict[type, list[Rule]]:
    table: dict[type, list[Rule]] = {}
    for rule in rules:
        for node_type in rule.node_types:
            table.setdefault(node_type, []).append(rule)
    return table


def walk(
    tree: ast.AST, wanted: dict[type, list[Rule]], parents: dict[int, ast.AST] | None = None
) -> list[tuple[ast.AST, list[Rule]]]:
    """One pass over the tree: record every node's parent (in `parents`, keyed by id, so the tree
    holds no reference cycles and is freed as soon as it is dropped) and collect the nodes some
    rule wants."""
    todo: list[tuple[ast.AST, list[Rule]]] = []
    links = parents if parents is not None else {}
    stack = [tree]
    pop, push, get, fields = stack.pop, stack.append, wanted.get, CHILD_FIELDS
    while stack:
        node = pop()
        kind = type(node)
        rules = get(kind)
        if rules:
            todo.append((node, rules))
        for name in fields.get(kind, ()):
            value = getattr(node, name, None)
            if type(value) is list:
                for item in value:
                    if item is not None and type(item) is not str:
                        links[id(item)] = node
                        push(item)
            elif value is not None:
                links[id(value)] = node
                push(value)
    return todo


@contextlib.contextmanager
def gc_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector while one file is scanned.

    An AST is millions of small objects; with collection on, the collector re-traverses them
    again and again (about 40% of the scan's time). The scan makes no reference cycles (parents
    live in a dict, not on the nodes), so reference counting frees everything anyway.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def span_of(node: ast.AST) -> Span:
    """1-based line and column, exclusive end column (ast columns are 0-based UTF-8 offsets)."""
    line = getattr(node, "lineno", 1)
    col = getattr(node, "col_offset", 0)
    end_line = getattr(node, "end_lineno", None) or line
    end_col = getattr(node, "end_col_offset", None)
    end_col = col + 1 if end_col is None else end_col
    return Span(line, col + 1, end_line, end_col + 1)


def _char_span(node: ast.AST, lines: Sequence[str]) -> Span:
    """Like span_of but with character columns (ast gives byte offsets)."""
    raw = span_of(node)

    def chars(line_no: int, byte_col: int) -> int:
        if 1 <= line_no <= len(lines):
            text = lines[line_no - 1]
            if not text.isascii():
                return len(text.encode("utf-8")[: byte_col - 1].decode("utf-8", "replace")) + 1
        return byte_col

    return Span(raw.line, chars(raw.line, raw.column), raw.end_line, chars(raw.end_line, raw.end_column))


def _function_name(ctx: Context, node: ast.AST) -> str | None:
    names = [
        a.name for a in ctx.ancestors(node) if isinstance(a, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef))
    ]
    if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
        names.insert(0, node.name)
    return ".".join(reversed(names)) or None


def fingerprint(rule: str, path: str, function: str | None, snippet: str, occurrence: int) -> str:
    """A line-independent identity: survives unrelated edits that shift lines."""
    normal = re.sub(r"\s+", " ", snippet).strip()
    key = "\x1f".join((rule, path, function or "", normal, str(occurrence)))
    return hashlib.sha256(key.encode("utf-8")).hexdigest()[:20]


def _finding(ctx: Context, rule: Rule, hit: Hit, lines: Sequence[str]) -> Finding:
    snippet = ctx.segment(hit.node)
    rewrite = None
    if hit.rewrite is not None:
        note = f"advice, not verified: {hit.advice}" if hit.advice else "not yet measured"
        rewrite = Rewrite(text=hit.rewrite, verified=False, imports=hit.imports, note=note, advice=bool(hit.advice))
    return Finding(
        rule=rule.id,
        severity=hit.severity or rule.severity,
        path=ctx.path,
        span=_char_span(hit.node, lines),
        message=hit.message,
        snippet=snippet,
        function=_function_name(ctx, hit.node),
        rewrite=rewrite,
    )


def _with_fingerprints(findings: list[Finding]) -> list[Finding]:
    seen: dict[tuple[str, str | None, str], int] = {}
    out = []
    for f in sorted(findings, key=Finding.sort_key):
        key = (f.rule, f.function, re.sub(r"\s+", " ", f.snippet))
        seen[key] = seen.get(key, 0) + 1
        out.append(f.with_(fingerprint=fingerprint(f.rule, f.path, f.function, f.snippet, seen[key])))
    return out


def parse_or_error(text: str, path: str) -> ast.Module | FileError:
    """Parse source, turning every parser failure into a plain FileError."""
    try:
        return ast.parse(text, filename=path)
    except SyntaxError as exc:
        where = f" at line {exc.lineno}" if exc.lineno else ""
        return FileError(path, f"syntax error{where}: {exc.msg}")
    except (RecursionError, MemoryError):
        return FileError(path, "too deeply nested for the Python parser")
    except ValueError as exc:
        return FileError(path, f"cannot parse: {exc}")


def scan_text(text: str, path: str, rules: Sequence[Rule]) -> FileResult:
    """Run the rules over one file's text."""
    n_lines = text.count("\n") + (1 if text and not text.endswith("\n") else 0)
    with gc_paused():
        return _scan_tree(text, path, rules, n_lines)


def _scan_tree(text: str, path: str, rules: Sequence[Rule], n_lines: int) -> FileResult:
    tree = parse_or_error(text, path)
    if isinstance(tree, FileError):
        return FileResult(path, (), (tree,), n_lines)
    directives = parse_directives(text)
    lines = text.splitlines()
    findings: list[Finding] = []
    errors: list[FileError] = []
    parents: dict[int, ast.AST] = {}
    active = [r for r in rules if not r.requires or text_mentions(text, r.requires)]
    try:
        todo = walk(tree, _dispatch_table(active), parents)
        ctx = Context(tree, path, text, parents)
    except RecursionError:
        return FileResult(path, (), (FileError(path, "too deeply nested to analyse"),), n_lines)
    too_deep = False
    for node, node_rules in todo:
        for rule in node_rules:
            try:
                for hit in rule.check(node, ctx):
                    finding = _finding(ctx, rule, hit, lines)
                    if not directives.accepted(rule.id, finding.span.line):
                        findings.append(finding)
            except RecursionError:
                if not too_deep:
                    line = getattr(node, "lineno", "?")
                    errors.append(FileError(path, f"expression too deeply nested to analyse (line {line}); rest of file scanned"))
                too_deep = True
            except Exception as exc:  # a crashing rule is a bug, reported as data; the run goes on
                line = getattr(node, "lineno", "?")
                errors.append(FileError(path, f"internal error in rule {rule.id} at line {line}: {type(exc).__name__}: {exc}"))
    return FileResult(path, tuple(_with_fingerprints(findings)), tuple(errors), n_lines)


def scan_source_ref(ref: SourceRef, rule_ids: Sequence[str], cache: ResultCache | None = None) -> FileResult:
    """Read, decode and scan one file (or take it from the cache); every failure becomes a FileError."""
    data = read_bytes(ref)
    if isinstance(data, FileError):
        return FileResult(ref.display, (), (data,), 0)
    key = entry_key(data, ref.display, rule_ids) if cache is not None and ref.location != "-" else None
    cached = cache.get(key) if cache is not None and key is not None else None
    if cached is not None:
        return cached
    source = decode(ref, data)
    if isinstance(source, FileError):
        result = FileResult(ref.display, (), (source,), 0)
    else:
        result = scan_loaded(source, [r for r in load_catalog() if r.id in rule_ids])
    if cache is not None and key is not None:
        cache.put(key, result)
    return result


def scan_loaded(source: SourceText, rules: Sequence[Rule]) -> FileResult:
    if source.ref.display.endswith(".ipynb"):
        from auditor.notebook import scan_notebook

        return scan_notebook(source, rules)
    return scan_text(source.text, source.ref.display, rules)


def _scan_batch(refs: Sequence[SourceRef], rule_ids: Sequence[str], cache: ResultCache | None = None) -> list[FileResult]:
    return [scan_source_ref(ref, rule_ids, cache) for ref in refs]


def scan_refs(
    refs: Sequence[SourceRef], rule_ids: Sequence[str], jobs: int = 1, cache: ResultCache | None = None
) -> list[FileResult]:
    """Scan files, in worker processes when jobs > 1; results in the order of `refs`."""
    if jobs <= 1 or len(refs) < 2 or any(r.location == "-" for r in refs):
        return _scan_batch(refs, rule_ids, cache)
    chunk = max(1, min(32, len(refs) // (jobs * 4) or 1))
    batches = [refs[i : i + chunk] for i in range(0, len(refs), chunk)]
    with ProcessPoolExecutor(max_workers=jobs) as pool:
        parts = pool.map(_scan_batch, batches, [rule_ids] * len(batches), [cache] * len(batches))
        return [result for part in parts for result in part]


def enabled_rule_ids(config: Config) -> list[str]:
    return [r.id for r in load_catalog() if config.enabled(r.id)]


def build_report(results: Iterable[FileResult], extra_errors: Iterable[FileError], started: float) -> Report:
    results = list(results)
    findings = sorted((f for r in results for f in r.findings), key=Finding.sort_key)
    errors = sorted([*extra_errors, *(e for r in results for e in r.errors)], key=lambda e: (e.path, e.message))
    stats = Stats(files=len(results), lines=sum(r.lines for r in results), seconds=round(time.perf_counter() - started, 3))
    return Report(tuple(findings), tuple(errors), stats)


def scan_paths(paths: Sequence[str], config: Config | None = None) -> Report:
    """Scan files and folders (or "-" for stdin) and return the report the CLI renders."""
    from auditor.baseline import apply_baseline

    started = time.perf_counter()
    config = config or Config()
    refs, errors = discover(paths, config.exclude, base=None)
    cache = ResultCache(default_folder()) if config.cache else None
    results = scan_refs(refs, enabled_rule_ids(config), config.jobs, cache)
    report = build_report(results, errors, started)
    if config.baseline:
        report = apply_baseline(report, config.baseline)
    return report


def scan_source(text: str, path: str = "<string>", config: Config | None = None) -> Report:
    """Scan one piece of source text held in memory."""
    started = time.perf_counter()
    config = config or Config()
    rules = [r for r in load_catalog() if config.enabled(r.id)]
    return build_report([scan_text(text, path, rules)], (), started)
