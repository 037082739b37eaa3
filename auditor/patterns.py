"""Shared AST predicates the rules use ("is this the literal 1?", "what names does it read?")."""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor.nodes import walk
from auditor.rule import Context

Number = int | float | complex


def literal_number(node: ast.AST) -> Number | None:
    """The value of a numeric literal, including a leading unary minus; else None."""
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float, complex)):
        if isinstance(node.value, bool):
            return None
        return node.value
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = literal_number(node.operand)
        if inner is None:
            return None
        return -inner if isinstance(node.op, ast.USub) else inner
    return None


def is_number(node: ast.AST, value: float) -> bool:
    """True for a literal equal to `value` (1, 1.0, 1e0 ...)."""
    v = literal_number(node)
    return v is not None and v == value


def is_one(node: ast.AST) -> bool:
    return is_number(node, 1)


def is_integer_literal(node: ast.AST) -> bool:
    v = literal_number(node)
    return isinstance(v, int)


def names_in(expr: ast.AST) -> set[str]:
    """Free variable names read by an expression (attribute bases included)."""
    return {n.id for n in walk(expr) if isinstance(n, ast.Name) and isinstance(n.ctx, ast.Load)}


def is_negated(node: ast.AST) -> bool:
    """`-x` (a unary minus on a non-literal)."""
    return isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub)


def strip_negation(node: ast.expr) -> tuple[ast.expr, bool]:
    """(-x) -> (x, True); x -> (x, False)."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return node.operand, True
    return node, False


def call_args(node: ast.AST) -> list[ast.expr]:
    """Positional arguments of a call, else []."""
    return list(node.args) if isinstance(node, ast.Call) else []


def single_arg(node: ast.AST) -> ast.expr | None:
    """The lone positional argument of a call with no starred args, else None."""
    if isinstance(node, ast.Call) and len(node.args) == 1 and not isinstance(node.args[0], ast.Starred):
        return node.args[0]
    return None


def is_sub(node: ast.AST) -> bool:
    return isinstance(node, ast.BinOp) and isinstance(node.op, ast.Sub)


def is_add(node: ast.AST) -> bool:
    return isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add)


def is_square(node: ast.AST) -> ast.expr | None:
    """`x**2` or `x*x` (same text twice) -> x; else None."""
    if isinstance(node, ast.BinOp):
        if isinstance(node.op, ast.Pow) and is_number(node.right, 2):
            return node.left
        if isinstance(node.op, ast.Mult) and same_expr(node.left, node.right):
            return node.left
    return None


def same_expr(a: ast.AST, b: ast.AST) -> bool:
    """Structural equality of two expressions, ignoring positions."""
    return ast.dump(a) == ast.dump(b)


def text(ctx: Context, node: ast.AST) -> str:
    """The source text of `node` (falls back to ast.unparse)."""
    segment = ctx.segment(node)
    return segment if segment else ast.unparse(node)


def operand_text(ctx: Context, node: ast.AST) -> str:
    """Source text of a node, parenthesised when it would bind loosely inside a call or product."""
    s = text(ctx, node)
    if isinstance(node, (ast.BinOp, ast.BoolOp, ast.IfExp, ast.Compare, ast.Lambda, ast.UnaryOp)):
        return f"({s})" if not (s.startswith("(") and s.endswith(")")) else s
    return s


def sum_terms(node: ast.expr) -> Iterator[tuple[ast.expr, bool]]:
    """Flatten `a + b - c` into (a, False), (b, False), (c, True): (term, negated)."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        yield from sum_terms(node.left)
        for term, neg in sum_terms(node.right):
            yield term, neg != isinstance(node.op, ast.Sub)
    else:
        yield node, False


def module_alias(ctx: Context, module: str) -> str | None:
    """The local name under which `module` is imported (`np` for numpy), else None."""
    for local, qual in ctx.imports.bindings.items():
        if qual == module:
            return local
    return None


def spelled(ctx: Context, module: str, func: str) -> tuple[str, tuple[str, ...]]:
    """How to spell `module.func` in this file, and the import it needs if any.

    Uses an existing alias (`np.expm1`) or a from-import (`expm1`), else adds `import module`.
    """
    for local, qual in ctx.imports.bindings.items():
        if qual == f"{module}.{func}":
            return local, ()
    alias = module_alias(ctx, module)
    if alias is not None:
        return f"{alias}.{func}", ()
    return f"{module}.{func}", (f"import {module}",)


