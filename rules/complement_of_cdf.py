"""`1 - F(x)` for a distribution function F throws away the upper tail.

In the upper tail F(x) is 1 minus a small probability, and doubles near 1 are spaced 1.1e-16
apart: the complement keeps only the digits of the tail probability above that spacing. For the
standard normal, 1 - cdf(5) keeps about nine digits, and beyond 8.3 the cdf rounds to 1 and the
"probability" is 0 (the true value is 5e-17 and falls fast). p-values, false-alarm rates and
reliability figures live exactly there. Every library that offers the cdf offers its complement
computed directly: the survival function `.sf` of scipy.stats distributions (`.ccdf` for the newer
distribution classes such as `stats.Normal`), erfc for erf,
gammaincc for gammainc, the `...c` twins of scipy.special's cdfs, and ndtr(-x) for ndtr(x).
`1 + erf(x)` is the same loss in the lower tail (x -> -inf) and equals erfc(-x).
"""
from __future__ import annotations

import ast
from collections.abc import Iterator

from auditor import Context, Example, Hit, Rule, Severity
from auditor import algebra as alg
from auditor import patterns as p
from auditor.class_constants import literal_numbers
from auditor.elementary import difference_operands, reads_variables, spelled_like, stable_origin
from auditor.literal_tails import NOT_SMALL, special_value, stats_survival

#: scipy.special distribution functions and their complements
_TWINS = {"gammainc": "gammaincc", "betainc": "betaincc", "chdtr": "chdtrc", "pdtr": "pdtrc", "bdtr": "bdtrc",
          "fdtr": "fdtrc", "gdtr": "gdtrc", "nbdtr": "nbdtrc", "erf": "erfc"}
_TWINS.update({v: k for k, v in list(_TWINS.items())})
#: symmetric distributions: the complement is the cdf at the mirrored argument (which argument)
_MIRRORED = {"ndtr": 0, "stdtr": 1}
_HAS_ERFC = ("math", "scipy.special", "mpmath", "torch", "torch.special", "jax.scipy.special")
#: methods that evaluate a distribution function (scipy.stats and the many libraries that follow it)
_DISTRIBUTION_METHODS = ("cdf", "sf", "ccdf")
#: checks that compare two values besides the `assert...` family (numpy API)
_CHECKS = ("isclose", "allclose", "array_equal")


def complement_method(ctx: Context, receiver: ast.expr) -> str | None:
    """'sf' for `norm`, `stats.gamma`, a frozen `stats.norm(0, 2)` or a local holding one; 'ccdf' for the
    newer distribution classes (`stats.Normal(mu=0, sigma=1)`); None otherwise (multivariate laws have neither)."""
    for candidate in (receiver, ctx.origin(receiver)):
        if isinstance(candidate, ast.Call):
            candidate = candidate.func
        name = ctx.qualname(candidate) or ""
        if name.startswith("scipy.stats."):
            last = name.rpartition(".")[2]
            if last.startswith("multivariate") or "." in name[len("scipy.stats."):]:
                return None
            return "ccdf" if last[:1].isupper() else "sf"
    return None


def complement(ctx: Context, value: ast.expr) -> tuple[ast.expr, tuple[str, ...]] | None:
    """The directly computed complement 1 - value, when value is a known distribution function."""
    if not isinstance(value, ast.Call):
        return _half_erf(ctx, value)
    if not any(reads_variables(ctx, a) for a in [*value.args, *(k.value for k in value.keywords)]):
        return None  # a constant: nothing varies into the tail
    func = value.func
    method = complement_method(ctx, func.value) if isinstance(func, ast.Attribute) and func.attr == "cdf" else None
    if isinstance(func, ast.Attribute) and method is not None:
        return ast.Call(ast.Attribute(func.value, method), value.args, value.keywords), ()
    family, module = ctx.family(value), p.callee_module(ctx, value) or ""
    if family in ("erf", "erfc") and module in _HAS_ERFC and p.single_arg(value) is not None:
        name, imports = spelled_like(ctx, module, _TWINS[family])
        return alg.call(name, value.args[0]), imports
    if module != "scipy.special" or value.keywords or any(isinstance(a, ast.Starred) for a in value.args):
        return None
    if family in _TWINS:
        name, imports = spelled_like(ctx, module, _TWINS[family])
        return alg.call(name, *value.args), imports
    if family in _MIRRORED and len(value.args) == _MIRRORED[family] + 1:
        args = list(value.args)
        args[-1] = alg.neg(args[-1])
        return ast.Call(value.func, args, []), ()
    return None


