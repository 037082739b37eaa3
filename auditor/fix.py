"""`auditor fix`: print the verified rewrites as a unified diff; with --write apply them in place.

Only rewrites the dynamic pass verified, for findings it measured unstable, are applied;
the others are listed with their reason. The diff goes to standard output (or --output),
so it can be piped to `git apply`; the listing and the summary go to standard error.
Where two rewrites overlap the outer one is applied; a second run offers the inner one.

Exit status: 0 when no finding at or above the fail level (--fail-on) is left in the code,
1 when some are (without --write that includes those a shown rewrite would fix, since the
code still holds them; with --write only those not applied), 2 for usage, configuration or
internal errors. A file that cannot be read, or whose rewritten text would not parse, is
reported as an error and left untouched; the run goes on with the other files.
"""
from __future__ import annotations

import difflib
import io
import os
import sys
import tempfile
import tokenize
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

from auditor.config import Config
from auditor.model import Finding, Report, Verdict
from auditor.rewrite import Edit, Outcome, apply_edits, parses
from auditor.sources import STDIN, discover
from auditor.splice import split_lines

Measure = Callable[[Sequence[str], Config, "str | None"], Report]


@dataclass(frozen=True, slots=True)
class FilePlan:
    """The rewrites planned for one file."""

    path: str  #: display path, as in the report
    location: str  #: where the file is read and written
    original: bytes  #: the file as read, to refuse writing over a file changed meanwhile
    encoding: str  #: the file's encoding ("utf-8-sig" keeps a BOM)
    before: str  #: decoded text
    outcome: Outcome
    unverified: tuple[Finding, ...]  #: findings whose rewrite was not verified (listed, not applied)
    fixed: tuple[Finding, ...]  #: findings whose rewrite is in `outcome.text`, in `outcome.applied` order


def default_measure() -> Measure:
    """The dynamic pass; without it nothing can be verified, so the static pass stands in."""
    try:
        from auditor.measure import measure_paths
    except ImportError:
        from auditor.scan import scan_paths

        return lambda paths, config, inputs: scan_paths(paths, config)
    return measure_paths


def edit_for(finding: Finding) -> Edit:
    """The edit a finding's rewrite asks for."""
    assert finding.rewrite is not None
    label = f"{finding.rule} at {finding.span.line}:{finding.span.column}"
    return Edit(finding.span, finding.rewrite.text, finding.rewrite.imports, label, finding.snippet or None)


def fixable(finding: Finding) -> bool:
    """A verified rewrite of a finding measured unstable, in a plain Python file.

    Benign and ill-conditioned findings are left alone even with a verified rewrite: there is
    nothing for the rewrite to win, and a rule that flags its own output cannot make a second
    `fix` change the code again. Notebook cells are not rewritten.
    """
    m = finding.measurement
    return bool(finding.rewrite and finding.rewrite.verified and finding.cell is None
                and not finding.path.endswith(".ipynb") and (m is None or m.verdict is Verdict.UNSTABLE))


def _not_applied_reason(finding: Finding) -> str:
    assert finding.rewrite is not None
    m = finding.measurement
    if finding.rewrite.verified and m is not None and m.verdict is not Verdict.UNSTABLE:
        return f"measured {m.verdict}: nothing for the rewrite to win"
    if finding.cell is not None or finding.path.endswith(".ipynb"):
        return "notebook cells are not rewritten"
    return finding.rewrite.note or "the dynamic pass did not verify it"


def read_python(location: str) -> tuple[bytes, str, str]:
    """(raw bytes, encoding, text) of a source file; the text keeps its line endings, BOM dropped."""
    data = Path(location).read_bytes()
    encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
    return data, encoding, data.decode(encoding)


def plan_file(path: str, location: str, findings: Sequence[Finding]) -> FilePlan | str:
    """Apply one file's verified rewrites in memory; a string says why the file cannot be planned."""
    try:
        data, encoding, text = read_python(location)
    except (OSError, SyntaxError, UnicodeDecodeError, LookupError) as exc:
        return f"cannot read: {exc}"
    # Of two rewrites for the same span, the one measured most accurate is tried first and kept.
    ranked = sorted((f for f in findings if fixable(f)), key=_accuracy_after)
    pairs = [(f, edit_for(f)) for f in ranked]
    outcome = apply_edits(text, [e for _, e in pairs])
    by_edit = {id(e): f for f, e in pairs}
    fixed = tuple(by_edit[id(e)] for e in outcome.applied) if outcome.changed else ()
    unverified = tuple(f for f in findings if f.rewrite and not fixable(f))
    return FilePlan(path, location, data, encoding, text, outcome, unverified, fixed)


def _accuracy_after(finding: Finding) -> float:
    after = finding.rewrite.digits_lost_max_after if finding.rewrite else None
    return float("inf") if after is None else after


def unified_diff(path: str, before: str, after: str) -> str:
    """A `git apply`-compatible unified diff; marks a last line without a newline."""
    old, new = (path, path) if path.startswith("/") else (f"a/{path}", f"b/{path}")
    lines = difflib.unified_diff(split_lines(before), split_lines(after), old, new)
    out = []
    for line in lines:
        if not line.endswith(("\n", "\r")):
            line += "\n\\ No newline at end of file\n"
        out.append(line)
    return "".join(out)


