"""Choose a unit's inputs, in the contract's order: recorded values, the domain (comment or
config), literal arguments at call sites, defaults and annotations, else an assumed box."""
from __future__ import annotations

import ast
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from auditor.numerics.inputs import Range, parse_domain, sample_points
from auditor.numerics.matrices import describe_roles, matrix_roles, with_matrices

_INT_FUNCS = {"range", "factorial", "comb", "perm", "isqrt"}
_SELF = ("self", "cls")


@dataclass(frozen=True, slots=True)
class InputPlan:
    points: list[dict[str, Any]]
    reason: str  #: where the inputs came from, in words (assumptions stated)


def integer_names(function: ast.FunctionDef | None, expr: ast.AST | None = None) -> set[str]:
    """Inputs that must be integers: annotated `int`, with an int default, or used as a count
    (argument of range(), factorial(), comb())."""
    out: set[str] = set()
    roots = [n for n in (function, expr) if n is not None]
    if function is not None:
        args = function.args
        positional = [*args.posonlyargs, *args.args]
        for a in (*positional, *args.kwonlyargs):
            if isinstance(a.annotation, ast.Name) and a.annotation.id == "int":
                out.add(a.arg)
        for a, d in zip(positional[len(positional) - len(args.defaults):], args.defaults):
            if isinstance(d, ast.Constant) and type(d.value) is int:
                out.add(a.arg)
    for root in roots:
        for node in ast.walk(root):
            if isinstance(node, ast.Call):
                name = node.func.id if isinstance(node.func, ast.Name) else getattr(node.func, "attr", "")
                if name in _INT_FUNCS:
                    out |= {n.id for a in node.args for n in ast.walk(a) if isinstance(n, ast.Name)}
    return out


def literal_defaults(function: ast.FunctionDef | None) -> dict[str, Any]:
    """Parameters whose default is a number literal (kept fixed at that value)."""
    if function is None:
        return {}
    args = function.args
    positional = [*args.posonlyargs, *args.args]
    pairs = list(zip(positional[len(positional) - len(args.defaults):], args.defaults))
    pairs += [(a, d) for a, d in zip(args.kwonlyargs, args.kw_defaults) if d is not None]
    out: dict[str, Any] = {}
    for a, d in pairs:
        value = _literal(d)
        if value is not None:
            out[a.arg] = value
    return out


def _literal(node: ast.AST) -> Any:
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = _literal(node.operand)
        return None if inner is None else (-inner if isinstance(node.op, ast.USub) else inner)
    if isinstance(node, ast.Constant) and type(node.value) in (int, float):
        return node.value
    return None


def _typed(value: Any, integer: bool) -> Any:
    return int(value) if integer else float(value)


def _around(values: Sequence[float], integer: bool) -> Range:
    """A neighbourhood of call-site values: within a factor 2 (integers: exactly their span)."""
    lo, hi = min(values), max(values)
    if integer:
        return Range(lo, hi, True)
    lo = lo / 2 if lo > 0 else lo * 2
    hi = hi * 2 if hi > 0 else hi / 2
    return Range(lo, hi, False)


@dataclass(slots=True)
class _Draft:
    """Inputs being decided, source by source (each step takes the names still open)."""

    todo: list[str]
    integers: set[str]
    fixed: dict[str, Any] = field(default_factory=dict)
    ranges: dict[str, Range] = field(default_factory=dict)
    exact: list[dict[str, Any]] = field(default_factory=list)
    assumed: list[str] = field(default_factory=list)
    reasons: list[str] = field(default_factory=list)

    def take(self, done: Sequence[str]) -> None:
        self.todo = [n for n in self.todo if n not in done]


def _from_domain(d: _Draft, domain_text: str) -> None:
    given = parse_domain(domain_text)
    for n in [n for n in d.todo if n in given]:
        r = given[n]
        d.ranges[n] = Range(r.lo, r.hi, r.integer and n in d.integers)
    if d.ranges:
        d.reasons.append(f"domain {domain_text.strip()}")
    d.take(list(d.ranges))


def _from_call_sites(d: _Draft, call_points: Sequence[Mapping[str, float]]) -> None:
    covered = sorted({n for p in call_points for n in p if n in d.todo})
    if not covered:
        return
    for n in covered:
        d.ranges[n] = _around([float(p[n]) for p in call_points if n in p], n in d.integers)
    d.exact = [{n: _typed(p[n], n in d.integers) for n in covered if n in p} for p in call_points]
    d.reasons.append(f"{', '.join(covered)} from {len(call_points)} call site(s) with literal arguments and within a factor 2 of them")
    d.take(covered)


