"""Sums accumulated in float32 or float16 lose digits in proportion to the number of terms.

float32 carries about 7 significant digits (unit roundoff 6e-8) and float16 about 3 (5e-4,
with overflow past 65504). A sequential running total in these formats commits one rounding
per term: a float32 accumulator of a million readings near 1.0 can be off in the fourth
digit, and once the total is 2**24 times a term (16.7 million in float32, 2048 in float16)
adding it changes nothing at all. `np.cumsum` is sequential; `np.sum` is pairwise but still
rounds every partial sum to the low format. Storing data in float32 is fine; accumulate it in
float64 (`dtype=np.float64` on the reduction or the accumulator).

Not reported: numpy's `mean`/`average` of float16 data with no `dtype=`, which numpy accumulates
in float32 and rounds once to float16 (the accumulation error stays far below that final
rounding); `math.fsum` and `statistics.mean`/`fmean`, which sum exactly; and reductions over
arrays the source spells out element by element (a scalar or a literal list of at most 16
numbers), where n terms cost at most n - 1 roundings, under one decimal digit beyond storing
the inputs in that format.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import patterns as p
from auditor.nodes import walk

_LOW = {"float32": "float32", "single": "float32", "float16": "float16", "half": "float16", "bfloat16": "bfloat16"}
_LOW_STRINGS = {"float32": "float32", "f4": "float32", "<f4": "float32", "single": "float32",
                "float16": "float16", "f2": "float16", "<f2": "float16", "half": "float16"}
_REDUCTIONS = ("sum", "cumsum", "mean", "nansum", "nanmean", "average")
_ALLOCATORS = ("zeros", "zeros_like", "full", "full_like", "empty", "array", "asarray", "float32", "float16")
_TORCH_CASTS = {"half": "float16", "bfloat16": "bfloat16", "float": "float32"}
#: numpy's _methods._mean sums float16 input in a float32 accumulator when no dtype is given (from memory)
_WIDENING_MEANS = ("mean", "average")
#: reductions that never round partial sums: fsum is correctly rounded, statistics.mean sums exact fractions
_EXACT_SUMS = ("math.fsum", "statistics.mean", "statistics.fmean")
#: at most this many terms: n - 1 roundings stay under one decimal digit beyond the inputs' own rounding
_FEW_TERMS = 16
_SPELLED_OUT = ("array", "asarray", "asanyarray", "ascontiguousarray", "float32", "float16", "half", "single", "tensor")
_SHAPED = ("zeros", "ones", "full", "empty")
_SAME_SIZE = ("astype", "copy", "ravel", "flatten", "reshape", "to", "half", "float", "bfloat16")


def low_dtype(ctx: Context, expr: ast.AST | None) -> str | None:
    """'float32' | 'float16' | 'bfloat16' for np.float32, torch.half, "f4", 'float16' ...; else None."""
    if expr is None:
        return None
    if isinstance(expr, ast.Constant) and isinstance(expr.value, str):
        return _LOW_STRINGS.get(expr.value)
    q = ctx.qualname(expr)
    if q is not None and q.partition(".")[0] in ("numpy", "torch", "jax", "cupy"):
        return _LOW.get(q.rpartition(".")[2])
    return None


def dtype_keyword(call: ast.Call) -> ast.keyword | None:
    return next((k for k in call.keywords if k.arg == "dtype"), None)


def dtype_library(ctx: Context, dtype: ast.AST | None) -> str:
    """'torch' for torch dtypes, else 'numpy' (strings and numpy scalars)."""
    q = ctx.qualname(dtype) if dtype is not None else None
    return "torch" if q is not None and q.startswith("torch.") else "numpy"


def low_array(ctx: Context, expr: ast.expr, depth: int = 3) -> tuple[str, str] | None:
    """(format, 'numpy' | 'torch') of a low-precision array: x.astype(np.float32), np.float32(x), t.half()."""
    expr = ctx.origin(expr)
    if not isinstance(expr, ast.Call) or depth <= 0:
        return None
    func = expr.func
    if isinstance(func, ast.Attribute) and ctx.qualname(func) is None:
        if func.attr in ("astype", "to", "type") and expr.args:
            fmt = low_dtype(ctx, expr.args[0])
            return (fmt, dtype_library(ctx, expr.args[0])) if fmt else None
        if func.attr in ("half", "bfloat16") and not expr.args:
            return _TORCH_CASTS[func.attr], "torch"
        if func.attr in ("copy", "ravel", "flatten", "reshape"):
            return low_array(ctx, func.value, depth - 1)
    fam = ctx.family(expr)
    if fam in ("float32", "float16", "half", "single") and expr.args:
        fmt = _LOW.get(str(fam))
        return (fmt, dtype_library(ctx, func)) if fmt else None
    kw = dtype_keyword(expr)
    if kw is not None and (fam in ("array", "asarray", "zeros", "ones", "full", "empty", "arange", "linspace", "tensor")
                           or (ctx.qualname(func) or "").endswith((".zeros_like", ".ones_like", ".full_like"))):
        fmt = low_dtype(ctx, kw.value)
        return (fmt, dtype_library(ctx, kw.value)) if fmt else None
    return None


def literal_count(ctx: Context, expr: ast.AST, depth: int = 4) -> int | None:
    """How many elements an array holds when the source spells it out: 1.0, [1.0, 2.0], np.array(...) of those."""
    if isinstance(expr, ast.Name):
        origin = ctx.origin(expr)
        return None if origin is expr or depth <= 0 else literal_count(ctx, origin, depth - 1)
    if p.literal_number(expr) is not None:
        return 1
    if isinstance(expr, (ast.List, ast.Tuple)):
        counts = [literal_count(ctx, e, depth) for e in expr.elts]
        return sum(c for c in counts if c is not None) if None not in counts else None
    if not isinstance(expr, ast.Call) or depth <= 0:
        return None
    func = expr.func
    if isinstance(func, ast.Attribute) and ctx.qualname(func) is None and func.attr in _SAME_SIZE:
        return literal_count(ctx, func.value, depth - 1)
    fam = ctx.family(expr)
    if fam in _SPELLED_OUT and expr.args:
        return literal_count(ctx, expr.args[0], depth - 1)
    if fam in _SHAPED and expr.args:
        return shape_count(expr.args[0])
    return None


def shape_count(shape: ast.AST) -> int | None:
    """The element count of a literal shape: 3 or (2, 3)."""
    dims = shape.elts if isinstance(shape, (ast.Tuple, ast.List)) else [shape]
    total = 1
    for d in dims:
        v = p.literal_number(d)
        if not isinstance(v, int) or v < 0:
            return None
        total *= v
    return total


def widened_accumulator(ctx: Context, node: ast.Call, fmt: str, library: str) -> bool:
    """numpy's mean/average of float16 with no dtype: summed in float32, rounded once to float16 (from memory)."""
    if fmt != "float16" or library != "numpy" or dtype_keyword(node) is not None:
        return False
    qual = ctx.qualname(node.func)
    name = qual.rpartition(".")[2] if qual else node.func.attr if isinstance(node.func, ast.Attribute) else None
    return name in _WIDENING_MEANS  # by name: nanmean keeps a float16 accumulator


