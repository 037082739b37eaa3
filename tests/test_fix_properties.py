"""Properties of `fix` over the project's labelled corpus (tests/corpus), copied to a temp folder:
every fixed file parses, only the rewritten spans (and added import lines) change, a second fix
is a no-op, and re-measuring shows each fixed unstable finding at least 2 digits better."""
from __future__ import annotations

import ast
import difflib
import io
import re
import shutil
from dataclasses import dataclass, replace
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_fix import verify_all

from auditor import Config, scan_source
from auditor.fix import edit_for, fixable, run_fix
from auditor.model import Finding
from auditor.rewrite import Edit, Outcome, apply_edits
from auditor.splice import offsets, split_lines

CORPUS = Path(__file__).resolve().parent / "corpus"
FILES = sorted(p for p in CORPUS.rglob("*.py") if p.name != "__init__.py")


def _static_findings() -> dict[Path, tuple[str, list[Finding]]]:
    """Per corpus file, its text and the findings with a rewrite (scanned from that very text)."""
    out: dict[Path, tuple[str, list[Finding]]] = {}
    for path in FILES:
        text = path.read_text(encoding="utf-8")
        findings = [f.with_(rewrite=replace(f.rewrite, verified=True)) for f in scan_source(text, str(path)).findings
                    if f.rewrite is not None]
        if findings:
            out[path] = (text, [f for f in findings if fixable(f)])
    return out


STATIC = _static_findings()
CASES = sorted(STATIC.items())


def squeeze(text: str) -> str:
    return re.sub(r"\s+", "", text)


def assert_only_spans_changed(source: str, out: Outcome) -> None:
    """`out.text` is `source` with each applied span replaced (up to layout) and nothing else changed."""
    olds = [offsets(source, e.span) for e in out.applied]
    news = [offsets(out.text, s) for s in out.new_spans]
    assert None not in olds and None not in news and len(olds) == len(news)
    old_cut, new_cut = 0, 0
    for e, (o_start, o_end), (n_start, n_end) in zip(out.applied, olds, news):  # type: ignore[misc]
        assert out.text[new_cut:n_start] == source[old_cut:o_start], f"text before {e.label} changed"
        assert squeeze(out.text[n_start:n_end]) == squeeze(e.text), f"{e.label} not placed as written"
        old_cut, new_cut = o_end, n_end
    assert out.text[new_cut:] == source[old_cut:], "text after the last rewrite changed"


def assert_only_imports_added(without: str, with_imports: str) -> None:
    """The import step only inserts import statements (and blank lines), or extends a from-import."""
    old, new = split_lines(without), split_lines(with_imports)
    for tag, i1, i2, j1, j2 in difflib.SequenceMatcher(None, old, new, autojunk=False).get_opcodes():
        if tag == "equal":
            continue
        assert tag in ("insert", "replace"), (tag, old[i1:i2])
        for line in [*old[i1:i2], *new[j1:j2]]:
            stmt = line.strip()
            assert not stmt or isinstance(ast.parse(stmt).body[0], (ast.Import, ast.ImportFrom)), line


@pytest.mark.skipif(not CASES, reason="no corpus file has a rewrite yet")
@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_any_subset_of_rewrites_parses_and_changes_only_its_spans(data):
    path, (source, findings) = data.draw(st.sampled_from(CASES))
    chosen = data.draw(st.lists(st.sampled_from(findings), unique_by=id, min_size=1))
    edits = [edit_for(f) for f in chosen]
    out = apply_edits(source, edits)
    assert out.error is None, out.error
    ast.parse(out.text)
    bare = apply_edits(source, [Edit(e.span, e.text, (), e.label, e.original) for e in edits])
    assert [e.label for e in bare.applied] == [e.label for e in out.applied]
    assert_only_spans_changed(source, bare)
    assert_only_imports_added(bare.text, out.text)
    for skipped in out.skipped:
        assert skipped.reason.startswith(("overlaps", "duplicate")), skipped.reason


def _copy_corpus(tmp_path: Path) -> Path:
    target = tmp_path / "corpus"
    shutil.copytree(CORPUS, target, ignore=shutil.ignore_patterns("__pycache__"))
    return target


def _fix(folder: Path, write: bool, measure=None, config: Config | None = None) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    status = run_fix([str(folder)], config or Config(), write, None, measure=measure, out=out, err=err)
    return status, out.getvalue(), err.getvalue()