def _from_defaults(d: _Draft, function: ast.FunctionDef | None) -> None:
    defaults = literal_defaults(function)
    for n in [n for n in d.todo if n in defaults]:
        d.fixed[n] = defaults[n]
        d.reasons.append(f"{n}={defaults[n]!r} (its default)")
    d.take(list(defaults))
    for n in [n for n in d.todo if n in d.integers]:
        d.ranges[n] = Range(0, 50, True)
        d.reasons.append(f"{n} assumed an integer in 0..50")
    d.take(list(d.integers))
    d.assumed = list(d.todo)
    if d.assumed:
        d.reasons.append(f"{', '.join(d.assumed)} assumed (no domain given): |value| log-uniform in 1e-12..1e12, "
                         "both signs, plus points near 0, 1 and large")


def plan_inputs(
    names: Sequence[str],
    function: ast.FunctionDef | None,
    expr: ast.AST | None,
    domain_text: str | None,
    call_points: Sequence[Mapping[str, float]],
    recorded: Sequence[Mapping[str, float]] | None,
    samples: int,
    seed: int,
) -> InputPlan:
    """Points for every input name, and the reason that says where they came from: recorded
    values, the domain, call-site literals, defaults and annotations, else the assumed box."""
    roles = matrix_roles([function, expr], names)
    linear = roles.matrices | roles.vectors if roles else frozenset()  # vectors only beside matrices
    d = _Draft([n for n in names if n not in _SELF and n not in linear], integer_names(function, expr),
               {n: None for n in names if n in _SELF})
    if recorded and all(n in p for p in recorded for n in d.todo):
        points = [{**d.fixed, **{n: _typed(p[n], n in d.integers) for n in d.todo}} for p in recorded]
        return InputPlan(points, f"inputs: {len(points)} recorded point(s)")
    if domain_text:
        _from_domain(d, domain_text)
    _from_call_sites(d, call_points)
    _from_defaults(d, function)
    arrays = array_names([function, expr], names) - linear
    single = not d.assumed and all(r.lo == r.hi for r in d.ranges.values()) and not d.exact and not arrays and not roles
    count = 1 if single else samples
    points = sample_points(d.ranges, d.assumed, d.fixed, count, seed)
    for n in [n for n, r in d.ranges.items() if r.integer]:
        for p in points:
            p[n] = int(p[n])
    points = [{**points[i % len(points)], **e} for i, e in enumerate(d.exact)] + points[: max(0, count - len(d.exact))]
    if arrays:
        points = with_arrays(points, arrays, d.ranges, seed)
        d.reasons.append(f"{', '.join(sorted(arrays))}: arrays of {ARRAY_SIZE} values each")
    if roles:
        points = with_matrices(points, roles, seed)
        d.reasons.append(describe_roles(roles))
    return InputPlan(points, "inputs: " + "; ".join(d.reasons) if d.reasons else "inputs: none (a constant unit)")


#: Elements per array input (small: the reference evaluates arrays element by element).
ARRAY_SIZE = 16
_REDUCERS = {"sum", "fsum", "mean", "var", "std", "max", "min", "len", "dot", "cumsum", "prod", "asarray",
             "array", "logsumexp", "sort", "sorted", "median", "average", "amax", "amin", "nansum", "nanmean"}


def array_names(roots: Sequence[ast.AST | None], names: Sequence[str]) -> set[str]:
    """Inputs used as arrays: subscripted, iterated, reduced (np.mean(v), sum(v), len(v)) or
    given a reduction method (v.sum())."""
    wanted, out = set(names), set()
    for root in (r for r in roots if r is not None):
        for node in ast.walk(root):
            if isinstance(node, ast.Subscript) and isinstance(node.value, ast.Name):
                out.add(node.value.id)
            elif isinstance(node, (ast.For, ast.comprehension)) and isinstance(node.iter, ast.Name):
                out.add(node.iter.id)
            elif isinstance(node, ast.Call) and len(node.args) == 1 and isinstance(node.args[0], ast.Name):
                func = node.func.id if isinstance(node.func, ast.Name) else getattr(node.func, "attr", "")
                if func in _REDUCERS:
                    out.add(node.args[0].id)
            elif isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) and node.attr in _REDUCERS:
                out.add(node.value.id)
    return out & wanted


def with_arrays(points: list[dict[str, Any]], arrays: set[str], ranges: Mapping[str, Range], seed: int) -> list[dict[str, Any]]:
    """Replace each array input's scalar by a tuple of ARRAY_SIZE values from its range."""
    from auditor.numerics.inputs import sample_default, sample_range

    if not arrays:
        return points
    rng = np.random.default_rng(seed + 7919)
    out = []
    for point in points:
        new = dict(point)
        for name in sorted(arrays):
            r = ranges.get(name)
            values = sample_range(r, ARRAY_SIZE + 3, rng)[-ARRAY_SIZE:] if r is not None else sample_default(ARRAY_SIZE + 16, rng)[-ARRAY_SIZE:]
            new[name] = tuple(float(v) for v in values)
        out.append(new)
    return out
