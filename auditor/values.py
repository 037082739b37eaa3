"""The values an expression can take when the code spells them out: literals, literal arrays,
constants set in the scope or once in a class, and the arguments every visible call passes to a
nested function.

A finding about "x near 0" or "x near y" is moot when the code fixes x to 0.3 (`p, loc = 0.3, 3`,
`y = np.array([0.5, 1, 7])`, `params = np.r_[0.0, 2]`, or a test helper only ever called with
such arrays). Rules ask `known_values(ctx, expr)` and judge the values themselves; None means
"not spelled out", which is the usual case and leaves the finding as it was.
"""
from __future__ import annotations

import ast
import math
from collections.abc import Callable, Sequence

from auditor import patterns as p
from auditor.class_constants import class_attribute_value
from auditor.rule import Context

Values = tuple[float, ...]

#: more values than this are not tracked (a literal table, not a handful of test inputs)
_LIMIT = 512
_ARRAY_MAKERS = ("array", "asarray", "asanyarray", "float64", "double")
_UNARY: dict[str, Callable[[float], float]] = {
    "sqrt": math.sqrt, "exp": math.exp, "log": math.log, "abs": abs, "cos": math.cos, "sin": math.sin,
}
_BINARY: dict[type, Callable[[float, float], float]] = {
    ast.Add: lambda a, b: a + b, ast.Sub: lambda a, b: a - b, ast.Mult: lambda a, b: a * b,
    ast.Div: lambda a, b: a / b, ast.Pow: lambda a, b: a ** b,
}


def known_values(ctx: Context, expr: ast.AST, depth: int = 6) -> Values | None:
    """Every value `expr` can take, when the code spells them all out; else None. `depth` bounds the
    hops through local names and call sites (the expressions themselves are walked whole)."""
    if depth <= 0:
        return None
    try:
        found = _values(ctx, expr, depth)
    except (ArithmeticError, ValueError, TypeError, RecursionError):
        return None  # 0 ** -1, log(-1), overflow, absurd nesting: not a value we can vouch for
    if found is None or not found or len(found) > _LIMIT or not all(math.isfinite(v) for v in found):
        return None
    return found


def _values(ctx: Context, expr: ast.AST, depth: int) -> Values | None:
    value = p.literal_number(expr)
    if value is not None:
        return None if isinstance(value, complex) else (float(value),)
    if isinstance(expr, (ast.Name, ast.Attribute)) and ctx.family(expr) in ("pi", "e"):
        return (math.pi if ctx.family(expr) == "pi" else math.e,)
    if isinstance(expr, ast.Name):
        return _name_values(ctx, expr, depth)
    if isinstance(expr, ast.Attribute):
        held = class_attribute_value(ctx, expr)  # `self.xx` set once in the class (setup_class, __init__)
        return None if held is None else known_values(ctx, held, depth - 1)
    if isinstance(expr, (ast.List, ast.Tuple)):
        return _concat([known_values(ctx, e, depth) for e in expr.elts])
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        inner = known_values(ctx, expr.operand, depth)
        return None if inner is None else tuple(-v if isinstance(expr.op, ast.USub) else v for v in inner)
    if isinstance(expr, ast.BinOp) and type(expr.op) in _BINARY:
        return _broadcast(_BINARY[type(expr.op)], known_values(ctx, expr.left, depth),
                          known_values(ctx, expr.right, depth))
    if isinstance(expr, ast.Call):
        return _call_values(ctx, expr, depth)
    if isinstance(expr, ast.Subscript):
        return _subscript_values(ctx, expr, depth)
    return None


def _name_values(ctx: Context, name: ast.Name, depth: int) -> Values | None:
    origin = ctx.origin(name, depth=1)
    if origin is not name:
        if not certain_binding(ctx, name):
            return None  # another assignment (in a branch) may be the one in effect: not spelled out
        return known_values(ctx, origin, depth - 1)
    binding = ctx.binding(name)
    if binding is not None and isinstance(binding.stmt, ast.arg):
        return _argument_values(ctx, name, binding.stmt, depth)
    return None


#: statements whose blocks may run zero times or only on one branch
_CONDITIONAL = (ast.If, ast.For, ast.AsyncFor, ast.While, ast.Try, ast.Match, ast.ExceptHandler, ast.IfExp)


def certain_binding(ctx: Context, name: ast.Name) -> bool:
    """True when the binding that reaches `name` is surely the one in effect: no other binding of
    the name sits between it and the use, and every conditional block around it also holds the use
    on the same branch (`if c: r = 0.0 else: r = f(x)` leaves `r` unknown after the if)."""
    binding = ctx.binding(name)
    if binding is None:
        return False
    here = (name.lineno, name.col_offset)
    at = binding.effect or (binding.line, binding.column)
    for other in ctx.flow(ctx.scope(name)).of(name.id):
        other_at = other.effect or (other.line, other.column)
        if other is not binding and at < other_at <= here:
            return False
    return _blocks(ctx, binding.stmt) <= _blocks(ctx, name)


def _blocks(ctx: Context, node: ast.AST) -> set[tuple[int, str]]:
    """The conditional blocks (statement, field) holding `node`, up to its scope."""
    found: set[tuple[int, str]] = set()
    child, scope = node, ctx.scope(node)
    for anc in ctx.ancestors(node):
        if anc is scope:
            break
        if isinstance(anc, _CONDITIONAL):
            field = next((f for f, v in ast.iter_fields(anc) if v is child or isinstance(v, list) and child in v), "")
            found.add((id(anc), field))
        child = anc
    return found