def callee_module(ctx: Context, call: ast.AST) -> str | None:
    """'numpy' for `np.exp(x)`, 'math' for `exp(x)` after `from math import exp`."""
    if not isinstance(call, ast.Call):
        return None
    q = ctx.qualname(call.func)
    if q is None or "." not in q:
        return None
    return q.rpartition(".")[0]


def is_integer_valued(ctx: Context, expr: ast.AST) -> bool:
    """Counts, sizes and indices: int literals, len(), .size/.shape/.ndim, int(), range loop variables."""
    if is_integer_literal(expr):
        return True
    if isinstance(expr, ast.Call) and isinstance(expr.func, ast.Name) and expr.func.id in ("len", "int", "round", "ord"):
        return True
    if isinstance(expr, ast.Attribute) and expr.attr in ("size", "ndim", "shape", "nbytes", "itemsize"):
        return True
    if isinstance(expr, ast.Subscript) and isinstance(expr.value, ast.Attribute) and expr.value.attr == "shape":
        return True
    if isinstance(expr, ast.Name):
        b = ctx.binding(expr)
        if b is not None and b.kind == "loop" and isinstance(b.value, ast.Call):
            if isinstance(b.value.func, ast.Name) and b.value.func.id in ("range", "enumerate"):
                return True
        if b is not None and b.kind in ("assign",) and b.value is not None and b.value is not expr:
            return is_integer_valued(ctx, b.value) if not isinstance(b.value, ast.Name) else False
    if isinstance(expr, ast.BinOp) and isinstance(expr.op, (ast.Add, ast.Sub, ast.Mult, ast.FloorDiv, ast.Mod)):
        return is_integer_valued(ctx, expr.left) and is_integer_valued(ctx, expr.right)
    return False


def has_free_names(expr: ast.AST) -> bool:
    """True when an expression reads some variable (it is not a constant)."""
    return any(isinstance(n, ast.Name) for n in walk(expr))


# --- shared by the statistics and linear-algebra rules (naive-variance ... normal-equations) ---

#: reductions whose method spelling (`x.sum()`) means the same as the function (`np.sum(x)`)
_REDUCTION_METHODS = ("sum", "mean", "cumsum", "prod", "nansum", "nanmean", "var", "std", "average")
_REDUCTION_SYNONYMS = {"nansum": "sum", "nanmean": "mean", "average": "mean"}


def spelled_qualified(ctx: Context, qualname: str) -> tuple[str, tuple[str, ...]]:
    """Spell a dotted name such as 'numpy.linalg.solve' here, reusing the longest imported prefix.

    `import numpy as np` gives `np.linalg.solve`; `import scipy.linalg as sla` gives `sla.solve`;
    with no usable import it returns the full name and the `import` it needs.
    """
    for local, qual in ctx.imports.bindings.items():
        if qual == qualname:
            return local, ()
    parts = qualname.split(".")
    for cut in range(len(parts) - 1, 0, -1):
        alias = module_alias(ctx, ".".join(parts[:cut]))
        if alias is not None:
            return ".".join([alias, *parts[cut:]]), ()
    return qualname, (f"import {qualname.rpartition('.')[0]}",)


def reduction(ctx: Context, node: ast.AST) -> tuple[str, ast.expr] | None:
    """('sum' | 'mean' | 'cumsum' | ..., data) for `np.sum(x)`, `sum(x)`, `x.sum()`, `statistics.mean(x)`."""
    if not isinstance(node, ast.Call):
        return None
    func = node.func
    qual = ctx.qualname(func)
    if qual in ("statistics.mean", "statistics.fmean"):
        return ("mean", node.args[0]) if node.args else None
    fam = ctx.family(node)
    if fam == "fsum":
        fam = "sum"
    if fam in _REDUCTION_METHODS:
        if fam == "average" and (len(node.args) > 1 or any(k.arg == "weights" for k in node.keywords)):
            return None
        return ((fam if fam != "average" else "mean"), node.args[0]) if node.args else None
    if isinstance(func, ast.Name) and func.id == "sum" and func.id not in ctx.imports.bindings:
        return ("sum", node.args[0]) if node.args else None
    if isinstance(func, ast.Attribute) and func.attr in _REDUCTION_METHODS and qual is None and not node.args:
        return (_REDUCTION_SYNONYMS.get(func.attr, func.attr), func.value)
    return None



