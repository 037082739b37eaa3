"""Baselines: remember today's findings by fingerprint so only new ones are reported later."""
from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

from auditor.model import Finding, Report, Severity, Span

SCHEMA = "auditor-baseline/1"


class BaselineError(Exception):
    """The baseline file is missing, unreadable or not ours (exit 2)."""


def write_baseline(report: Report, path: str) -> None:
    """Write every finding's fingerprint atomically (temp file + replace)."""
    entries = [
        {"fingerprint": f.fingerprint, "rule": f.rule, "path": f.path, "line": f.span.line, "snippet": f.snippet}
        for f in report.findings
    ]
    payload = json.dumps({"schema": SCHEMA, "findings": entries}, indent=2, sort_keys=True) + "\n"
    write_atomically(Path(path), payload)


def write_atomically(path: Path, text: str) -> None:
    """Write `text` to a temp file beside `path`, then rename it over `path`."""
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def read_baseline(path: str) -> dict[str, dict[str, object]]:
    """Fingerprint -> stored entry."""
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as exc:
        raise BaselineError(f"cannot read baseline {path}: {exc.strerror or exc}") from None
    except ValueError as exc:
        raise BaselineError(f"baseline {path} is not valid JSON: {exc}") from None
    if not isinstance(data, dict) or data.get("schema") != SCHEMA or not isinstance(data.get("findings"), list):
        raise BaselineError(f"{path} is not an auditor baseline (schema {SCHEMA})")
    return {str(e["fingerprint"]): e for e in data["findings"] if isinstance(e, dict) and "fingerprint" in e}


def apply_baseline(report: Report, path: str) -> Report:
    """Keep new findings; mark known ones unchanged and list vanished ones as absent."""
    known = read_baseline(path)
    new: list[Finding] = []
    unchanged: list[Finding] = []
    for f in report.findings:
        if f.fingerprint in known:
            unchanged.append(f.with_(baseline_state="unchanged"))
        else:
            new.append(f.with_(baseline_state="new"))
    present = {f.fingerprint for f in report.findings}
    absent = [_absent(entry) for fp, entry in sorted(known.items()) if fp not in present]
    return Report(tuple(new), report.errors, report.stats, absent=tuple(absent), unchanged=tuple(unchanged))


def _absent(entry: dict[str, object]) -> Finding:
    line = int(entry.get("line", 1))  # type: ignore[call-overload]
    return Finding(
        rule=str(entry.get("rule", "")),
        severity=Severity.NOTE,
        path=str(entry.get("path", "")),
        span=Span(line, 1, line, 1),
        message="no longer found",
        snippet=str(entry.get("snippet", "")),
        fingerprint=str(entry.get("fingerprint", "")),
        baseline_state="absent",
    )
