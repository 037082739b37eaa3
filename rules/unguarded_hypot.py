"""`sqrt(x*x + y*y)` overflows and underflows long before the result does.

The squares leave the double range while the length itself is still representable: for
components above about 1.3e154 x*x is inf and the length comes out inf; below about 1.5e-154
(1e-162 for subnormal squares) the squares vanish and the length is 0 or loses its digits.
hypot scales the components first and is correctly rounded or nearly so in every modern libm.
Python's math.hypot takes any number of components (3.8+); numpy's takes two, so three
components nest: np.hypot(np.hypot(x, y), z). Components the code bounds are not reported: unit
vectors, sines and cosines, moderate constants, and uniform draws scaled by literals.
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.bounded import is_bounded
from auditor.class_constants import literal_numbers
from auditor.draw_ranges import value_range
from auditor.elementary import reads_variables, root_sum, spelled_like, sqrt_argument, square_base, stable_origin

#: constants whose squares stay normal doubles: the squares overflow above about 1.3e154 and leave the
#: normal range below about 1.5e-154 (IEEE 754 binary64 limits; common practice)
_SAFE_CONSTANT = (1e-150, 1e150)

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


def safe_constant(ctx: Context, part: ast.expr) -> bool:
    """A constant the code sets (`delta = 0.1`, a class attribute list) whose square cannot overflow or underflow."""
    values = literal_numbers(ctx, part)
    low, high = _SAFE_CONSTANT
    return values is not None and all(v == 0 or low < abs(v) < high for v in values)


def moderate_draws(ctx: Context, parts: list[ast.expr]) -> bool:
    """Components built from uniform draws and literals (`X[:, 0] *= 100` after `X = rng.uniform(size=...)`)
    whose ranges keep every square finite and the length out of the underflow range: all magnitudes below
    1e150, and every nonzero component at least 1e-150 (then the length is exactly 0 or at least that), or
    one component bounded away from 0 by at least 1e-150."""
    spans = [value_range(ctx, part) for part in parts]
    if any(s is None for s in spans):
        return False
    low, high = _SAFE_CONSTANT
    if any(s.magnitude >= high for s in spans):  # type: ignore[union-attr]
        return False
    return all(s.floor >= low for s in spans) or any(s.excludes_zero and s.floor >= low for s in spans)  # type: ignore[union-attr]


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
        Example("import numpy as np\ndef cutoff():\n    step = 0.1\n    return np.sqrt(step ** 2 + step ** 2)\n", False,
                note="a local literal far from 1e154 and 1e-154: its square cannot overflow or underflow (field trial)"),
        Example("import numpy as np\ndef cutoff():\n    step = 1e200\n    return np.sqrt(step ** 2 + step ** 2)\n", True,
                note="a literal whose square overflows stays flagged"),
        Example("from array_api_compat import array_namespace\ndef _parts(angles, xp):\n"
                "    return xp.sin(angles), xp.cos(angles)\ndef resultant(angles):\n"
                "    xp = array_namespace(angles)\n    s, c = _parts(angles, xp)\n"
                "    return (xp.mean(s) ** 2 + xp.mean(c) ** 2) ** 0.5\n", False,
                note="means of sines and cosines through an array-API namespace and a same-file helper (field trial)"),
        Example("from array_api_compat import array_namespace\ndef _parts(angles, xp):\n"
                "    return xp.sinh(angles), xp.cos(angles)\ndef resultant(angles):\n"
                "    xp = array_namespace(angles)\n    s, c = _parts(angles, xp)\n"
                "    return (xp.mean(s) ** 2 + xp.mean(c) ** 2) ** 0.5\n", True,
                note="a helper returning sinh, which is unbounded: still reported"),
        Example("import numpy as np\nfrom astropy.coordinates.matrix_utilities import rotation_matrix\n"
                "def pole_tilt(lon, x, y):\n"
                "    r = rotation_matrix(lon, 'z') @ rotation_matrix(-y, 'x') @ rotation_matrix(-x, 'y')\n"
                "    a, b = r[..., 0, 0], r[..., 0, 1]\n    return np.arctan2(r[..., 0, 2], np.sqrt(a * a + b * b))\n",
                False, note="entries of a product of rotation matrices are bounded by 1 (field trial)"),
        Example("import numpy as np\nfrom astropy.coordinates.matrix_utilities import rotation_matrix\n"
                "def pole_tilt(lon, gain):\n    r = rotation_matrix(lon, 'z') @ gain\n"
                "    a, b = r[..., 0, 0], r[..., 0, 1]\n    return np.sqrt(a * a + b * b)\n", True,
                note="a rotation times an arbitrary matrix is not orthogonal: still reported"),
        Example("import numpy as np\ndef friedman_like(n, seed):\n    rng = np.random.default_rng(seed)\n"
                "    X = rng.uniform(size=(n, 4))\n    X[:, 0] *= 100\n    X[:, 1] *= 520 * np.pi\n"
                "    X[:, 1] += 40 * np.pi\n    X[:, 3] *= 10\n    X[:, 3] += 1\n"
                "    return (X[:, 0] ** 2 + (X[:, 1] * X[:, 2] - 1 / (X[:, 1] * X[:, 3])) ** 2) ** 0.5\n", False,
                note="uniform draws scaled by literals: every nonzero component lies between 1e-30 and 2e3 (field trial)"),
        Example("import numpy as np\ndef spread(n, seed, scale):\n    rng = np.random.default_rng(seed)\n"
                "    X = rng.uniform(size=(n, 2))\n    X[:, 0] *= scale\n    return np.sqrt(X[:, 0] ** 2 + X[:, 1] ** 2)\n",
                True, "np.hypot(X[:, 0], X[:, 1])", note="a column scaled by a parameter can reach any magnitude"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        radicand = sqrt_argument(ctx, node)
        if radicand is None or self._in_root_difference(ctx, node):
            return
        value = ctx.origin(radicand)
        parts = components(ctx, value)
        if parts is None or all(is_bounded(ctx, part) or safe_constant(ctx, part) for part in parts):
            return  # components within [-1, 1] (a unit vector, sines) or moderate constants: no overflow
        if moderate_draws(ctx, parts):
            return  # scaled uniform draws: neither the squares nor the length can leave the normal range
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
