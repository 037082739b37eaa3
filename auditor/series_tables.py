"""Series driven by a literal coefficient table: does the table grow like an asymptotic expansion?"""
from __future__ import annotations

import ast
from dataclasses import dataclass

from auditor.rule import Context
from auditor.series_model import Machine, Unknown


@dataclass(frozen=True, slots=True)
class Table:
    """A literal coefficient table a loop walks through."""

    name: str
    element: str  #: the loop variable holding one coefficient
    ratios: tuple[float, ...]  #: |c[i+1] / c[i]|


def _table_value(ctx: Context, loop: ast.For, name: str) -> ast.expr | None:
    """The literal list/tuple bound to `name` in the function, else at module level."""
    b = ctx.flow(ctx.scope(loop)).reaching(name, loop.lineno, loop.col_offset)
    if b is None:
        module = ctx.flow(ctx.tree).of(name)
        b = module[-1] if len(module) == 1 else None
    if b is None or b.kind != "assign" or not isinstance(b.value, (ast.List, ast.Tuple)):
        return None
    return b.value


def _iterated(loop: ast.For) -> tuple[str, str] | None:
    """(table name, element name) for `for c in T` and `for k, c in enumerate(T)`."""
    it, target = loop.iter, loop.target
    if isinstance(it, ast.Name) and isinstance(target, ast.Name):
        return it.id, target.id
    if (isinstance(it, ast.Call) and isinstance(it.func, ast.Name) and it.func.id == "enumerate" and it.args
            and isinstance(it.args[0], ast.Name) and isinstance(target, ast.Tuple) and len(target.elts) == 2
            and isinstance(target.elts[1], ast.Name)):
        return it.args[0].id, target.elts[1].id
    return None


def coefficient_table(ctx: Context, loop: ast.For) -> Table | None:
    """The table a loop sums over, with the ratios of neighbouring coefficients."""
    found = _iterated(loop)
    if found is None:
        return None
    value = _table_value(ctx, loop, found[0])
    if not isinstance(value, (ast.List, ast.Tuple)) or len(value.elts) < 5:
        return None
    machine = Machine(ctx, {})
    try:
        coeffs = [float(machine.value(e)) for e in value.elts]  # type: ignore[arg-type]  # complex -> TypeError
    except (Unknown, ArithmeticError, ValueError, TypeError):
        return None
    if any(c == 0 for c in coeffs):
        return None
    ratios = tuple(abs(b / a) for a, b in zip(coeffs, coeffs[1:]))
    return Table(found[0], found[1], ratios)


def grows_like_asymptotic(table: Table) -> bool:
    """Neighbour ratios that rise steadily past 1 (Bernoulli-type growth), unlike a convergent table."""
    tail = table.ratios[-3:]
    return all(b > a for a, b in zip(table.ratios, table.ratios[1:])) and tail[-1] >= 1.0
