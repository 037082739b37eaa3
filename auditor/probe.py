"""`auditor probe EXPR`: measure one expression over an input box (or at a point), no file needed."""
from __future__ import annotations

import ast
import json
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from auditor.model import Measurement, Verdict
from auditor.numerics.budget import NotEvaluable
from auditor.numerics.chart import digits_chart
from auditor.numerics.inputs import DomainSyntaxError, Range, parse_domain, sample_points
from auditor.numerics.interp import SourceModule
from auditor.numerics.matrices import describe_roles, matrix_roles, with_matrices
from auditor.numerics.plan import ARRAY_SIZE, array_names, with_arrays
from auditor.numerics.run import Sample, measure_points
from auditor.numerics.summary import not_measured, summarize
from auditor.numerics.unit import Unit, compile_shadow, free_names
from auditor.numerics.verify import remeasure, verify_rewrite
from auditor.resolve import ImportTable

#: Names an expression may use without importing them (a probe has no import lines).
PRELUDE = ("import math", "import cmath", "import numpy as np", "import numpy", "import scipy.special as special",
           "import scipy.special as sc", "from math import *")
EXIT_OK, EXIT_UNSTABLE, EXIT_USAGE = 0, 1, 2


class ProbeError(ValueError):
    """A bad expression, --var or --at (exit 2)."""


@dataclass(frozen=True, slots=True)
class ProbeResult:
    expression: str
    measurement: Measurement
    samples: tuple[Sample, ...]
    rewrite: dict[str, Any] | None
    bits: int  #: the working precision the reference settled on


def prelude_module() -> SourceModule:
    table = ImportTable()
    for line in PRELUDE:
        stmt = ast.parse(line).body[0]
        assert isinstance(stmt, (ast.Import, ast.ImportFrom))
        table.add(stmt)
    return SourceModule(table)


def parse_expression(text: str) -> ast.expr:
    try:
        return ast.parse(text.strip(), mode="eval").body
    except SyntaxError as exc:
        raise ProbeError(f"cannot parse the expression: {exc.msg}") from None


def parse_at(items: Sequence[str]) -> dict[str, float]:
    out: dict[str, float] = {}
    for item in items:
        name, sep, value = item.partition("=")
        if not sep or not name.strip().isidentifier():
            raise ProbeError(f"--at {item!r}: expected NAME=VALUE")
        try:
            out[name.strip()] = float(value)
        except ValueError:
            raise ProbeError(f"--at {item!r}: {value!r} is not a number") from None
    return out


def plan_probe(names: Sequence[str], var: Sequence[str], at: dict[str, float], samples: int, seed: int,
               node: ast.expr | None = None) -> tuple[list[dict[str, Any]], str]:
    """Points over the --var box (or at --at); names the expression uses as arrays, matrices or
    vectors (numerics/plan.py, numerics/matrices.py) get arrays, assumed and said so."""
    try:
        ranges = parse_domain(", ".join(var)) if var else {}
    except DomainSyntaxError as exc:
        raise ProbeError(f"--var: {exc}") from None
    unknown = sorted((set(ranges) | set(at)) - set(names))
    if unknown:
        raise ProbeError(f"the expression has no variable {', '.join(unknown)}")
    roles = matrix_roles([node], names)
    linear = roles.matrices | roles.vectors if roles else frozenset()  # vectors only beside matrices
    arrays = array_names([node], names) - linear
    ranges = {n: Range(r.lo, r.hi, False) for n, r in ranges.items() if n not in at and n not in linear}
    assumed = [n for n in names if n not in ranges and n not in at and n not in linear]
    single = not assumed and all(r.lo == r.hi for r in ranges.values()) and not arrays and not roles
    points = sample_points({n: r for n, r in ranges.items() if n not in arrays}, [n for n in assumed if n not in arrays],
                           at, 1 if single else samples, seed)
    parts = [f"{n}={r.lo:g}..{r.hi:g}" for n, r in sorted(ranges.items())] + [f"{n}={v:g}" for n, v in sorted(at.items())]
    scalars = [n for n in assumed if n not in arrays]
    if scalars:
        parts.append(f"{', '.join(scalars)} assumed: |value| log-uniform in 1e-12..1e12, both signs, plus points near 0, 1 and large")
    if arrays:
        points = with_arrays(points, arrays, ranges, seed)
        parts.append(f"{', '.join(sorted(arrays))}: arrays of {ARRAY_SIZE} values each")
    if roles:
        points = with_matrices(points, roles, seed)
        parts.append(describe_roles(roles))
    return points, "inputs: " + "; ".join(parts) if parts else "inputs: none"


def measure_expression(node: ast.expr, module: SourceModule, names: Sequence[str], points: Sequence[dict[str, Any]]) -> tuple[list[Sample], int, str]:
    shadow = compile_shadow(Unit(node, list(names), None), module)
    return measure_points(shadow, points)


