"""Statistics, summation and linear-algebra rules: alias and data-flow forms beyond each rule's examples,
and the numbers behind their messages and rewrites checked against outside references."""
from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
import scipy.special

from auditor import Config, scan_source


def findings(code: str, rule: str):
    report = scan_source(code, "case.py", Config(only=frozenset({rule})))
    assert not report.errors, report.errors
    return [f for f in report.findings if f.rule == rule]


def rewrites(code: str, rule: str) -> set[str]:
    return {f.rewrite.text for f in findings(code, rule) if f.rewrite is not None}


def rewritten(code: str, rule: str) -> str:
    """The module with the single finding's span replaced by its rewrite (and its imports added)."""
    (f,) = findings(code, rule)
    assert f.rewrite is not None
    lines = code.splitlines(keepends=True)
    head = lines[f.span.line - 1][: f.span.column - 1]
    tail = lines[f.span.end_line - 1][f.span.end_column - 1 :]
    body = "".join(lines[: f.span.line - 1]) + head + f.rewrite.text + tail + "".join(lines[f.span.end_line :])
    return "".join(f"{imp}\n" for imp in f.rewrite.imports) + body


def run(code: str, name: str, *args):
    """Execute a test snippet (test data, never scanned code) and call one of its functions."""
    space: dict = {}
    exec(compile(code, "<case>", "exec"), space)  # noqa: S102 - the snippet is written in this file
    return space[name](*args)


# -- naive-variance ---------------------------------------------------------------------------

SHIFTED = np.array([4.0, 7.0, 13.0, 16.0]) + 1e9  # classic shifted-data example, population variance 22.5 (from memory)


@pytest.mark.parametrize("code", [
    "import numpy\ndef f(x):\n    return numpy.mean(x * x) - numpy.mean(x) * numpy.mean(x)\n",
    "from numpy import mean, square\ndef f(x):\n    return mean(square(x)) - square(mean(x))\n",
    "import numpy as np\ndef f(x):\n    e2 = np.average(x ** 2)\n    e1 = np.average(x)\n    return e2 - e1 ** 2\n",
    "def f(x):\n    n = len(x)\n    return sum(v ** 2 for v in x) / n - (sum(x) / n) ** 2\n",
    "def f(x):\n    s = s2 = 0.0\n    for i in range(len(x)):\n        s += x[i]\n        s2 += x[i] ** 2\n"
    "    n = len(x)\n    return (s2 - s * s / n) / (n - 1)\n",
])
def test_naive_variance_spellings(code):
    assert findings(code, "naive-variance")


def test_naive_variance_rewrite_recovers_the_shifted_example():
    code = "import numpy as np\ndef f(x):\n    return np.mean(x**2) - np.mean(x)**2\n"
    naive = run(code, "f", SHIFTED)
    fixed = run(rewritten(code, "naive-variance"), "f", SHIFTED)
    assert abs(naive - 22.5) > 1.0  # the one-pass form is wrong here (cancellation of 1e18-sized terms)
    assert fixed == pytest.approx(22.5, rel=1e-12)


def test_textbook_sum_form_rewrite_gives_the_sample_variance():
    # (4, 7, 13, 16) shifted by 1e9 has sample variance 30 (from memory); the one-pass sum form misses it
    code = ("def f(xs):\n    n = len(xs)\n    s = sum(xs)\n    sq = sum(v * v for v in xs)\n"
            "    return (sq - s**2 / n) / (n - 1)\n")
    data = [float(v) for v in SHIFTED]
    assert abs(run(code, "f", data) - 30.0) > 1.0
    assert run(rewritten(code, "naive-variance"), "f", data) == pytest.approx(30.0, rel=1e-12)