def _half_erf(ctx: Context, value: ast.expr) -> tuple[ast.expr, tuple[str, ...]] | None:
    """0.5 * erfc(z) for the normal cdf written as 0.5 * (1 + erf(z)) or (1 + erf(z)) / 2."""
    if not isinstance(value, ast.BinOp):
        return None
    if isinstance(value.op, ast.Mult) and p.is_number(value.left, 0.5):
        half, inner = value.left, value.right
    elif isinstance(value.op, ast.Mult) and p.is_number(value.right, 0.5):
        half, inner = value.right, value.left
    elif isinstance(value.op, ast.Div) and p.is_number(value.right, 2):
        half, inner = alg.num(0.5), value.left
    else:
        return None
    erf = one_plus_erf(ctx, inner)
    if erf is None:
        return None
    module = p.callee_module(ctx, erf) or "math"
    name, imports = spelled_like(ctx, module, "erfc")
    return alg.binop(half, ast.Mult(), alg.call(name, erf.args[0])), imports


def one_plus_erf(ctx: Context, node: ast.expr) -> ast.Call | None:
    """The erf call of `1 + erf(z)` or `erf(z) + 1`, else None."""
    terms = alg.signed_terms(node)
    if len(terms) != 2 or any(s < 0 for _, s in terms):
        return None
    (a, _), (b, _) = terms
    call = b if p.is_one(a) else a if p.is_one(b) else None
    arg = p.single_arg(call) if isinstance(call, ast.Call) else None
    if isinstance(call, ast.Call) and ctx.family(call) == "erf" and arg is not None and reads_variables(ctx, arg) \
            and (p.callee_module(ctx, call) or "") in _HAS_ERFC:
        return call
    return None


def tests_identity(ctx: Context, node: ast.AST) -> bool:
    """`assert_allclose(dist.sf(x), 1 - dist.cdf(x))`, `1 - gammaincc(a, x) == ref` with ref = gammainc(a, x):
    the code checks a complement identity, and the rewrite would compare a function with itself."""
    parent = ctx.parent(node)
    if isinstance(parent, ast.Compare):
        operands = [parent.left, *parent.comparators]
    elif isinstance(parent, ast.Call) and any(a is node for a in parent.args[:2]) and _is_check(parent):
        operands = list(parent.args[:2])
    else:
        return False
    return any(_distribution_value(ctx, ctx.origin(o)) for o in operands if o is not node)


def _is_check(call: ast.Call) -> bool:
    func = call.func
    name = func.id if isinstance(func, ast.Name) else func.attr if isinstance(func, ast.Attribute) else ""
    return "assert" in name.lower() or name in _CHECKS


def _distribution_value(ctx: Context, expr: ast.expr) -> bool:
    """A distribution function or its complement evaluated: `d.sf(x)`, `d.cdf(x)`, `gammainc(a, x)`, `erfc(z)`."""
    if not isinstance(expr, ast.Call):
        return False
    if isinstance(expr.func, ast.Attribute) and expr.func.attr in _DISTRIBUTION_METHODS:
        return True
    family, module = ctx.family(expr), p.callee_module(ctx, expr) or ""
    return (family in _TWINS or family in _MIRRORED) and (module == "scipy.special" or module in _HAS_ERFC)