def accumulator_init(ctx: Context, expr: ast.AST) -> str | None:
    """The low format when `expr` allocates an accumulator: np.float32(0), np.zeros(n, dtype=np.float32)."""
    if not isinstance(expr, ast.Call):
        return None
    fam = ctx.family(expr)
    if fam in ("float32", "float16", "half", "single") and len(expr.args) == 1 and p.literal_number(expr.args[0]) == 0:
        return _LOW.get(str(fam))
    q = ctx.qualname(expr.func) or ""
    if q.rpartition(".")[2] in ("zeros", "zeros_like", "full", "full_like", "empty", "empty_like", "tensor"):
        kw = dtype_keyword(expr)
        return low_dtype(ctx, kw.value) if kw is not None else None
    return None


def float64_spelling(ctx: Context, dtype: ast.expr | None, module: str) -> tuple[str, tuple[str, ...]]:
    """`np.float64` (or torch.float64 / "float64") spelled like the low dtype it replaces."""
    if isinstance(dtype, ast.Constant) and isinstance(dtype.value, str):
        return '"float64"', ()
    root = "torch" if module.startswith("torch") else "numpy"
    return p.spelled(ctx, root, "float64")


def replaced(ctx: Context, node: ast.AST, part: ast.AST, new: str) -> str | None:
    """The source of `node` with the sub-node `part` replaced by `new` (single-line ASCII code only)."""
    whole, piece = p.text(ctx, node), p.text(ctx, part)
    if node.lineno != node.end_lineno or not whole.isascii():  # type: ignore[attr-defined]
        return None
    start = part.col_offset - node.col_offset  # type: ignore[attr-defined]
    if whole[start:start + len(piece)] != piece:
        return None
    return whole[:start] + new + whole[start + len(piece):]