def transposed(ctx: Context, node: ast.AST) -> ast.expr | None:
    """A for `A.T`, `A.transpose()`, `np.transpose(A)`, `A.conj().T`, `A.H`, `A.mT`; else None."""
    if isinstance(node, ast.Attribute) and node.attr in ("T", "H", "mT"):
        base = node.value
    elif isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "transpose" \
            and not node.args and ctx.qualname(node.func) is None:
        base = node.func.value
    elif isinstance(node, ast.Call) and (ctx.qualname(node.func) or "").endswith(".transpose") and len(node.args) == 1:
        base = node.args[0]
    else:
        return None
    if isinstance(base, ast.Call) and isinstance(base.func, ast.Attribute) and base.func.attr in ("conj", "conjugate") \
            and not base.args:
        base = base.func.value
    return base


def product_pair(ctx: Context, node: ast.AST) -> tuple[ast.expr, ast.expr] | None:
    """(a, b) for one matrix product `a @ b`, `np.dot(a, b)`, `np.matmul(a, b)` or `a.dot(b)`, else None."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.MatMult):
        return node.left, node.right
    if isinstance(node, ast.Call) and ctx.family(node) in ("dot", "matmul") and len(node.args) == 2 and not node.keywords:
        return node.args[0], node.args[1]
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "dot" \
            and ctx.qualname(node.func) is None and len(node.args) == 1:
        return node.func.value, node.args[0]
    return None


def product_factors(ctx: Context, node: ast.AST) -> list[ast.expr] | None:
    """Flatten a matrix product chain (`@`, `np.dot`, `np.matmul`, `.dot`) into its factors, else None."""
    pair = product_pair(ctx, node)
    if pair is None:
        return None
    out: list[ast.expr] = []
    for part in pair:
        out.extend(product_factors(ctx, part) or [part])
    return out


def gram_base(ctx: Context, node: ast.expr) -> ast.expr | None:
    """A when `node` (or the local it names) is the Gram matrix `A.T @ A` in any product spelling."""
    factors = product_factors(ctx, ctx.origin(node))
    if factors is None or len(factors) != 2:
        return None
    base = transposed(ctx, ctx.origin(factors[0]))
    if base is not None and (same_expr(base, factors[1]) or same_expr(ctx.origin(base), ctx.origin(factors[1]))):
        return base
    return None


def float_eps_value(ctx: Context, node: ast.AST) -> float | None:
    """2**-52 for `np.finfo(float).eps`, `np.finfo(np.float64).eps`, `sys.float_info.epsilon`; else None."""
    if not isinstance(node, ast.Attribute):
        return None
    if node.attr == "epsilon" and ctx.qualname(node.value) == "sys.float_info":
        return 2.0 ** -52
    if node.attr == "eps" and isinstance(node.value, ast.Call) and (ctx.qualname(node.value.func) or "").endswith(".finfo"):
        arg = single_arg(node.value)
        spelled_type = ctx.qualname(arg) if arg is not None else None
        if isinstance(arg, ast.Name) and arg.id == "float" or spelled_type in ("numpy.float64", "numpy.double"):
            return 2.0 ** -52
        if spelled_type in ("numpy.float32", "numpy.single"):
            return 2.0 ** -23
        if spelled_type in ("numpy.float16", "numpy.half"):
            return 2.0 ** -10
    return None


def constant_value(ctx: Context, node: ast.AST, depth: int = 6) -> float | None:
    """The value of a constant expression (literals, machine epsilon, sqrt/cbrt, + - * / **, locals)."""
    if depth <= 0:
        return None
    if isinstance(node, ast.Name):
        origin: ast.expr | None = ctx.origin(node)
        if origin is node:
            origin = parameter_default(ctx, node)
        return None if origin is None or origin is node else constant_value(ctx, origin, depth - 1)
    v = literal_number(node)
    if v is not None:
        return float(v) if not isinstance(v, complex) else None
    eps = float_eps_value(ctx, node)
    if eps is not None:
        return eps
    if isinstance(node, ast.Call) and ctx.family(node) in ("sqrt", "cbrt") and single_arg(node) is not None:
        inner = constant_value(ctx, node.args[0], depth - 1)
        if inner is None or inner < 0:
            return None
        return float(inner ** 0.5 if ctx.family(node) == "sqrt" else inner ** (1 / 3))
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow)):
        a, b = constant_value(ctx, node.left, depth - 1), constant_value(ctx, node.right, depth - 1)
        if a is None or b is None:
            return None
        try:
            ops = {ast.Add: a + b, ast.Sub: a - b, ast.Mult: a * b}
            if isinstance(node.op, ast.Div):
                return a / b
            if isinstance(node.op, ast.Pow):
                result = a ** b
                return float(result) if isinstance(result, (int, float)) else None
            return ops[type(node.op)]
        except (ZeroDivisionError, OverflowError, ValueError):
            return None
    return None


def parameter_default(ctx: Context, name: ast.Name) -> ast.expr | None:
    """The default value of the function parameter `name` reads (`def d(f, x, h=1e-6)`), else None."""
    b = ctx.binding(name)
    if b is None or not isinstance(b.stmt, ast.arg):
        return None
    func = ctx.scope(name)
    if not isinstance(func, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        return None
    args = func.args
    positional = [*args.posonlyargs, *args.args]
    pairs = list(zip(positional[len(positional) - len(args.defaults):], args.defaults))
    pairs += [(a, d) for a, d in zip(args.kwonlyargs, args.kw_defaults) if d is not None]
    return next((d for a, d in pairs if a is b.stmt), None)


_RAISED_PRECISION = ("workdps", "workprec", "extradps", "extraprec")


def in_raised_precision(ctx: Context, node: ast.AST) -> bool:
    """True inside `with mp.workdps(n):` (and kin), or inside a lambda handed to a call that sets the
    precision it runs at (`check(f, lambda x: mpmath.log(x + 1), dps=60)`): arbitrary-precision code."""
    inside_lambda = None
    for anc in ctx.ancestors(node):
        if isinstance(anc, (ast.With, ast.AsyncWith)):
            for item in anc.items:
                call = item.context_expr
                func = call.func if isinstance(call, ast.Call) else None
                name = func.attr if isinstance(func, ast.Attribute) else func.id if isinstance(func, ast.Name) else ""
                if name in _RAISED_PRECISION:
                    return True
        if isinstance(anc, ast.Lambda) and inside_lambda is None:
            inside_lambda = anc
        if inside_lambda is not None and isinstance(anc, ast.Call) and inside_lambda in anc.args \
                and any(k.arg in _PRECISION_KEYWORDS for k in anc.keywords):
            return True
    return False


#: keywords through which a checking harness sets the precision of the functions it is handed
_PRECISION_KEYWORDS = ("dps", "prec", "mp_dps", "working_dps")


def int_bounds(ctx: Context, node: ast.AST, depth: int = 6) -> tuple[int | None, int | None]:
    """(lowest, highest) value an integer expression can take as the code fixes it, None where open.

    Literals, `min(3, n - i)` (at most 3), `k + 1` and `k - 1`, and a name whose every assignment
    in the nearest scope that binds it is such (`nrep = 10`). A parameter is open even with a
    default: a caller may pass any value.
    """
    if depth <= 0:
        return None, None
    v = literal_number(node)
    if isinstance(v, int):
        return v, v
    if isinstance(node, ast.Name):
        return _name_bounds(ctx, node, depth)
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        lo, hi = int_bounds(ctx, node.operand, depth - 1)
        return (None if hi is None else -hi), (None if lo is None else -lo)
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        (a_lo, a_hi), (b_lo, b_hi) = int_bounds(ctx, node.left, depth - 1), int_bounds(ctx, node.right, depth - 1)
        if isinstance(node.op, ast.Sub):
            b_lo, b_hi = (None if b_hi is None else -b_hi), (None if b_lo is None else -b_lo)
        return (None if a_lo is None or b_lo is None else a_lo + b_lo), (None if a_hi is None or b_hi is None else a_hi + b_hi)
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in ("min", "max") \
            and len(node.args) > 1 and not node.keywords and not any(isinstance(a, ast.Starred) for a in node.args):
        lows, highs = zip(*(int_bounds(ctx, a, depth - 1) for a in node.args))
        known_lo, known_hi = [x for x in lows if x is not None], [x for x in highs if x is not None]
        if node.func.id == "min":  # at most any one argument; at least the least of them when all are known
            return (min(known_lo) if len(known_lo) == len(lows) else None), (min(known_hi) if known_hi else None)
        return (max(known_lo) if known_lo else None), (max(known_hi) if len(known_hi) == len(highs) else None)
    return None, None


def _name_bounds(ctx: Context, name: ast.Name, depth: int) -> tuple[int | None, int | None]:
    """Bounds over every assignment of `name` in the nearest scope that binds it (closures included)."""
    scope = ctx.scope(name)
    while not (bindings := ctx.flow(scope).of(name.id)):
        if scope is ctx.tree:
            return None, None
        scope = ctx.scope(scope)
    if any(b.kind not in ("assign", "unpack") or b.value is None for b in bindings):
        return None, None
    found = [int_bounds(ctx, b.value, depth - 1) for b in bindings if b.value is not None]
    lows, highs = [lo for lo, _ in found], [hi for _, hi in found]
    return (None if None in lows else min(lows)), (None if None in highs else max(highs))  # type: ignore[type-var]