def test_covariance_rewrite_matches_reference():
    code = "import numpy as np\ndef f(x, y):\n    return np.mean(x * y) - np.mean(x) * np.mean(y)\n"
    y = SHIFTED[::-1].copy()
    fixed = run(rewritten(code, "naive-variance"), "f", SHIFTED, y)
    with mpmath.workdps(50):  # reference: exact population covariance, mpmath 50 digits
        xs, ys = [mpmath.mpf(float(v)) for v in SHIFTED], [mpmath.mpf(float(v)) for v in y]
        mx, my = sum(xs) / 4, sum(ys) / 4
        ref = float(sum((a - mx) * (b - my) for a, b in zip(xs, ys)) / 4)
    assert fixed == pytest.approx(ref, rel=1e-12)


def test_naive_variance_leaves_unrelated_differences():
    assert not findings("import numpy as np\ndef f(x, c):\n    return np.mean(x**2) - c**2\n", "naive-variance")
    assert not findings("import numpy as np\ndef f(x):\n    return np.mean(x**2) - np.mean(x**2)\n", "naive-variance")


# -- log-sum-exp ------------------------------------------------------------------------------

@pytest.mark.parametrize("code", [
    "import numpy\ndef f(v):\n    return numpy.log(numpy.exp(v).sum())\n",
    "import math\ndef f(v):\n    total = math.fsum([math.exp(a) for a in v])\n    return math.log(total)\n",
    "import torch\ndef f(v):\n    return torch.log(torch.sum(torch.exp(v)))\n",
    "import numpy as np\ndef f(v):\n    e = np.exp(v)\n    return e / np.sum(e)\n",
])
def test_log_sum_exp_spellings(code):
    assert findings(code, "log-sum-exp")


@pytest.mark.parametrize("code", [
    "import numpy as np\ndef f(v):\n    return np.log(np.sum(np.exp(v - v.max())))\n",
    "import math\ndef f(v):\n    m = max(v)\n    return m + math.log(sum(math.exp(a - m) for a in v))\n",
    "import numpy as np\ndef f(v, w):\n    return np.exp(v) / np.sum(np.exp(w))\n",
])
def test_log_sum_exp_clean(code):
    assert not findings(code, "log-sum-exp")


LARGE = [1000.0, 1000.0, 999.0]


def _lse_reference(values):
    with mpmath.workdps(40):  # reference: mpmath, 40 digits
        return float(mpmath.log(mpmath.fsum(mpmath.exp(mpmath.mpf(v)) for v in values)))


@pytest.mark.parametrize("code", [
    "import numpy as np\ndef f(v):\n    return np.log(np.sum(np.exp(v)))\n",
    "import math\ndef f(v):\n    return math.log(sum(math.exp(a) for a in v))\n",
    "import numpy as np\nimport scipy.special\ndef f(v):\n    return np.log(np.sum(np.exp(v)))\n",
])
def test_log_sum_exp_rewrite_is_finite_and_exact(code):
    fixed = run(rewritten(code, "log-sum-exp"), "f", np.array(LARGE) if "numpy" in code else LARGE)
    assert fixed == pytest.approx(_lse_reference(LARGE), rel=1e-14)
    assert fixed == pytest.approx(scipy.special.logsumexp(LARGE), rel=1e-14)  # scipy.special as a second reference


@pytest.mark.parametrize("code", [
    "import math\ndef f(a, b):\n    return math.log(math.exp(a) + math.exp(b))\n",
    "import numpy as np\ndef f(a, b):\n    return np.log(np.exp(a) + np.exp(b))\n",
])
def test_two_term_log_sum_exp_rewrite(code):
    fixed = run(rewritten(code, "log-sum-exp"), "f", 1000.0, 999.0)
    assert fixed == pytest.approx(_lse_reference([1000.0, 999.0]), rel=1e-15)
    assert not findings("import math\ndef f(x):\n    return math.log(1 + math.exp(x))\n", "log-sum-exp")
    through_local = "import math\ndef f(a, b):\n    s = math.exp(a) + math.exp(b)\n    return math.log(s)\n"
    assert rewrites(through_local, "log-sum-exp") == {"max(a, b) + math.log1p(math.exp(-abs(a - b)))"}


