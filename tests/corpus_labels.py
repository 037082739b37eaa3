"""Read the labelled corpus: `# expect: RULE[, RULE]` marks a line that must be flagged,
`# ok: RULE[, RULE]` marks a look-alike line that must stay clean (a labelled negative)."""
from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from auditor import Config, scan_paths

LABEL = re.compile(r"#\s*(expect|ok):\s*([a-z0-9,\s-]+?)\s*$")
CORPUS = Path(__file__).resolve().parent / "corpus"


@dataclass
class Scores:
    expected: Counter = field(default_factory=Counter)  #: labelled positives per rule
    negatives: Counter = field(default_factory=Counter)  #: labelled look-alike negatives per rule
    hits: Counter = field(default_factory=Counter)  #: true positives per rule
    reported: Counter = field(default_factory=Counter)  #: all findings per rule
    misses: list[str] = field(default_factory=list)
    false_alarms: list[str] = field(default_factory=list)

    def recall(self, rule: str | None = None) -> float:
        exp = self.expected[rule] if rule else sum(self.expected.values())
        hit = self.hits[rule] if rule else sum(self.hits.values())
        return hit / exp if exp else 1.0

    def precision(self, rule: str | None = None) -> float:
        rep = self.reported[rule] if rule else sum(self.reported.values())
        hit = self.hits[rule] if rule else sum(self.hits.values())
        return hit / rep if rep else 1.0

    def table(self) -> str:
        rules = sorted(set(self.expected) | set(self.reported))
        rows = [f"{'rule':<30} {'labels':>6} {'neg':>4} {'found':>6} {'recall':>7} {'precision':>9}"]
        for r in rules:
            rows.append(f"{r:<30} {self.expected[r]:>6} {self.negatives[r]:>4} {self.reported[r]:>6} "
                        f"{self.recall(r):>7.2f} {self.precision(r):>9.2f}")
        rows.append(f"{'ALL':<30} {sum(self.expected.values()):>6} {sum(self.negatives.values()):>4} "
                    f"{sum(self.reported.values()):>6} {self.recall():>7.2f} {self.precision():>9.2f}")
        return "\n".join(rows)


def labels(path: Path) -> dict[int, tuple[str, set[str]]]:
    out = {}
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        m = LABEL.search(line)
        if m:
            out[number] = (m.group(1), {r.strip() for r in m.group(2).split(",") if r.strip()})
    return out


def score(folder: Path = CORPUS) -> Scores:
    files = sorted(folder.rglob("*.py"))
    if not files:
        raise AssertionError(f"no corpus files under {folder}")
    report = scan_paths([str(f) for f in files], Config())
    if report.errors:
        raise AssertionError(f"corpus files failed to scan: {report.errors}")
    by_path = {f.resolve(): labels(f) for f in files}
    s = Scores()
    found: set[tuple[Path, int, str]] = set()
    for finding in report.findings:
        path = Path(finding.path).resolve()
        s.reported[finding.rule] += 1
        kind, rules = by_path.get(path, {}).get(finding.span.line, ("", set()))
        if kind == "expect" and finding.rule in rules and (path, finding.span.line, finding.rule) not in found:
            s.hits[finding.rule] += 1
            found.add((path, finding.span.line, finding.rule))
        else:
            s.false_alarms.append(f"{finding.path}:{finding.span.line}: {finding.rule}")
    for path, marks in by_path.items():
        for line, (kind, rules) in marks.items():
            for rule in rules:
                if kind == "ok":
                    s.negatives[rule] += 1
                    continue
                s.expected[rule] += 1
                if (path, line, rule) not in found:
                    s.misses.append(f"{path.name}:{line}: {rule}")
    return s