def write_plan(plan: FilePlan) -> str | None:
    """Write the rewritten file atomically (temp file beside it + os.replace); None or why not."""
    text = plan.outcome.text
    complaint = parses(text)
    if complaint is not None:
        return f"not written: the rewritten file would not parse ({complaint})"
    target = os.path.realpath(plan.location)  # a symbolic link keeps pointing at the fixed file
    try:
        data = text.encode(plan.encoding)
        if Path(target).read_bytes() != plan.original:
            return "not written: the file changed on disk while it was being fixed"
        _replace_atomically(target, data)
    except (OSError, UnicodeEncodeError) as exc:
        return f"not written: {exc}"
    return None


def _replace_atomically(target: str, data: bytes) -> None:
    folder = os.path.dirname(target) or "."
    mode = os.stat(target).st_mode & 0o7777
    fd, tmp = tempfile.mkstemp(prefix=f".{os.path.basename(target)}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def plan_report(report: Report, locations: dict[str, str]) -> tuple[list[FilePlan], list[str]]:
    """Plans for every file with a rewrite, and per-file errors as lines of text."""
    by_path: dict[str, list[Finding]] = {}
    for f in report.findings:
        if f.rewrite is not None:
            by_path.setdefault(f.path, []).append(f)
    plans: list[FilePlan] = []
    errors: list[str] = []
    for path, findings in sorted(by_path.items()):
        plan = plan_file(path, locations.get(path, path), findings)
        if isinstance(plan, str):
            errors.append(f"{path}: error: {plan}")
        else:
            plans.append(plan)
    return plans, errors


def _listing(plan: FilePlan) -> list[str]:
    lines = []
    for f in plan.unverified:
        assert f.rewrite is not None
        why = _not_applied_reason(f)
        lines.append(f"{plan.path}:{f.span.line}:{f.span.column}: {f.rule}: not applied ({why}); suggested: "
                     f"{_one_line(f.rewrite.text)}")
    for s in plan.outcome.skipped:
        lines.append(f"{plan.path}:{s.edit.span.line}:{s.edit.span.column}: {s.edit.label.partition(' ')[0]}: "
                     f"verified rewrite not applied: {s.reason}")
    if plan.outcome.error:
        lines.append(f"{plan.path}: error: file left untouched: {plan.outcome.error}")
    return lines


def _one_line(text: str) -> str:
    first, _, rest = text.strip().partition("\n")
    return first + (" ..." if rest else "")


def _remaining(report: Report, config: Config, applied: list[Finding]) -> int:
    """Findings at or above the fail level still in the code after this run."""
    if config.fail_on is None:
        return 0
    gone = {id(f) for f in applied}
    return sum(1 for f in report.findings if f.severity.rank >= config.fail_on.rank and id(f) not in gone)


def run_fix(paths: Sequence[str], config: Config, write: bool, inputs: str | None,
            measure: Measure | None = None, out: TextIO | None = None, err: TextIO | None = None) -> int:
    """The `fix` command: measure, plan, print the diff, optionally write; returns the exit status."""
    out, err = out or sys.stdout, err or sys.stderr
    if STDIN in paths:
        err.write("auditor: error: fix rewrites files; save standard input to a file first\n")
        return 2
    if config.format != "text":
        err.write(f"auditor: note: fix prints a unified diff; --format {config.format} applies to scan and measure\n")
    report = (measure or default_measure())(paths, config, inputs)  # honours --changed-since itself
    refs, _ = discover(paths, config.exclude)
    plans, problems = plan_report(report, {r.display: r.location for r in refs})
    problems += [f"{e.path}: error: {e.message}" for e in report.errors]
    diff, applied, notes = _apply_plans(plans, write)
    _emit(diff, config.output, out)
    for line in [*notes, *problems]:
        err.write(line + "\n")
    n_unverified = sum(len(p.unverified) for p in plans)
    verb = "applied" if write else "shown (use --write to apply)"
    err.write(f"auditor fix: {len(applied)} verified rewrite(s) {verb}, {n_unverified} unverified listed, "
              f"{len(report.findings)} finding(s) in {report.stats.files} file(s)\n")
    return 1 if _remaining(report, config, applied if write else []) else 0


def _apply_plans(plans: list[FilePlan], write: bool) -> tuple[str, list[Finding], list[str]]:
    diff: list[str] = []
    applied: list[Finding] = []
    notes: list[str] = []
    for plan in plans:
        notes += _listing(plan)
        if not plan.outcome.changed:
            continue
        problem = write_plan(plan) if write else None
        if problem is not None:
            notes.append(f"{plan.path}: error: {problem}")
            continue
        diff.append(unified_diff(plan.path, plan.before, plan.outcome.text))
        applied += plan.fixed
    return "".join(diff), applied, notes


def _emit(text: str, output: str | None, out: TextIO) -> None:
    if output:
        from auditor.baseline import write_atomically

        write_atomically(Path(output), text)
    else:
        out.write(text)
        out.flush()