def test_softmax_rewrite_matches_scipy():
    code = "import numpy as np\ndef f(v):\n    e = np.exp(v)\n    return e / e.sum()\n"
    v = np.array([800.0, 799.0, -5.0])
    fixed = run(rewritten(code, "log-sum-exp"), "f", v)
    np.testing.assert_allclose(fixed, scipy.special.softmax(v), rtol=1e-14)


# -- naive-accumulation and step-accumulation -------------------------------------------------

def test_naive_accumulation_rewrite_gives_the_correctly_rounded_sum():
    code = "def f(values):\n    s = 0.0\n    for v in values:\n        s += v\n    return s\n"
    values = [1e16, 1.0, -1e16] * 3  # exact sum 3.0; left-to-right float sum gives 2.0 (common practice)
    assert run(code, "f", values) != 3.0
    assert run(rewritten(code, "naive-accumulation"), "f", values) == 3.0


@pytest.mark.parametrize("code", [
    "def f(xs):\n    s = 0.0\n    for v in xs:\n        s += v\n",  # never read after the loop
    "def f(xs):\n    s = 0.0\n    for k in range(4):\n        s += xs[k]\n    return s\n",  # short fixed loop
    "def f(xs):\n    words = []\n    for v in xs:\n        words += [str(v)]\n    return words\n",
    "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s += t\n        t = -t * x / k\n    return s\n",
    "def f(rows):\n    total = 0\n    for r in rows:\n        total += r.count\n    return total\n",
])
def test_naive_accumulation_quiet_cases(code):
    assert not findings(code, "naive-accumulation")


def test_step_accumulation_rewrite_lands_on_the_grid():
    code = "def f(n, dt):\n    t = 0.0\n    out = []\n    for i in range(n):\n        t += dt\n        out.append(t)\n    return out\n"
    assert run(code, "f", 10, 0.1)[-1] == 0.9999999999999999  # 0.1 added ten times (common practice)
    fixed = run(rewritten(code, "step-accumulation"), "f", 10, 0.1)
    assert fixed[-1] == 1.0 and fixed[2] == 3 * 0.1


@pytest.mark.parametrize(("code", "expected"), [
    ("def f(xs, t0, dt):\n    t = t0\n    for i, x in enumerate(xs):\n        t -= dt\n        x.at(t)\n", "t = t0 - (i + 1) * dt"),
    ("def f(xs, dt):\n    t = 0.0\n    for k, x in enumerate(xs, start=1):\n        t = t + dt\n        x.at(t)\n", "t = k * dt"),
])
def test_step_accumulation_counted_rewrites(code, expected):
    assert rewrites(code, "step-accumulation") == {expected}


def test_step_accumulation_attribute_clock_without_rewrite():
    code = "class Sim:\n    def run(self, n):\n        for _ in range(n):\n            self.t += self.dt\n            self.log(self.t)\n"
    (f,) = findings(code, "step-accumulation")
    assert f.rewrite is None


def test_step_accumulation_while_guard_is_a_warning():
    code = "def f(t_end):\n    t = 0.0\n    n = 0\n    while t < t_end:\n        t += 0.1\n        n += 1\n    return n\n"
    (f,) = findings(code, "step-accumulation")
    assert f.severity.value == "warning"
    assert run(code, "f", 1.0) == 11  # one step too many: the drifting t stays below 1.0 after ten steps


# -- finite-difference-step -------------------------------------------------------------------

@pytest.mark.parametrize(("h", "flagged"), [(1e-12, True), (1e-15, True), (1e-8, False), (1e-6, False), (1e-2, True)])
def test_forward_step_thresholds(h, flagged):
    code = f"import math\ndef d(x):\n    h = {h!r}\n    return (math.sin(x + h) - math.sin(x)) / h\n"
    assert bool(findings(code, "finite-difference-step")) == flagged


