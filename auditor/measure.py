"""The dynamic pass over findings: rerun each flagged unit in float64 as written and at high
precision, attach the Measurement, verify the rule's rewrite on the same samples, and adjust
severity from the verdict. Never imports or executes the scanned code (see auditor/numerics)."""
from __future__ import annotations

import ast
import contextlib
import signal
import threading
import time
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from auditor.callsites import call_points
from auditor.config import Config
from auditor.directives import parse_directives
from auditor.model import Finding, Measurement, Report, Rewrite, Severity, Span, Stats, Verdict
from auditor.numerics.budget import NotEvaluable
from auditor.numerics.inputs import DomainSyntaxError
from auditor.numerics.plan import InputPlan, plan_inputs
from auditor.numerics.run import Sample, Shadow, measure_points, trace_terms
from auditor.numerics.summary import not_measured, summarize, worst_of
from auditor.numerics.trace import series_figures
from auditor.numerics.series_verify import verify_series
from auditor.numerics.unit import SERIES_RULES, Unit, build_unit, compile_shadow, locate, source_module
from auditor.numerics.verify import remeasure, verify_rewrite
from auditor.rule import Context
from auditor.scan import walk
from auditor.splice import offsets

#: Test files searched for literal call-site arguments (bounded, so a huge suite stays cheap).
MAX_TEST_FILES = 200


@dataclass(frozen=True, slots=True)
class FindingMeasurement:
    """A finding's measurement, its samples, and the rewrite's figures on the same samples."""

    measurement: Measurement
    samples: tuple[Sample, ...] = ()
    after: Measurement | None = None  #: the unit with `replacement` spliced in
    after_samples: tuple[Sample, ...] = ()
    verified: bool = False
    note: str = ""  #: why the rewrite is (not) verified


@dataclass(slots=True)
class Project:
    """Per-run facts shared by all findings: test-file trees, recorded inputs, configuration."""

    config: Config
    recorded: Mapping[str, list[dict[str, float]]] = field(default_factory=dict)
    test_trees: list[ast.Module] | None = None


def module_key(path: str, function: str | None) -> str:
    """"samples/optics.py", "Lens.focus" -> "samples.optics:Lens.focus" (config and recorded keys)."""
    from auditor.recorded import module_key as key

    return key(path, function or "")


def _lookup(table: Mapping[str, Any], key: str) -> Any:
    """Exact key, else a key naming the same function with a shorter module suffix."""
    if key in table:
        return table[key]
    module, _, func = key.partition(":")
    for k, v in table.items():
        kmod, _, kfunc = k.partition(":")
        if kfunc == func and (module.endswith("." + kmod) or kmod.endswith("." + module)):
            return v
    return None


def _test_trees(config: Config) -> list[ast.Module]:
    root = config.root or Path.cwd()
    trees = []
    for path in sorted((root / "tests").rglob("test*.py"))[:MAX_TEST_FILES] if (root / "tests").is_dir() else []:
        try:
            trees.append(ast.parse(path.read_text(encoding="utf-8")))
        except (OSError, UnicodeDecodeError, SyntaxError, ValueError):
            continue  # an unreadable test file only means fewer call sites
    return trees


def _plan(unit: Unit, finding: Finding, source_text: str, tree: ast.Module, project: Project) -> InputPlan:
    function = unit.function
    qual = finding.function
    key = module_key(finding.path, qual)
    domain = parse_directives(source_text).domain_for(function.lineno) if function is not None else None
    domain = domain or _lookup(project.config.domains, key)
    points: list[dict[str, Any]] = []
    if function is not None:
        if project.test_trees is None:
            project.test_trees = _test_trees(project.config)
        points = call_points([tree, *project.test_trees], function)
    recorded = _lookup(project.recorded, key)
    return plan_inputs(unit.inputs, function, unit.node if not unit.is_function else None, domain,
                       points, recorded, project.config.samples, project.config.seed)


@dataclass(frozen=True, slots=True)
class _Measured:
    measurement: Measurement
    samples: tuple[Sample, ...]
    plan: InputPlan | None


def _parse(source_text: str, path: str) -> tuple[ast.Module, Context]:
    tree = ast.parse(source_text, filename=path)
    walk(tree, {})  # sets parent links for Context
    return tree, Context(tree, path, source_text)