def _not_small_at_literals(ctx: Context, value: ast.expr) -> bool:
    """True when F and its arguments are constants the code sets and the complement there is at least
    NOT_SMALL (`xx = [0.95, 1.0, 1.1]; 1 - chi2(1).cdf(xx)`): nothing sits in the tail."""
    value = ctx.origin(value)
    if not isinstance(value, ast.Call) or any(isinstance(a, ast.Starred) for a in value.args):
        return False
    args = [literal_numbers(ctx, a) for a in value.args]
    keywords = {k.arg: literal_numbers(ctx, k.value) for k in value.keywords}
    if not args or any(a is None for a in args) or any(k is None or v is None for k, v in keywords.items()):
        return False
    smallest = _literal_complement(ctx, value, args, keywords)  # type: ignore[arg-type]
    return smallest is not None and smallest >= NOT_SMALL


def _literal_complement(ctx: Context, value: ast.Call, args: list[tuple[float, ...]],
                        keywords: dict[str, tuple[float, ...]]) -> float | None:
    func = value.func
    if isinstance(func, ast.Attribute) and func.attr == "cdf":
        frozen = ctx.origin(func.value)
        params: list[tuple[float, ...]] = []
        if isinstance(frozen, ast.Call):  # stats.chi2(1).cdf(x) is stats.chi2.cdf(x, 1)
            params = [literal_numbers(ctx, a) for a in frozen.args]  # type: ignore[misc]
            more = {k.arg: literal_numbers(ctx, k.value) for k in frozen.keywords}
            if any(a is None for a in params) or any(k is None or v is None for k, v in more.items()):
                return None
            keywords = {**keywords, **more}  # type: ignore[dict-item]
            frozen = frozen.func
        name = ctx.qualname(frozen) or ""
        if not name.startswith("scipy.stats.") or name.count(".") != 2:
            return None
        return stats_survival(name.rpartition(".")[2], args[0], [*params, *args[1:]], keywords)
    family = ctx.family(value)
    if keywords or (p.callee_module(ctx, value) or "") not in ("scipy.special", "math") or family not in _TWINS:
        return None
    return special_value(_TWINS[family], args)