def with_float64_dtype(ctx: Context, call: ast.Call, module: str) -> tuple[str | None, tuple[str, ...]]:
    """The reduction rewritten to accumulate in float64."""
    kw = dtype_keyword(call)
    wide, imports = float64_spelling(ctx, kw.value if kw else None, module)
    if kw is not None:
        return replaced(ctx, call, kw.value, wide), imports
    whole = p.text(ctx, call)
    if not whole.endswith(")"):
        return None, ()
    sep = ", " if call.args or call.keywords else ""
    return f"{whole[:-1]}{sep}dtype={wide})", imports


def accumulated_in_loop(ctx: Context, name: str, after: ast.stmt) -> bool:
    """True when `name` (or an element of it) is added to inside a loop after its allocation."""
    for node in walk(ctx.scope(after)):
        if not isinstance(node, (ast.AugAssign, ast.Assign)) or node.lineno <= after.lineno:
            continue
        if isinstance(node, ast.AugAssign):
            base = node.target.value if isinstance(node.target, ast.Subscript) else node.target
            hit = isinstance(base, ast.Name) and base.id == name and isinstance(node.op, (ast.Add, ast.Sub))
        else:
            v = node.value
            hit = any(isinstance(t, ast.Name) and t.id == name for t in node.targets) and isinstance(v, ast.BinOp) \
                and isinstance(v.op, (ast.Add, ast.Sub)) and isinstance(v.left, ast.Name) and v.left.id == name
        if hit and ctx.enclosing_loops(node):
            return True
    return False