def _shadow_at(finding: Finding, source_text: str, span: Span, inside: bool = False) -> tuple[Unit, Shadow, ast.Module] | str:
    """Parse, locate the unit at `span` and compile it; a reason string when that fails."""
    try:
        tree, ctx = _parse(source_text, finding.path)
    except (SyntaxError, ValueError, RecursionError) as exc:
        return f"the source does not parse: {exc}"
    node = locate(tree, span, source_text.splitlines(), inside)
    if node is None:
        return "the flagged code could not be found again in the source"
    module = source_module(tree)
    try:
        unit = build_unit(ctx, node, module, finding.rule)
        return unit, compile_shadow(unit, module), tree
    except NotEvaluable as exc:
        return f"not evaluated: {exc}"
    except RecursionError:
        return "not evaluated: nested too deeply"


def _measure_text(finding: Finding, source_text: str, span: Span, project: Project,
                  points: Sequence[dict[str, Any]] | None = None) -> _Measured:
    """Locate the unit at `span` in `source_text`, plan inputs (unless given) and measure."""
    found = _shadow_at(finding, source_text, span)
    if isinstance(found, str):
        return _Measured(not_measured(found), (), None)
    unit, shadow, tree = found
    try:
        plan = _plan(unit, finding, source_text, tree, project) if points is None else InputPlan(list(points), "")
        if not plan.points:
            return _Measured(not_measured("no input points"), (), plan)
        samples, bits, note = measure_points(shadow, plan.points)
    except NotEvaluable as exc:
        return _Measured(not_measured(f"not evaluated: {exc}"), (), None)
    except DomainSyntaxError as exc:
        return _Measured(not_measured(f"domain: {exc}"), (), None)
    except RecursionError:
        return _Measured(not_measured("not evaluated: nested too deeply"), (), None)
    series = None
    worst = worst_of(samples)
    if unit.trace and worst is not None:
        _, ref_terms = trace_terms(shadow, worst.inputs, worst.bits or bits)
        series = series_figures(ref_terms)
    return _Measured(summarize(samples, plan.reason, note, series), tuple(samples), plan)


def _remeasure_text(finding: Finding, new_text: str, span: Span, before: Sequence[Sample]) -> _Measured:
    """The rewritten unit on the original's samples (see auditor.numerics.run.remeasure)."""
    found = _shadow_at(finding, new_text, span, inside=True)
    if isinstance(found, str):
        return _Measured(not_measured(found), (), None)
    try:
        samples = remeasure(found[1], before)
    except NotEvaluable as exc:
        return _Measured(not_measured(f"not evaluated: {exc}"), (), None)
    except RecursionError:
        return _Measured(not_measured("not evaluated: nested too deeply"), (), None)
    return _Measured(summarize(samples, "inputs: the original's samples"), tuple(samples), None)


def _series_text(finding: Finding, source_text: str, new_text: str, span: Span,
                 before: Sequence[Sample]) -> tuple[_Measured, bool, str]:
    """A series rewrite measured against its own reference and checked by the series criterion
    (a truncated series and its closed form, or a smallest-term stop, differ by design)."""
    original = _shadow_at(finding, source_text, finding.span)
    found = _shadow_at(finding, new_text, span, inside=True)
    if isinstance(original, str) or isinstance(found, str):
        why = found if isinstance(found, str) else str(original)
        return _Measured(not_measured(why), (), None), False, why
    try:
        samples, ok, note = verify_series(finding.rule, original[1], found[1], before)
    except NotEvaluable as exc:
        return _Measured(not_measured(f"not evaluated: {exc}"), (), None), False, f"not evaluated: {exc}"
    except RecursionError:
        return _Measured(not_measured("not evaluated: nested too deeply"), (), None), False, "nested too deeply"
    return _Measured(summarize(samples, "inputs: the original's samples"), tuple(samples), None), ok, note


def splice_text(source_text: str, span: Span, replacement: str, imports: Sequence[str] = ()) -> str | None:
    """The source with `replacement` in place of `span`; needed imports appended at the end
    (imports are resolved file-wide, and appending keeps every line number)."""
    where = offsets(source_text, span)
    if where is None:
        return None
    start, end = where
    text = source_text[:start] + replacement + source_text[end:]
    if imports:
        text = text.rstrip("\n") + "\n" + "\n".join(imports) + "\n"
    return text