def _call_values(ctx: Context, call: ast.Call, depth: int) -> Values | None:
    family = ctx.family(call)
    if family in _ARRAY_MAKERS and call.args and not any(k.arg == "dtype" and _integer_dtype(k.value) for k in call.keywords):
        return known_values(ctx, call.args[0], depth)
    if family in ("linspace", "arange"):
        return _grid(ctx, call, family, depth)
    if family in _UNARY and len(call.args) == 1:
        inner = known_values(ctx, call.args[0], depth)
        return None if inner is None else tuple(_UNARY[family](v) for v in inner)
    return None


def _grid(ctx: Context, call: ast.Call, family: str, depth: int) -> Values | None:
    """`np.linspace(a, b, n)` and `np.arange(start, stop, step)` with literal bounds: every grid point."""
    if call.keywords and family == "arange" or any(k.arg not in ("endpoint", "num") for k in call.keywords):
        return None
    bounds = [known_values(ctx, a, depth) for a in call.args]
    if any(b is None or len(b) != 1 for b in bounds):
        return None
    nums = [b[0] for b in bounds]  # type: ignore[index]
    if family == "linspace":
        num = next((k.value for k in call.keywords if k.arg == "num"), None)
        if num is not None:
            nums.append(known_values(ctx, num, depth)[0] if known_values(ctx, num, depth) else math.nan)  # type: ignore[index]
        if len(nums) == 2:
            nums.append(50.0)  # numpy's default number of points
        if len(nums) != 3 or not nums[2].is_integer() or not 1 <= nums[2] <= _LIMIT:
            return None
        endpoint = next((k.value for k in call.keywords if k.arg == "endpoint"), None)
        closed = endpoint is None or isinstance(endpoint, ast.Constant) and endpoint.value is True
        if endpoint is not None and not isinstance(endpoint, ast.Constant):
            return None
        a, b, n = nums[0], nums[1], int(nums[2])
        step = (b - a) / (n - 1 if closed else n) if n > 1 else 0.0
        points = [a + i * step for i in range(n)]
        if closed and n > 1:
            points[-1] = b  # numpy sets the end point to the bound itself
        return tuple(points)
    start, stop, step = (0.0, nums[0], 1.0) if len(nums) == 1 else (nums[0], nums[1], nums[2] if len(nums) == 3 else 1.0)
    if step == 0 or len(nums) > 3:
        return None
    count = math.ceil((stop - start) / step)
    if not 0 < count <= _LIMIT:
        return None
    return tuple(start + i * step for i in range(count))


def _integer_dtype(node: ast.expr) -> bool:
    text = ast.unparse(node)
    return "int" in text


def _subscript_values(ctx: Context, node: ast.Subscript, depth: int) -> Values | None:
    """`np.r_[0.0, 2]` (a literal row) and `params[0]` of such a row."""
    if isinstance(node.value, ast.Attribute) and node.value.attr == "r_" and ctx.qualname(node.value) == "numpy.r_":
        elts = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
        return _concat([known_values(ctx, e, depth) for e in elts])
    index = p.literal_number(node.slice)
    if not isinstance(index, int):
        return None
    row = _flat_row(ctx, node.value, depth)
    if row is None or not -len(row) <= index < len(row):
        return None
    return (row[index],)


def _flat_row(ctx: Context, expr: ast.AST, depth: int) -> Values | None:
    """The values of a one-dimensional literal row, in order (indexing needs the order)."""
    origin = ctx.origin(expr) if isinstance(expr, ast.Name) else expr
    if isinstance(origin, ast.Call) and ctx.family(origin) in _ARRAY_MAKERS and origin.args:
        origin = origin.args[0]
    if isinstance(origin, ast.Subscript) and isinstance(origin.value, ast.Attribute) and origin.value.attr == "r_":
        pass
    elif not isinstance(origin, (ast.List, ast.Tuple)) or any(isinstance(e, (ast.List, ast.Tuple)) for e in origin.elts):
        return None
    return known_values(ctx, origin, depth)


def _argument_values(ctx: Context, name: ast.Name, arg: ast.arg, depth: int) -> Values | None:
    """The values a nested function's parameter receives from every call in the enclosing function,
    when the function never escapes (it is only ever called by name there)."""
    func = ctx.scope(name)
    if not isinstance(func, (ast.FunctionDef, ast.AsyncFunctionDef)):
        return None
    outer = ctx.scope(func)
    positional = [*func.args.posonlyargs, *func.args.args]
    if not isinstance(outer, (ast.FunctionDef, ast.AsyncFunctionDef)) or arg not in positional or func.decorator_list:
        return None
    index = positional.index(arg)
    uses = [n for n in ast.walk(outer) if isinstance(n, ast.Name) and n.id == func.name and isinstance(n.ctx, ast.Load)]
    calls = [ctx.parent(n) for n in uses]
    if not calls or any(not (isinstance(c, ast.Call) and c.func is u) for c, u in zip(calls, uses)):
        return None  # passed as a value (to a solver, a map): callers we cannot see
    found: list[Values | None] = []
    for call in calls:
        assert isinstance(call, ast.Call)
        if any(isinstance(a, ast.Starred) for a in call.args) or index >= len(call.args):
            return None
        found.append(known_values(ctx, call.args[index], depth - 1))
    return _concat(found)


def _concat(parts: Sequence[Values | None]) -> Values | None:
    if any(part is None for part in parts):
        return None
    return tuple(v for part in parts for v in part)  # type: ignore[union-attr]


def _broadcast(op: Callable[[float, float], float], left: Values | None, right: Values | None) -> Values | None:
    if left is None or right is None:
        return None
    if len(left) == 1 or len(right) == 1 or len(left) == len(right):
        n = max(len(left), len(right))
        return tuple(op(left[i % len(left)], right[i % len(right)]) for i in range(n))
    return None