class LowPrecisionAccumulator(Rule):
    id = "low-precision-accumulator"
    title = "sum accumulated in float32 or float16"
    severity = Severity.WARNING
    summary = "float32/float16 accumulators and reductions lose digits with every term; accumulate in float64"
    node_types = (ast.Call,)
    method = (
        "Accumulate in a wider format (extended-precision accumulation): N. J. Higham, Accuracy and Stability of "
        "Numerical Algorithms, 2nd ed., SIAM 2002, sections 4.2-4.3; IEEE 754-2008 binary32/binary16 parameters "
        "(from memory)"
    )
    rewrite_template = "np.sum({x}, dtype=np.float64)"
    examples = (
        Example("import numpy as np\ndef total(a):\n    return np.sum(a, dtype=np.float32)\n", True,
                "np.sum(a, dtype=np.float64)"),
        Example("import numpy as np\ndef total(x):\n    return x.astype(np.float16).sum()\n", True,
                "x.astype(np.float16).sum(dtype=np.float64)"),
        Example("import numpy as np\ndef run(xs):\n    acc = np.zeros(3, dtype=np.float32)\n    for v in xs:\n"
                "        acc += v\n    return acc\n", True, "np.zeros(3, dtype=np.float64)"),
        Example("import numpy as np\ndef ramp(a):\n    b = np.asarray(a, dtype='f4')\n    return np.cumsum(b)\n", True,
                "np.cumsum(b, dtype=np.float64)"),
        Example("import numpy as np\ndef total(a):\n    return np.sum(a.astype(np.float32), dtype=np.float64)\n", False),
        Example("import numpy as np\ndef store(xs):\n    buf = np.zeros(len(xs), dtype=np.float32)\n"
                "    for i, v in enumerate(xs):\n        buf[i] = v\n    return buf\n", False, note="storage, not a sum"),
        Example("import numpy as np\ndef peak(x):\n    return x.astype(np.float32).max()\n", False),
        Example("import numpy as np\ndef gains():\n    g = np.array([0.97, 0.97, 2.0e-8, 2.0e-8, 2.0e-8, 2.0e-8], dtype=np.float32)\n"
                "    return g / g.sum()\n", False,
                note="six numbers spelled out in the source: five roundings, no worse than storing them (field trial)"),
        Example("import numpy as np\nGAIN = np.array(1.0, ndmin=2, dtype=np.float32)\nnp.mean(GAIN)\n", False,
                note="an array built from one scalar literal has one element: nothing accumulates (field trial)"),
        Example("import numpy as np\ndef level(trace):\n    h = trace.astype(np.float16)\n    return h.mean()\n", False,
                note="numpy's mean of float16 sums in a float32 accumulator and rounds once to float16 (field trial)"),
        Example("import numpy as np\ndef level(trace):\n    return np.nanmean(trace.astype(np.float16))\n", True,
                note="nanmean does not widen: it sums float16 in float16"),
        Example("import numpy as np\ndef level(trace):\n    return trace.astype(np.float16).mean(dtype=np.float16)\n", True,
                "trace.astype(np.float16).mean(dtype=np.float64)", note="an explicit float16 dtype is the accumulator"),
        Example("import numpy as np\ndef ramp():\n    x = np.full(4000, 0.1, dtype=np.float32)\n    return x.sum()\n", True,
                "x.sum(dtype=np.float64)", note="a literal shape of 4000 elements is not a handful of terms"),
        Example("import math\nimport numpy as np\ndef total(x):\n    return math.fsum(x.astype(np.float32))\n", False,
                note="fsum rounds once, whatever the input format"),
        Example("import numpy as np\ndef centre(x):\n    return np.average(x.astype(np.float32), axis=0)\n", True,
                note="np.average takes no dtype argument, so no rewrite is offered"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        assert isinstance(node, ast.Call)
        found = p.reduction(ctx, node)
        if found is not None and found[0] in _REDUCTIONS:
            yield from self._reduction(node, ctx, found[0], found[1])
            return
        fmt = accumulator_init(ctx, node)
        parent = ctx.parent(node)
        if fmt is None or not isinstance(parent, ast.Assign) or len(parent.targets) != 1 \
                or not isinstance(parent.targets[0], ast.Name) or not accumulated_in_loop(ctx, parent.targets[0].id, parent):
            return
        module = p.callee_module(ctx, node) or "numpy"
        kw = dtype_keyword(node)
        if kw is not None:
            rewrite, imports = with_float64_dtype(ctx, node, module)
        else:
            wide, imports = float64_spelling(ctx, None, module)
            rewrite = replaced(ctx, node, node.func, wide)
        yield Hit(node, f"a {fmt} accumulator rounds every addition to {self._digits(fmt)} digits and stops growing "
                  f"once the total is 2**{self._bits(fmt)} times a term; allocate it as float64"
                  + (f": {rewrite}" if rewrite else ""), rewrite=rewrite, imports=imports)

    def _reduction(self, node: ast.Call, ctx: Context, kind: str, data: ast.expr) -> Iterator[Hit]:
        kw = dtype_keyword(node)
        if kw is not None:
            fmt, library = low_dtype(ctx, kw.value), dtype_library(ctx, kw.value)
        else:
            fmt, library = low_array(ctx, data) or (None, "numpy")
        if fmt is None or ctx.qualname(node.func) in _EXACT_SUMS or widened_accumulator(ctx, node, fmt, library):
            return
        count = literal_count(ctx, data)
        if count is not None and count <= _FEW_TERMS:
            return  # a handful of spelled-out numbers: the sum is as good as the inputs' own rounding
        builtin = isinstance(node.func, ast.Name) and ctx.qualname(node.func) is None
        module = p.callee_module(ctx, node) or library
        takes_dtype = not (ctx.qualname(node.func) or "").endswith(".average")  # np.average has no dtype argument
        rewrite, imports = with_float64_dtype(ctx, node, module) if takes_dtype and not builtin else (None, ())
        strong = fmt != "float32" or kind == "cumsum" or builtin
        how = "sequentially" if kind == "cumsum" or builtin else "pairwise"
        yield Hit(node, f"this {kind} accumulates {how} in {fmt}, keeping at most {self._digits(fmt)} significant digits "
                  f"of the total; accumulate in float64" + (f": {rewrite}" if rewrite else ""),
                  severity=None if strong else Severity.NOTE, rewrite=rewrite, imports=imports)

    @staticmethod
    def _digits(fmt: str) -> str:
        return {"float32": "about 7", "float16": "about 3", "bfloat16": "about 2"}[fmt]

    @staticmethod
    def _bits(fmt: str) -> int:
        return {"float32": 24, "float16": 11, "bfloat16": 8}[fmt]
