"""Static growth facts for series terms: index degree, factorial weight, integer terms, stops."""
from __future__ import annotations

import ast
from collections.abc import Callable

from auditor import patterns as p
from auditor.rule import Context
from auditor.nodes import walk

Loop = ast.For | ast.While
#: maps a local name to the expression it holds inside the loop (or None)
Resolver = Callable[[str], "ast.expr | None"]

_NESTED = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)
#: exact integer functions: their results never round (Python ints)
_INT_FUNCS = frozenset({"math.comb", "math.perm", "math.factorial", "math.gcd", "math.isqrt", "math.lcm"})
_INT_BUILTINS = frozenset({"len", "int", "round"})


def index_degree(expr: ast.AST, idx: set[str], resolve: Resolver | None = None, depth: int = 3) -> float:
    """Polynomial degree of a rational expression in the loop counters (`k / x` -> 1, `x / k` -> -1)."""
    if isinstance(expr, ast.Name):
        if expr.id in idx:
            return 1.0
        value = resolve(expr.id) if resolve is not None and depth > 0 else None
        return index_degree(value, idx, resolve, depth - 1) if value is not None else 0.0
    if isinstance(expr, ast.UnaryOp):
        return index_degree(expr.operand, idx, resolve, depth)
    if isinstance(expr, ast.Call) and isinstance(expr.func, (ast.Name, ast.Attribute)) and len(expr.args) == 1:
        name = expr.func.id if isinstance(expr.func, ast.Name) else expr.func.attr
        if name == "sqrt":
            return index_degree(expr.args[0], idx, resolve, depth) / 2
        if name in ("abs", "float", "fabs"):
            return index_degree(expr.args[0], idx, resolve, depth)
        return 0.0
    if not isinstance(expr, ast.BinOp):
        return 0.0
    left, right = index_degree(expr.left, idx, resolve, depth), index_degree(expr.right, idx, resolve, depth)
    if isinstance(expr.op, ast.Mult):
        return left + right
    if isinstance(expr.op, ast.Div):
        return left - right
    if isinstance(expr.op, ast.Sub) and not (p.names_in(expr.left) & idx) and right <= 1:
        return 0.0  # `n - k` counts down to 0 in a loop of n passes; `mu - (2k-1)**2` does grow
    if isinstance(expr.op, (ast.Add, ast.Sub)):
        return max(left, right)
    if isinstance(expr.op, ast.Pow):
        n = p.literal_number(expr.right)
        return left * n if isinstance(n, (int, float)) else 0.0
    return 0.0


def _linear_coefficient(expr: ast.AST, idx: set[str]) -> float:
    """Coefficient of the counter in an affine argument (`2*k + 1` -> 2)."""
    if isinstance(expr, ast.Name):
        return 1.0 if expr.id in idx else 0.0
    if isinstance(expr, ast.UnaryOp):
        return -_linear_coefficient(expr.operand, idx)
    if isinstance(expr, ast.BinOp):
        left, right = _linear_coefficient(expr.left, idx), _linear_coefficient(expr.right, idx)
        if isinstance(expr.op, ast.Add):
            return left + right
        if isinstance(expr.op, ast.Sub):
            return left - right
        if isinstance(expr.op, ast.Mult):
            lv, rv = p.literal_number(expr.left), p.literal_number(expr.right)
            if isinstance(lv, (int, float)):
                return lv * right
            if isinstance(rv, (int, float)):
                return rv * left
    return 0.0


def factorial_weight(ctx: Context, expr: ast.AST, idx: set[str], resolve: Resolver | None = None, depth: int = 3) -> float:
    """Net factorial growth of a term: `k! / x**k` -> 1, `x**k / k!` -> -1, `(2k)! / (k!)**2` -> 0."""
    if isinstance(expr, ast.Name) and resolve is not None and depth > 0:
        value = resolve(expr.id)
        return factorial_weight(ctx, value, idx, resolve, depth - 1) if value is not None else 0.0
    if isinstance(expr, ast.Call) and expr.args and ctx.family(expr) in ("factorial", "gamma"):
        return _linear_coefficient(expr.args[0], idx)
    if isinstance(expr, ast.Call) and isinstance(expr.func, ast.Name) and expr.func.id in ("factorial", "gamma") and expr.args:
        return _linear_coefficient(expr.args[0], idx)
    if isinstance(expr, ast.UnaryOp):
        return factorial_weight(ctx, expr.operand, idx, resolve, depth)
    if not isinstance(expr, ast.BinOp):
        return 0.0
    left = factorial_weight(ctx, expr.left, idx, resolve, depth)
    right = factorial_weight(ctx, expr.right, idx, resolve, depth)
    return combine_degrees(expr, left, right)