def test_forward_step_message_matches_the_measured_error():
    code = "import math\ndef d(x):\n    h = 1e-12\n    return (math.sin(x + h) - math.sin(x)) / h\n"
    (f,) = findings(code, "finite-difference-step")
    assert "about 4 correct digits" in f.message
    err = abs(run(code, "d", 1.0) - math.cos(1.0)) / math.cos(1.0)  # d/dx sin = cos (DLMF 4.20.1)
    assert 1e-6 < err < 1e-2  # a few digits survive, as the message says; the best step keeps about 8


def test_central_and_vector_steps():
    central = "import numpy as np\ndef g(f, x, e):\n    h = 1e-10\n    return (f(x + h * e) - f(x - h * e)) / (2.0 * h)\n"
    assert findings(central, "finite-difference-step")
    good = "def g(f, x):\n    h = 6e-6\n    return (f(x + h) - f(x - h)) / (h + h)\n"
    assert not findings(good, "finite-difference-step")


# -- low-precision-accumulator ----------------------------------------------------------------

@pytest.mark.parametrize(("code", "expected"), [
    ("import numpy as np\ndef f(a):\n    return np.nansum(a, dtype='float16')\n", 'np.nansum(a, dtype="float64")'),
    ("import numpy as np\ndef f(a):\n    b = a.astype('f4')\n    return b.cumsum()\n", "b.cumsum(dtype=np.float64)"),
    ("import numpy as np\ndef f(a):\n    return np.float32(a).mean()\n", "np.float32(a).mean(dtype=np.float64)"),
])
def test_low_precision_rewrites(code, expected):
    assert rewrites(code, "low-precision-accumulator") == {expected}


def test_float32_cumsum_loses_digits_that_float64_keeps():
    data = np.full(10**6, 0.1, dtype=np.float32)
    code = "import numpy as np\ndef f(a):\n    return np.cumsum(a)[-1]\n"
    low = run(code, "f", data)
    code_src = "import numpy as np\ndef f(a):\n    return np.cumsum(a.astype(np.float32))\n"
    fixed = run(rewritten(code_src, "low-precision-accumulator"), "f", data)[-1]
    exact = float(np.float32(0.1)) * 10**6
    assert abs(low - exact) / exact > 1e-3  # sequential float32 total is off in the third digit
    assert abs(fixed - exact) / exact < 1e-9


# -- explicit-inverse, normal-equations, determinant-singularity-test -------------------------

@pytest.mark.parametrize(("code", "expected"), [
    ("import scipy.linalg\ndef f(A, b):\n    return scipy.linalg.inv(A) @ b\n", "scipy.linalg.solve(A, b)"),
    ("from numpy.linalg import inv as invert\ndef f(A, b):\n    return invert(A).dot(b)\n", "numpy.linalg.solve(A, b)"),
    ("from numpy import linalg\ndef f(A, b):\n    P = linalg.inv(A)\n    y = P @ b\n    return y\n", "linalg.solve(A, b)"),
])
def test_explicit_inverse_spellings(code, expected):
    assert rewrites(code, "explicit-inverse") == {expected}


def test_explicit_inverse_shared_inverse_is_a_note():
    code = "import numpy as np\ndef f(H, g):\n    cov = np.linalg.inv(H)\n    step = cov @ g\n    return step, cov\n"
    (f,) = findings(code, "explicit-inverse")
    assert f.severity.value == "note"


def _vandermonde():
    x = np.linspace(0.0, 1.0, 12)
    A = np.vander(x, 8, increasing=True)
    coef = np.arange(1.0, 9.0)
    return A, A @ coef, coef


def test_normal_equations_rewrite_keeps_the_digits_the_original_loses():
    # Vandermonde of degree 7 on [0, 1]: cond(A) is about 1e6 (common practice: monomial bases are ill-conditioned)
    A, b, coef = _vandermonde()
    code = "import numpy as np\ndef f(A, b):\n    return np.linalg.solve(A.T @ A, A.T @ b)\n"
    naive = run(code, "f", A, b)
    fixed = run(rewritten(code, "normal-equations"), "f", A, b)
    err = lambda c: np.max(np.abs(c - coef) / coef)  # noqa: E731
    assert err(fixed) < 1e-8
    assert err(naive) > 100 * err(fixed)