class ComplementOfCdf(Rule):
    id = "complement-of-cdf"
    title = "complement of a distribution function"
    severity = Severity.WARNING
    summary = "1 - cdf(x): the upper tail rounds away; use the survival function (sf, erfc, ...)"
    node_types = (ast.BinOp, ast.AugAssign)
    method = (
        "survival functions and complementary error functions evaluated directly, as in W. J. Cody, Rational "
        "Chebyshev approximations for the error function, Math. Comp. 23, 1969, and the scipy.stats `sf` "
        "methods; complement identities from Abramowitz & Stegun 7.1.2 and 26.2.5 (from memory)"
    )
    rewrite_template = "{dist}.sf({x})"
    examples = (
        Example("from scipy.stats import norm\ndef p_value(z):\n    return 1 - norm.cdf(z)\n", True, "norm.sf(z)",
                {"z": 7.0}),
        Example("from scipy import stats\ndef tail(x, k):\n    d = stats.gamma(k, scale=2.0)\n    p = d.cdf(x)\n"
                "    return 1.0 - p\n", True, "d.sf(x)"),
        Example("import scipy.special as sc\ndef miss(z):\n    return 1.0 - sc.ndtr(z)\n", True, "sc.ndtr(-z)"),
        Example("import math\ndef q(z):\n    return 1 - 0.5 * (1 + math.erf(z / math.sqrt(2)))\n", True,
                "0.5 * math.erfc(z / math.sqrt(2))"),
        Example("from math import erf\ndef lower(z):\n    return 0.5 * (1.0 + erf(z))\n", True, "math.erfc(-z)"),
        Example("from scipy.special import gammainc\ndef upper(a, x):\n    return 1 - gammainc(a, x)\n", True,
                "scipy.special.gammaincc(a, x)"),
        Example("from scipy.stats import norm\ndef p_value(z):\n    return norm.sf(z)\n", False),
        Example("from scipy.stats import norm\ndef f(z):\n    return 1 - norm.pdf(z)\n", False, note="a density, not a cdf"),
        Example("import numpy as np\ndef f(x):\n    return 1 - np.exp(-x)\n", False, note="the exp-minus-one rule's pattern"),
        Example("def f(model, x):\n    return 1 - model.cdf(x)\n", False, note="not known to be a scipy.stats distribution"),
        # field trial regressions (docs/field-trial.md)
        Example("from numpy.testing import assert_allclose\nfrom scipy import stats\ndef test_counts(k):\n"
                "    d = stats.poisson(3.0)\n    assert_allclose(d.sf(k), 1 - d.cdf(k))\n", False,
                note="a test of the identity sf = 1 - cdf: the rewrite would compare sf with itself (field trial)"),
        Example("from numpy.testing import assert_allclose\nfrom scipy import special\ndef test_upper(a, x):\n"
                "    ref = special.gammainc(a, x)\n    assert_allclose(1 - special.gammaincc(a, x), ref)\n", False,
                note="1 - gammaincc checked against gammainc: the identity is what is tested (field trial)"),
        Example("from numpy.testing import assert_allclose\nfrom scipy.stats import norm\ndef test_p(z, expected):\n"
                "    assert_allclose(1 - norm.cdf(z), expected)\n", True,
                note="compared with data, not with a distribution function: the tail loss is real"),
        Example("from scipy import stats\nclass TestDetector:\n    @classmethod\n    def setup_class(cls):\n"
                "        cls.levels = [0.95, 1.0, 1.1]\n    def test_upper(self):\n        d = stats.chi2(1)\n"
                "        return 1 - d.cdf(self.levels)\n", False,
                note="points set as literals in setup_class, complement about 0.3 there: no tail (field trial)"),
        Example("from scipy import stats\nclass TestDetector:\n    @classmethod\n    def setup_class(cls):\n"
                "        cls.levels = [30.0, 40.0]\n    def test_upper(self):\n        d = stats.chi2(1)\n"
                "        return 1 - d.cdf(self.levels)\n", True,
                note="literal points deep in the upper tail (complement below 1e-7): still reported"),
    )

    def check(self, node: ast.AST, ctx: Context) -> Iterator[Hit]:
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
            yield from self._lower_tail(node, ctx)
            return
        ops = difference_operands(ctx, node)
        if ops is None or not p.is_one(ops.left_written if not ops.aug else ops.left):
            return
        found = complement(ctx, ops.right)
        if found is None or tests_identity(ctx, node) or _not_small_at_literals(ctx, ops.right):
            return
        rewrite: str | None = None
        imports: tuple[str, ...] = ()
        if not ops.aug and stable_origin(ctx, ops.right, node):
            rewrite, imports = alg.in_place(found[0]), found[1]
        yield Hit(node, "in the upper tail the cdf rounds to 1, so this keeps only the tail's digits above 1.1e-16 "
                  f"(about nine at 5 sigma, none beyond 8.3 sigma); use {rewrite or 'the survival function'}",
                  rewrite=rewrite, imports=imports)

    def _lower_tail(self, node: ast.BinOp, ctx: Context) -> Iterator[Hit]:
        erf = one_plus_erf(ctx, node)
        if erf is None or self._inside_complement(node, ctx) or tests_identity(ctx, node):
            return
        module = p.callee_module(ctx, erf) or "math"
        name, imports = spelled_like(ctx, module, "erfc")
        rewrite = alg.in_place(alg.call(name, alg.neg(erf.args[0])))
        yield Hit(node, f"erf(z) rounds to -1 in the lower tail, so 1 + erf(z) keeps only the digits above 1.1e-16 "
                  f"(none below z = -5.9); use {rewrite}", rewrite=rewrite, imports=imports)

    @staticmethod
    def _inside_complement(node: ast.AST, ctx: Context) -> bool:
        """`1 - 0.5 * (1 + erf(z))`: the outer complement is the finding; do not report the inner sum too."""
        for anc in ctx.ancestors(node):
            if isinstance(anc, ast.BinOp) and isinstance(anc.op, ast.Sub):
                return p.is_one(anc.left)
            if not (isinstance(anc, ast.BinOp) and isinstance(anc.op, (ast.Mult, ast.Div))):
                return False
        return False