def run_probe(expression: str, var: Sequence[str], at_items: Sequence[str], samples: int, seed: int) -> ProbeResult:
    """Measure the expression (and the rules' rewrite of it, on the same points)."""
    if samples < 1:
        raise ProbeError("--samples must be at least 1")
    node, module = parse_expression(expression), prelude_module()
    names = free_names(node, module)
    points, reason = plan_probe(names, var, parse_at(at_items), samples, seed, node)
    try:
        found, bits, note = measure_expression(node, module, names, points)
    except NotEvaluable as exc:
        return ProbeResult(expression, not_measured(f"not evaluated: {exc}"), (), None, 0)
    measurement = summarize(found, reason, note)
    rewrite = _rewrite(expression, names, module, points, found)
    return ProbeResult(expression, measurement, tuple(found), rewrite, bits)


def _rewrite(expression: str, names: Sequence[str], module: SourceModule, points: Sequence[dict[str, Any]],
             before: Sequence[Sample]) -> dict[str, Any] | None:
    """The static rules' rewrite of the expression, measured on the same points and verified."""
    from auditor.scan import scan_source

    text = " ".join(expression.strip().splitlines())
    head = "    return "
    source = "\n".join([*PRELUDE, f"def _probe({', '.join(names)}):", head + text, ""])
    line = len(PRELUDE) + 2
    hits = [f for f in scan_source(source, "<probe>").findings if f.rewrite and f.span.line == f.span.end_line == line]
    if not hits:
        return None
    f = min(hits, key=lambda h: (h.span.column, -h.span.end_column))
    assert f.rewrite is not None
    start, end = f.span.column - 1 - len(head), f.span.end_column - 1 - len(head)
    new_text = text[:start] + f.rewrite.text + text[end:]
    extra = prelude_module()
    for imp in f.rewrite.imports:
        try:
            stmt = ast.parse(imp).body[0]
        except (SyntaxError, IndexError):
            continue
        if isinstance(stmt, (ast.Import, ast.ImportFrom)):
            extra.imports.add(stmt)
    try:
        shadow = compile_shadow(Unit(parse_expression(new_text), list(names), None), extra)
        after = remeasure(shadow, before)
    except (NotEvaluable, ProbeError) as exc:
        return {"text": new_text, "verified": False, "digits_lost_max_after": None, "rule": f.rule, "note": str(exc)}
    ok, note = verify_rewrite(before, after)
    losses = [s.digits_lost for s in after if s.digits_lost is not None]
    return {"text": new_text, "verified": ok, "digits_lost_max_after": round(max(losses), 2) if losses else None,
            "rule": f.rule, "note": note}


def render_text(result: ProbeResult) -> str:
    m = result.measurement
    out = [f"expression: {result.expression}", f"verdict:    {m.verdict.value}"]
    if m.verdict is not Verdict.NOT_MEASURED:
        where = ", ".join(f"{k}={v:.17g}" if isinstance(v, float) else f"{k}={v}" for k, v in m.worst_inputs.items()) or "an array input"
        cond = "n/a" if m.condition_log10_max is None else f"{m.condition_log10_max:.2f}"
        out += [
            f"samples:    {m.samples} (reference at {result.bits} bits)",
            f"digits lost: max {m.digits_lost_max:.2f}, median {m.digits_lost_median:.2f}  (worst at {where})",
            f"  float:     {m.float_value!r}",
            f"  reference: {m.reference_value}",
            f"condition:  log10 max {cond}",
        ]
    if result.rewrite is not None:
        r = result.rewrite
        state = "verified" if r["verified"] else "not verified"
        after = r["digits_lost_max_after"]
        out.append(f"rewrite:    {r['text']}  ({state}; worst loss after {after if after is not None else 'n/a'}; {r['note']})")
    out.append(f"why:        {m.reason}")
    chart = digits_chart(result.samples)
    if chart:
        out += ["", chart]
    return "\n".join(out) + "\n"


def render_json(result: ProbeResult) -> str:
    from auditor.report.jsonv1 import measurement_dict

    body = measurement_dict(result.measurement) or {}
    body["expression"] = result.expression
    rewrite = result.rewrite
    body["rewrite"] = None if rewrite is None else {k: rewrite[k] for k in ("text", "verified", "digits_lost_max_after")}
    return json.dumps(body, indent=2, ensure_ascii=False) + "\n"


def probe_command(expression: str, vars: Sequence[str], at: Sequence[str], samples: int, seed: int, fmt: str) -> tuple[str, int]:
    """The CLI entry: (text to print, exit status: 0, 1 when unstable, 2 on bad arguments)."""
    try:
        result = run_probe(expression, vars, at, samples, seed)
    except ProbeError as exc:
        return f"auditor: error: {exc}\n", EXIT_USAGE
    text = render_json(result) if fmt == "json" else render_text(result)
    return text, EXIT_UNSTABLE if result.measurement.verdict is Verdict.UNSTABLE else EXIT_OK