def combine_degrees(expr: ast.BinOp, left: float, right: float) -> float:
    """Growth degree of `left OP right` from its operands' degrees: products add, quotients
    subtract, a literal power scales, anything else keeps the larger."""
    if isinstance(expr.op, ast.Mult):
        return left + right
    if isinstance(expr.op, ast.Div):
        return left - right
    if isinstance(expr.op, ast.Pow):
        n = p.literal_number(expr.right)
        return left * n if isinstance(n, (int, float)) else 0.0
    return max(left, right)


def fixed_point(expr: ast.AST) -> bool:
    """Integer or fixed-point arithmetic (`//`, `>>`, `<<`): not floating-point cancellation."""
    return any(isinstance(n, ast.BinOp) and isinstance(n.op, (ast.FloorDiv, ast.RShift, ast.LShift)) for n in walk(expr))


def is_integer_term(ctx: Context, expr: ast.AST, ints: set[str], depth: int = 3) -> bool:
    """True when every value in the term is an exact Python int (combinatorial sums never round)."""
    if p.is_integer_literal(expr):
        return True
    if isinstance(expr, ast.Name):
        if expr.id in ints:
            return True
        origin = ctx.origin(expr) if hasattr(expr, "lineno") and depth > 0 else expr
        return origin is not expr and is_integer_term(ctx, origin, ints, depth - 1)
    if isinstance(expr, ast.Call):
        if ctx.qualname(expr.func) in _INT_FUNCS:
            return True
        return isinstance(expr.func, ast.Name) and expr.func.id in _INT_BUILTINS
    if isinstance(expr, ast.UnaryOp) and isinstance(expr.op, (ast.USub, ast.UAdd)):
        return is_integer_term(ctx, expr.operand, ints, depth)
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, ast.Pow):
        return is_integer_term(ctx, expr.left, ints, depth)  # an int to an int power stays exact
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.FloorDiv, ast.Mod)):
        return is_integer_term(ctx, expr.left, ints, depth) and is_integer_term(ctx, expr.right, ints, depth)
    return False


def _body_nodes(loop: Loop) -> list[ast.AST]:
    out: list[ast.AST] = []
    stack: list[ast.AST] = [*loop.body]
    while stack:
        node = stack.pop()
        out.append(node)
        stack.extend(c for c in ast.iter_child_nodes(node) if not isinstance(c, _NESTED))
    return out


def _term_family(loop: Loop, names: set[str]) -> set[str]:
    """The term names and every name the loop derives from them (`t_next = t * r`, `prev = t`)."""
    family = set(names)
    assigns = [n for n in _body_nodes(loop) if isinstance(n, ast.Assign)]
    changed = True
    while changed:
        changed = False
        for stmt in assigns:
            if p.names_in(stmt.value) & family:
                for t in stmt.targets:
                    for n in walk(t):
                        if isinstance(n, ast.Name) and n.id not in family:
                            family.add(n.id)
                            changed = True
    return family


def _stop_tests(loop: Loop) -> list[ast.expr]:
    tests = [loop.test] if isinstance(loop, ast.While) else []
    for node in _body_nodes(loop):
        if isinstance(node, ast.If) and any(isinstance(s, (ast.Break, ast.Return, ast.Raise)) for s in node.body):
            tests.append(node.test)
    return tests


def smallest_term_stop(loop: Loop, term_names: set[str], idx: set[str], xnames: set[str]) -> bool:
    """A stop that compares a term with its neighbour (`abs(t_next) > abs(t)`), or the counter with x."""
    family = _term_family(loop, term_names)
    ratios = {  # `r = -k / x`: a test on the ratio itself (`abs(r) >= 1`) finds the smallest term too
        t.id for n in _body_nodes(loop) if isinstance(n, ast.Assign)
        for t in n.targets if isinstance(t, ast.Name) and p.names_in(n.value) & idx and p.names_in(n.value) & xnames
    }
    for test in _stop_tests(loop):
        for cmp in (n for n in walk(test) if isinstance(n, ast.Compare)):
            sides = [cmp.left, *cmp.comparators]
            names = [p.names_in(s) for s in sides]
            if sum(1 for n in names if n & family) >= 2:
                return True
            if any(n and n <= idx for n in names) and any(n & xnames for n in names):
                return True
            if any(n & ratios for n in names):
                return True
    return False


def range_stop(loop: Loop) -> ast.expr | None:
    """The stop argument of `for k in range(...)`, else None."""
    if isinstance(loop, ast.For) and isinstance(loop.iter, ast.Call) and isinstance(loop.iter.func, ast.Name):
        if loop.iter.func.id == "range" and loop.iter.args:
            return loop.iter.args[1] if len(loop.iter.args) >= 2 else loop.iter.args[0]
    return None