@pytest.mark.parametrize("code", [
    "import numpy as np\ndef f(X, y):\n    XtX = X.T.dot(X)\n    return np.linalg.inv(XtX) @ X.T @ y\n",
    "import numpy as np\ndef f(X, y):\n    return np.linalg.solve(np.dot(X.T, X), np.dot(X.T, y))\n",
])
def test_normal_equations_spellings(code):
    assert rewrites(code, "normal-equations") == {"np.linalg.lstsq(X, y, rcond=None)[0]"}
    assert not findings(code, "explicit-inverse")  # one finding per site, by the more specific rule


def test_determinant_of_a_well_conditioned_matrix_can_be_tiny():
    # 0.1 * I of order 30: det = 1e-30 although cond = 1 (common practice), so the flagged threshold test misfires
    code = "import numpy as np\ndef f(A):\n    return abs(np.linalg.det(A)) < 1e-12\n"
    assert findings(code, "determinant-singularity-test")
    M = 0.1 * np.eye(30)
    assert run(code, "f", M) is np.True_ or run(code, "f", M) is True
    assert np.linalg.cond(M) == pytest.approx(1.0)


@pytest.mark.parametrize("code", [
    "import numpy as np\ndef f(A):\n    d = np.linalg.det(A)\n    return d * 2.0\n",
    "import numpy as np\ndef f(A):\n    return np.linalg.det(A) < 0\n",
    "import numpy as np\ndef f(A, big):\n    return abs(np.linalg.det(A)) > 1e6\n",
])
def test_determinant_as_a_value_is_clean(code):
    assert not findings(code, "determinant-singularity-test")


# -- shared predicates these rules added to auditor.patterns ----------------------------------

def _context(code: str):
    import ast

    from auditor.rule import Context
    from auditor.scan import walk

    tree = ast.parse(code)
    walk(tree, {})
    return tree, Context(tree, "case.py", code)


@pytest.mark.parametrize(("code", "qualname", "expected"), [
    ("import scipy.linalg as sla\n", "scipy.linalg.solve", ("sla.solve", ())),
    ("import numpy as np\n", "numpy.linalg.lstsq", ("np.linalg.lstsq", ())),
    ("from numpy.linalg import lstsq\n", "numpy.linalg.lstsq", ("lstsq", ())),
    ("import math\n", "numpy.linalg.solve", ("numpy.linalg.solve", ("import numpy.linalg",))),
])
def test_spelled_qualified(code, qualname, expected):
    from auditor.patterns import spelled_qualified

    _, ctx = _context(code)
    assert spelled_qualified(ctx, qualname) == expected


@pytest.mark.parametrize(("expr", "value"), [
    ("np.finfo(float).eps", 2.0 ** -52),  # IEEE 754 binary64 machine epsilon (open standard)
    ("np.sqrt(np.finfo(np.float64).eps)", 2.0 ** -26),
    ("sys.float_info.epsilon ** (1 / 3)", (2.0 ** -52) ** (1 / 3)),
    ("np.finfo(np.float32).eps", 2.0 ** -23),  # binary32 epsilon
    ("10 ** -6 * 2", 2e-6),
    ("x + 1e-8", None),
])
def test_constant_value(expr, value):
    import ast

    from auditor.patterns import constant_value

    tree, ctx = _context(f"import sys\nimport numpy as np\nh = {expr}\n")
    node = tree.body[-1].value
    got = constant_value(ctx, node)
    assert got == (pytest.approx(value, rel=1e-15) if value is not None else None)
    assert isinstance(node, ast.expr)


def test_gram_base_through_locals():
    from auditor.patterns import gram_base

    tree, ctx = _context("import numpy as np\ndef f(X):\n    Xt = np.transpose(X)\n    G = Xt @ X\n    return G\n")
    ret = tree.body[1].body[-1].value
    base = gram_base(ctx, ret)
    assert base is not None and getattr(base, "id", None) == "X"
