"""A per-file result cache keyed by file content, tool code and enabled rules; safe across processes.

Where: `$XDG_CACHE_HOME/auditor` (else `~/.cache/auditor`). A user-level folder rather than one
inside the project: entries are keyed by content, so clones and branches share them safely, and
a scan never writes into the tree it audits. CI keeps it between runs by caching that folder
(or by pointing XDG_CACHE_HOME at a folder it caches).

Safety: every entry is written to a temp file in the same folder and renamed into place, so
parallel `--jobs` workers never see half an entry; an entry that fails to parse or does not
match is ignored and rebuilt.
"""
from __future__ import annotations

import functools
import hashlib
import json
import os
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from auditor.model import FileError, Finding, Rewrite, Severity, Span
from auditor.version import __version__

if TYPE_CHECKING:
    from auditor.scan import FileResult

FORMAT = "auditor-cache/1"


def default_folder() -> Path:
    """`$XDG_CACHE_HOME/auditor`, else `~/.cache/auditor` (XDG Base Directory spec, common practice)."""
    base = os.environ.get("XDG_CACHE_HOME")
    root = Path(base) if base and Path(base).is_absolute() else Path.home() / ".cache"
    return root / "auditor"


@functools.cache
def code_fingerprint() -> str:
    """A digest of the engine and rule sources, so editing either invalidates every entry."""
    import auditor
    from auditor.catalog import _rules_package

    digest = hashlib.sha256(__version__.encode())
    folders = [Path(auditor.__file__).parent, *(Path(p) for p in _rules_package().__path__)]
    for folder in folders:
        for path in sorted(folder.rglob("*.py")):
            digest.update(path.relative_to(folder).as_posix().encode())
            digest.update(path.read_bytes())
    return digest.hexdigest()


def entry_key(data: bytes, display: str, rule_ids: Sequence[str]) -> str:
    """sha256 of content, report path, tool code and the sorted enabled rule ids."""
    digest = hashlib.sha256()
    for part in (FORMAT, code_fingerprint(), display, "\x1f".join(sorted(rule_ids))):
        digest.update(part.encode("utf-8") + b"\0")
    digest.update(data)
    return digest.hexdigest()


@dataclass(frozen=True, slots=True)
class ResultCache:
    """A folder of JSON entries, one per (content, path, rules, code) key; picklable for workers."""

    folder: Path

    def _path(self, key: str) -> Path:
        return self.folder / key[:2] / f"{key[2:]}.json"

    def get(self, key: str) -> FileResult | None:
        """The stored result, or None when absent, unreadable or corrupt."""
        try:
            data = json.loads(self._path(key).read_text(encoding="utf-8"))
            if data.get("format") != FORMAT or data.get("key") != key:
                return None
            return result_from_dict(data["result"])
        except (OSError, ValueError, KeyError, TypeError, AttributeError):
            return None

    def put(self, key: str, result: FileResult) -> None:
        """Store atomically (temp file + rename); a cache that cannot be written is skipped."""
        if any(f.measurement is not None for f in result.findings):
            return  # only static results are cached; measurements depend on samples and seed
        target = self._path(key)
        text = json.dumps({"format": FORMAT, "key": key, "result": result_to_dict(result)}, ensure_ascii=False)
        try:
            target.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".json", dir=target.parent)
            with os.fdopen(fd, "w", encoding="utf-8") as handle:
                handle.write(text)
            os.replace(tmp, target)
        except OSError:
            return


def _finding_dict(f: Finding) -> dict[str, Any]:
    r = f.rewrite
    return {
        "rule": f.rule, "severity": f.severity.value, "path": f.path,
        "span": [f.span.line, f.span.column, f.span.end_line, f.span.end_column],
        "message": f.message, "snippet": f.snippet, "function": f.function, "fingerprint": f.fingerprint,
        "cell": f.cell,
        "rewrite": None if r is None else {"text": r.text, "verified": r.verified, "note": r.note, "imports": list(r.imports)},
    }


def _finding(d: dict[str, Any]) -> Finding:
    r = d["rewrite"]
    rewrite = None if r is None else Rewrite(r["text"], bool(r["verified"]), None, str(r["note"]), tuple(r["imports"]))
    return Finding(
        rule=str(d["rule"]), severity=Severity(d["severity"]), path=str(d["path"]), span=Span(*map(int, d["span"])),
        message=str(d["message"]), snippet=str(d["snippet"]), function=d["function"], rewrite=rewrite,
        fingerprint=str(d["fingerprint"]), cell=d["cell"],
    )


def result_to_dict(result: FileResult) -> dict[str, Any]:
    return {
        "path": result.path,
        "findings": [_finding_dict(f) for f in result.findings],
        "errors": [[e.path, e.message] for e in result.errors],
        "lines": result.lines,
    }


def result_from_dict(d: dict[str, Any]) -> FileResult:
    from auditor.scan import FileResult

    return FileResult(
        path=str(d["path"]),
        findings=tuple(_finding(f) for f in d["findings"]),
        errors=tuple(FileError(str(p), str(m)) for p, m in d["errors"]),
        lines=int(d["lines"]),
    )