def _guard_bound(ctx: Context, loop: Loop, xnames: set[str]) -> float | None:
    """C when the loop only runs for x > C: inside `if x > C:` or after `if x < C: return ...`."""
    for anc in ctx.ancestors(loop):
        if isinstance(anc, ast.If) and any(_contains(s, loop) for s in anc.body):
            c = _lower_bound(anc.test, xnames, above=True)
            if c is not None:
                return c
    func = ctx.scope(loop)
    for stmt in getattr(func, "body", []):
        if getattr(stmt, "lineno", 0) >= loop.lineno:
            break
        if isinstance(stmt, ast.If) and any(isinstance(s, (ast.Return, ast.Raise)) for s in stmt.body):
            c = _lower_bound(stmt.test, xnames, above=False)
            if c is not None:
                return c
    return None


def _contains(tree: ast.AST, node: ast.AST) -> bool:
    return any(n is node for n in walk(tree))


def _lower_bound(test: ast.AST, xnames: set[str], above: bool) -> float | None:
    """For `x > C` (above) or `x < C` (an early exit below C), the constant C."""
    if not isinstance(test, ast.Compare) or len(test.ops) != 1:
        return None
    left, op, right = test.left, test.ops[0], test.comparators[0]
    if isinstance(left, ast.Call) and left.args and isinstance(left.func, ast.Name) and left.func.id == "abs":
        left = left.args[0]
    if not (isinstance(left, ast.Name) and left.id in xnames):
        return None
    value = p.literal_number(right)
    if not isinstance(value, (int, float)):
        return None
    wanted = (ast.Gt, ast.GtE) if above else (ast.Lt, ast.LtE)
    return float(value) if isinstance(op, wanted) else None


def bounded_below_x(ctx: Context, loop: Loop, xnames: set[str]) -> bool | None:
    """True when the term count is tied to x or provably well below it, None when no count is fixed."""
    stop = range_stop(loop)
    if stop is None:
        return None
    if p.names_in(stop) & xnames:
        return True
    count = p.literal_number(stop)
    if not isinstance(count, int):
        return None
    guard = _guard_bound(ctx, loop, xnames)
    return guard is not None and guard >= 2 * count


def integer_items(ctx: Context, target: ast.AST, iterable: ast.AST) -> set[str]:
    """Loop or comprehension names that hold Python ints: enumerate counters, items of an int-filled local list."""
    ints: set[str] = set()
    if isinstance(iterable, ast.Call) and isinstance(iterable.func, ast.Name) and iterable.func.id == "enumerate" \
            and ctx.qualname(iterable.func) is None and iterable.args:
        elts = target.elts if isinstance(target, ast.Tuple) else []
        if len(elts) != 2:
            return ints
        if isinstance(elts[0], ast.Name):
            ints.add(elts[0].id)
        target, iterable = elts[1], iterable.args[0]
    if isinstance(target, ast.Name) and isinstance(iterable, ast.Name) and int_filled_list(ctx, iterable):
        ints.add(target.id)
    return ints


def int_filled_list(ctx: Context, name: ast.Name) -> bool:
    """True when a local list is built from int literals and only ever grows by ints (`xs.append(len(c))`)."""
    scope = ctx.scope(name)
    bindings = ctx.flow(scope).of(name.id)
    if not bindings or any(b.kind != "assign" or not _int_display(ctx, b.value) for b in bindings):
        return False
    for node in walk(scope):
        if isinstance(node, ast.Name) and node.id == name.id and isinstance(node.ctx, ast.Load) \
                and not _int_preserving_use(ctx, node):
            return False
    return True


def _int_display(ctx: Context, value: ast.AST | None) -> bool:
    return isinstance(value, (ast.List, ast.Tuple)) and all(_exact_int(ctx, e) for e in value.elts)


def _exact_int(ctx: Context, expr: ast.AST) -> bool:
    """An int term, excluding round(x, ndigits), which returns a float."""
    rounded = any(isinstance(n, ast.Call) and isinstance(n.func, ast.Name) and n.func.id == "round" and len(n.args) > 1
                  for n in walk(expr))
    return not rounded and is_integer_term(ctx, expr, set())


def _int_preserving_use(ctx: Context, use: ast.Name) -> bool:
    """Reads that cannot put a non-int into the list: `xs.append(int)`, `xs.extend([ints])`, len(xs), xs[i], iteration."""
    parent = ctx.parent(use)
    if isinstance(parent, ast.Attribute) and parent.value is use:
        call = ctx.parent(parent)
        if not isinstance(call, ast.Call) or call.func is not parent or call.keywords or len(call.args) != 1:
            return parent.attr in ("count", "index") and isinstance(call, ast.Call)
        if parent.attr == "append":
            return _exact_int(ctx, call.args[0])
        return parent.attr == "extend" and _int_display(ctx, call.args[0])
    if isinstance(parent, ast.Subscript) and parent.value is use:
        return isinstance(parent.ctx, ast.Load)
    if isinstance(parent, ast.Call) and isinstance(parent.func, ast.Name) and parent.func.id in ("len", "enumerate"):
        return True
    return isinstance(parent, (ast.For, ast.comprehension)) and parent.iter is use