def _replaced_span(span: Span, replacement: str) -> Span:
    lines = replacement.split("\n")
    if len(lines) == 1:
        return Span(span.line, span.column, span.line, span.column + len(replacement))
    return Span(span.line, span.column, span.line + len(lines) - 1, len(lines[-1]) + 1)


def measure_finding(finding: Finding, source_text: str, config: Config, replacement: str | None = None,
                    *, project: Project | None = None, imports: Sequence[str] = (),
                    points: Sequence[dict[str, Any]] | None = None) -> FindingMeasurement:
    """Measure one finding; with `replacement`, also the unit with that text at the finding's span,
    on the same samples, and whether it passes verification. `points` overrides input planning."""
    project = project or Project(config)
    before = _measure_text(finding, source_text, finding.span, project, points)
    if replacement is None:
        return FindingMeasurement(before.measurement, before.samples)
    if before.plan is None or before.measurement.verdict is Verdict.NOT_MEASURED:
        return FindingMeasurement(before.measurement, before.samples, note="original not measured: " + before.measurement.reason)
    new_text = splice_text(source_text, finding.span, replacement, imports)
    if new_text is None:
        return FindingMeasurement(before.measurement, before.samples, note="the span does not fit the source")
    span = _replaced_span(finding.span, replacement)
    if finding.rule in SERIES_RULES:
        after, ok, note = _series_text(finding, source_text, new_text, span, before.samples)
    else:
        after = _remeasure_text(finding, new_text, span, before.samples)
        ok, note = verify_rewrite(before.samples, after.samples)
    if after.measurement.verdict is Verdict.NOT_MEASURED:
        ok, note = False, "rewrite not measured: " + after.measurement.reason
    return FindingMeasurement(before.measurement, before.samples, after.measurement, after.samples, ok, note)


def adjusted_severity(finding: Finding, m: Measurement) -> Severity:
    """Severity after measuring: unstable with >= 8 digits lost is an error, >= 4 at least a
    warning; benign drops to a note; ill-conditioned and not-measured keep the rule's severity."""
    loss = m.digits_lost_max or 0.0
    if m.verdict is Verdict.UNSTABLE:
        if loss >= 8:
            return Severity.ERROR
        if loss >= 4 and finding.severity.rank < Severity.WARNING.rank:
            return Severity.WARNING
        return finding.severity
    if m.verdict is Verdict.BENIGN:
        return Severity.NOTE
    return finding.severity


def _rewrite_after(finding: Finding, fm: FindingMeasurement) -> Rewrite | None:
    if finding.rewrite is None or finding.rewrite.advice:
        return finding.rewrite
    after = fm.after.digits_lost_max if fm.after is not None else None
    return Rewrite(finding.rewrite.text, fm.verified, after, fm.note, finding.rewrite.imports)


def _with_points(m: Measurement, samples: Sequence[Sample]) -> Measurement:
    """Per-sample (main input, digits lost) for plots: the first input that varies."""
    from dataclasses import replace

    measured = [s for s in samples if s.digits_lost is not None]
    names = [k for k in (measured[0].inputs if measured else {}) if isinstance(measured[0].inputs[k], float)]
    if not names:
        return m
    pts = tuple((float(s.inputs[names[0]]), float(s.digits_lost or 0.0)) for s in measured)
    return replace(m, points=pts)


#: Wall-clock limit for measuring one finding. The per-unit budget (steps and time, checked
#: between operations) stops runaway code; this net catches a single library call that runs
#: away on its own (an mpmath function climbing to ever higher precision inside one call).
FINDING_SECONDS = 20.0


class _OutOfTime(BaseException):
    """Raised by the alarm; a BaseException so that no `except Exception` in the pass hides it."""


