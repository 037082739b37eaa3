"""`sqrt(x*x + y*y)` overflows and underflows long before the result does.

The squares leave the double range while the length itself is still representable: for
components above about 1.3e154 x*x is inf and the length comes out inf; below about 1.5e-154
(1e-162 for subnormal squares) the squares vanish and the length is 0 or loses its digits.
hypot scales the components first and is correctly rounded or nearly so in every modern libm.
Python's math.hypot takes any number of components (3.8+); numpy's takes two, so three
components nest: np.hypot(np.hypot(x, y), z).
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.bounded import is_bounded
from auditor.elementary import reads_variables, root_sum, spelled_like, sqrt_argument, square_base, stable_origin

#: libraries with a hypot, and whether it takes more than two arguments
_HYPOT = {"math": True, "numpy": False, "torch": False, "jax.numpy": False, "cupy": False, "mpmath": False}


def components(ctx: Context, radicand: ast.expr) -> list[ast.expr] | None:
    """[x, y, ...] when the radicand is a sum of two or more squares of variables."""
    terms = alg.signed_terms(radicand)
    if len(terms) < 2 or any(sign < 0 for _, sign in terms):
        return None
    bases = [square_base(ctx, t) for t, _ in terms]
    if any(b is None or not reads_variables(ctx, b) for b in bases):
        return None
    if all(p.is_integer_valued(ctx, b) for b in bases):  # type: ignore[arg-type]
        return None  # integer offsets: the squares are exact and far from overflow
    return bases  # type: ignore[return-value]


def hypot_call(func: str, many: bool, parts: list[ast.expr]) -> ast.expr:
    if many:
        return alg.call(func, *parts)
    out = alg.call(func, parts[0], parts[1])
    for extra in parts[2:]:
        out = alg.call(func, out, extra)
    return out


class UnguardedHypot(Rule):
    id = "unguarded-hypot"
    title = "sqrt of a sum of squares"
    severity = Severity.NOTE
    summary = "sqrt(x*x + y*y): the squares overflow or underflow; use hypot"
    node_types = (ast.Call, ast.BinOp)
    method = (
        "scaled Euclidean norm as in hypot (C99/IEEE 754-2008) and the LAPACK xNRM2 scaling; N. J. Higham, "
        "Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, section 27.8 (from memory)"
    )
    rewrite_template = "math.hypot({x}, {y})"
    examples = (
        Example("import math\ndef dist(dx, dy):\n    return math.sqrt(dx * dx + dy * dy)\n", True, "math.hypot(dx, dy)",
                {"dx": 3e200, "dy": 4e200}),
        Example("import numpy as np\ndef amp(i, q):\n    return np.sqrt(i**2 + q**2)\n", True, "np.hypot(i, q)"),
        Example("import numpy as np\ndef norm3(x, y, z):\n    return np.sqrt(x**2 + y**2 + z**2)\n", True,
                "np.hypot(np.hypot(x, y), z)"),
        Example("from math import sqrt\ndef norm3(x, y, z):\n    return sqrt(x*x + y*y + z*z)\n", True,
                "math.hypot(x, y, z)"),
        Example("import math\ndef dist(dx, dy):\n    return math.hypot(dx, dy)\n", False),
        Example("import math\ndef f(x, y):\n    return math.sqrt(x * x - y * y)\n", False, note="a difference, not a norm"),
        Example("import math\ndef px(row, col):\n    return math.sqrt(len(row) ** 2 + len(col) ** 2)\n", False,
                note="integer counts"),
        # field trial regressions (docs/field-trial.md)
        Example("import erfa\nimport numpy as np\ndef elevation(p):\n    r, u = erfa.pn(p)\n"
                "    return np.sqrt(u[..., 0] ** 2 + u[..., 1] ** 2)\n", False,
                note="components of a unit vector are bounded by 1: the squares cannot overflow (field trial)"),
        Example("import numpy as np\ndef tilt(v):\n    u = v / np.linalg.norm(v, axis=-1, keepdims=True)\n"
                "    return np.sqrt(u[:, 0] ** 2 + u[:, 1] ** 2)\n", False,
                note="a vector divided by its own norm has components within [-1, 1] (field trial)"),
        Example("import numpy as np\ndef radius(lat, lon):\n    x = np.cos(lat) * np.cos(lon)\n"
                "    y = np.cos(lat) * np.sin(lon)\n    return np.sqrt(x**2 + y**2)\n", False,
                note="products of sines and cosines are bounded by 1 (field trial)"),
        Example("import numpy as np\ndef spread(p, q):\n    dx, dy = p - q\n    return np.sqrt(dx * dx + dy * dy)\n",
                True, note="differences of unknown data stay flagged, unpacked or not"),
        Example("import erfa\nimport numpy as np\ndef moved(p, f):\n    r, u = erfa.pn(p)\n    u[..., 0] *= f\n"
                "    return np.sqrt(u[..., 0] ** 2 + u[..., 1] ** 2)\n", True,
                note="a unit vector scaled in place is no longer bounded"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        radicand = sqrt_argument(ctx, node)
        if radicand is None or self._in_root_difference(ctx, node):
            return
        value = ctx.origin(radicand)
        parts = components(ctx, value)
        if parts is None or all(is_bounded(ctx, part) for part in parts):
            return  # components within [-1, 1] (a unit vector, sines): their squares cannot overflow
        module = p.callee_module(ctx, node) or ("numpy" if ctx.imports.imports_any("numpy") else "math")
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if module in _HYPOT and stable_origin(ctx, value, node):
            func, imports = spelled_like(ctx, module, "hypot")
            rewrite = alg.in_place(hypot_call(func, _HYPOT[module], parts))
        fix = rewrite or "a hypot function"
        yield Hit(node, f"the squares overflow to inf for components above about 1e154 and underflow to 0 below "
                  f"1e-154 while the length itself is representable; use {fix}", rewrite=rewrite, imports=imports)

    @staticmethod
    def _in_root_difference(ctx: Context, node: ast.AST) -> bool:
        """`sqrt(x*x + y*y) - x`: sqrt-difference reports the worse loss; its rewrite keeps this root for later."""
        parent = ctx.parent(node)
        if not (isinstance(parent, ast.BinOp) and isinstance(parent.op, ast.Sub)):
            return False
        shape = root_sum(ctx, parent)
        return shape is not None and shape.other_sign != shape.root_sign