@pytest.mark.skipif(not CASES, reason="no corpus file has a rewrite yet")
def test_every_file_parses_after_fixing_with_all_rewrites_taken(tmp_path):
    # With every static rewrite taken as verified, all of them are applied at once.
    folder = _copy_corpus(tmp_path)
    _, diff, err = _fix(folder, True, verify_all)
    assert diff, err
    for path in folder.rglob("*.py"):
        ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    assert "would not parse" not in err and "does not parse" not in err, err


# -- with the dynamic pass: the fixes measurably help ------------------------------------------

SAMPLES = Path(__file__).resolve().parent.parent / "samples"
#: fewer samples than the default 256 keep this to a minute or two; the seed is fixed (default 0)
MEASURED = Config(samples=64)


@dataclass
class MeasuredFix:
    folder: Path
    gains: list[tuple[str, float, float]]  #: (finding, digits lost before, after) per fixed unstable finding
    second_diff: str
    second_err: str
    second_rules: set[str]  #: rules whose verified rewrites a second fix would still apply


@pytest.fixture(scope="module")
def measured_fix(tmp_path_factory) -> MeasuredFix:
    """The corpus and the demo package, measured, fixed in place, re-measured, and fixed again."""
    pytest.importorskip("auditor.measure")
    folder = _copy_corpus(tmp_path_factory.mktemp("measured"))
    if SAMPLES.is_dir():
        shutil.copytree(SAMPLES, folder / "samples", ignore=shutil.ignore_patterns("__pycache__"))
    gains = _remeasure_gains(folder)
    from auditor.measure import measure_paths

    seen = []

    def recording(paths, config, inputs):
        seen.append(measure_paths(paths, config, inputs))
        return seen[-1]

    _, second, err = _fix(folder, False, recording, config=MEASURED)
    return MeasuredFix(folder, gains, second, err, {f.rule for f in seen[0].findings if fixable(f)})


def _remeasure_gains(folder: Path) -> list[tuple[str, float, float]]:
    """Fix `folder` in place from one measured report; re-measure every applied rewrite in the
    fixed file on the original's samples."""
    from auditor.fix import plan_report, write_plan
    from auditor.measure import measure_finding, measure_paths
    from auditor.numerics.unit import char_span, locate

    report = measure_paths([str(folder)], MEASURED)
    plans, problems = plan_report(report, {})
    assert not problems, problems
    gains = []
    for plan in plans:
        if not plan.outcome.changed:
            continue
        assert write_plan(plan) is None
        fixed_text = Path(plan.location).read_text(encoding="utf-8")
        lines = fixed_text.splitlines()
        tree = ast.parse(fixed_text)
        for finding, new_span in zip(plan.fixed, plan.outcome.new_spans):
            if finding.measurement is None or finding.measurement.verdict.value != "unstable":
                continue
            before = measure_finding(finding.with_(rewrite=None), plan.before, MEASURED)
            node = locate(tree, new_span, lines, inside=True)
            label = f"{Path(finding.path).relative_to(folder)}:{finding.span.line} {finding.rule}"
            assert node is not None, f"{label}: the rewrite is not found in the fixed file"
            moved = finding.with_(span=char_span(node, lines), rewrite=None)
            after = measure_finding(moved, fixed_text, MEASURED, points=[s.inputs for s in before.samples])
            assert after.measurement.digits_lost_max is not None, (label, after.measurement.reason)
            gains.append((label, before.measurement.digits_lost_max, after.measurement.digits_lost_max))
    return gains


def test_fixed_files_parse(measured_fix):
    for path in measured_fix.folder.rglob("*.py"):
        ast.parse(path.read_text(encoding="utf-8"), filename=str(path))


def test_fixed_unstable_findings_gain_at_least_two_digits(measured_fix, capsys):
    gains = measured_fix.gains
    assert gains, "no unstable finding was fixed"
    lines = [f"  {label}: {b:.1f} -> {a:.1f} digits lost" for label, b, a in gains]
    average = sum(b - a for _, b, a in gains) / len(gains)
    with capsys.disabled():
        print(f"\nfix re-measured: {len(gains)} fixed unstable findings, average gain {average:.1f} digits\n"
              + "\n".join(lines))
    small = [line for line, (_, b, a) in zip(lines, gains) if b - a < 2]
    assert not small, "gain below 2 digits:\n" + "\n".join(small)


def test_second_fix_is_a_no_op(measured_fix):
    # A rule that flags its own stable output (quadratic-roots once did, inside the `if b > 0`
    # branch of its guarded form) makes a second fix rewrite the code again.
    assert not measured_fix.second_rules and measured_fix.second_diff == "", (
        f"a second fix still applies rewrites of {sorted(measured_fix.second_rules)}:\n"
        f"{measured_fix.second_diff}\n{measured_fix.second_err}")