@contextlib.contextmanager
def _hard_deadline(seconds: float) -> Iterator[None]:
    """Interrupt the block after `seconds` (main thread on POSIX only; elsewhere a no-op)."""
    usable = hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()
    if not usable:
        yield
        return

    def _alarm(signum: int, frame: object) -> None:
        raise _OutOfTime()

    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def measure_one(finding: Finding, source_text: str | None, project: Project) -> Finding:
    """A finding with its measurement, verified rewrite and adjusted severity (never raises)."""
    if source_text is None:
        return finding.with_(measurement=not_measured("the source could not be read again"))
    try:
        rewrite = finding.rewrite
        if rewrite is not None and rewrite.advice:
            rewrite = None  # advice changes what the code computes: there is nothing to verify it against
        with _hard_deadline(FINDING_SECONDS):
            fm = measure_finding(finding, source_text, project.config, rewrite.text if rewrite else None,
                                 project=project, imports=rewrite.imports if rewrite else ())
    except _OutOfTime:
        return finding.with_(measurement=not_measured(
            f"measuring took longer than {FINDING_SECONDS:.0f} s (a single numeric call did not return); stopped"))
    except Exception as exc:  # a bug in the dynamic pass must not stop the run: report it as data
        return finding.with_(measurement=not_measured(f"internal error in the dynamic pass: {type(exc).__name__}: {exc}"))
    m = _with_points(fm.measurement, fm.samples)
    severity = adjusted_severity(finding, m)
    if severity is Severity.NOTE and any(isinstance(s.reference, bool) for s in fm.samples):
        # A true/false test that rounding does not flip is not thereby a sound test (a determinant
        # threshold is wrong at any precision): the rule's own severity stands.
        severity = finding.severity
    return finding.with_(measurement=m, rewrite=_rewrite_after(finding, fm), severity=severity)


def _read(path: str, config: Config) -> str | None:
    for candidate in (Path(path), (config.root or Path.cwd()) / path):
        try:
            return candidate.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError):
            continue
    return None


def _recorded(inputs: str | None) -> Mapping[str, list[dict[str, float]]]:
    if not inputs:
        return {}
    from auditor.recorded import load_recorded

    return load_recorded(inputs)


def _measure_file(path: str, group: Sequence[Finding], project: Project) -> list[Finding]:
    """Measure one file's findings (notebook findings in the joined program of their cells)."""
    if any(f.cell is not None for f in group):
        from auditor.notebook import NotebookError, from_program, program_source, to_program

        try:
            program = program_source(path if Path(path).exists() else (project.config.root or Path.cwd()) / path)
        except NotebookError as exc:
            return [f.with_(measurement=not_measured(str(exc))) for f in group]
        return [from_program(measure_one(to_program(f, program).with_(cell=None), program.text, project), f)
                for f in group]
    source = _read(path, project.config)
    return [measure_one(f, source, project) for f in group]


def _measure_batch(batch: Sequence[tuple[str, Sequence[Finding]]], project: Project) -> list[Finding]:
    return [m for path, group in batch for m in _measure_file(path, group, project)]


def _groups(findings: Sequence[Finding]) -> list[tuple[str, list[Finding]]]:
    by_path: dict[str, list[Finding]] = {}
    for f in findings:
        by_path.setdefault(f.path, []).append(f)
    return list(by_path.items())


def measure_report(report: Report, config: Config, inputs: str | None = None) -> Report:
    """The dynamic pass over every finding of a static report (in worker processes with --jobs)."""
    from concurrent.futures import ProcessPoolExecutor
    from dataclasses import replace

    from auditor.progress import progress

    started = time.perf_counter()
    project = Project(config, _recorded(inputs))
    groups = _groups(report.findings)
    measured: list[Finding] = []
    with progress(len(report.findings), "measuring findings") as bar:  # drawn only when stderr is a terminal
        if config.jobs > 1 and len(groups) > 1:
            with ProcessPoolExecutor(max_workers=config.jobs) as pool:
                futures = [pool.submit(_measure_batch, [g], project) for g in groups]
                for future in futures:
                    part = future.result()
                    measured.extend(part)
                    for _ in part:
                        bar.advance()
        else:
            for path, group in groups:
                for m in _measure_file(path, group, project):
                    measured.append(m)
                    bar.advance()
    seconds = round(report.stats.seconds + time.perf_counter() - started, 3)
    stats = Stats(report.stats.files, report.stats.lines, seconds)
    return replace(report, findings=tuple(sorted(measured, key=Finding.sort_key)), stats=stats)


def measure_paths(paths: Sequence[str], config: Config, inputs: str | None = None) -> Report:
    """`auditor measure`: the static pass (limited to changed lines with --changed-since), then every finding measured."""
    from auditor.scan import scan_paths

    report = scan_paths(paths, config)
    if config.changed_since:
        from auditor.changed import keep_changed

        report = keep_changed(report, config.changed_since)
    return measure_report(report, config, inputs)
