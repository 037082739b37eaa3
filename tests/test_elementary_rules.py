"""The elementary-function rules: alias and data-flow forms, one rule per site, and rewrites that are
equal to the original and accurate where it is not (references: mpmath at 50 digits; identities from
DLMF 4.21 (trigonometric), 4.35 (hyperbolic), 7.2.2 (erfc) and 8.2.4 (incomplete gamma))."""
from __future__ import annotations

import math

import mpmath
import pytest
from conftest import rules_hit

from auditor import Config, scan_source

ELEMENTARY = ("subtractive-cancellation", "one-minus-cosine", "sqrt-difference", "quadratic-roots",
              "square-difference", "unguarded-hypot", "atan-of-ratio", "complement-of-cdf")


def findings(code: str, only: str | None = None):
    config = Config(only=frozenset({only})) if only else Config()
    report = scan_source(code, "case.py", config)
    assert not report.errors, report.errors
    return list(report.findings)


def rewritten(code: str, only: str) -> str:
    """The source with the (single) finding of `only` replaced by its rewrite and its imports added."""
    [f] = findings(code, only)
    assert f.rewrite is not None, f.message
    lines = code.splitlines(keepends=True)
    start = sum(len(x) for x in lines[: f.span.line - 1]) + f.span.column - 1
    end = sum(len(x) for x in lines[: f.span.end_line - 1]) + f.span.end_column - 1
    return "".join(f"{imp}\n" for imp in f.rewrite.imports) + code[:start] + f.rewrite.text + code[end:]


def function_of(code: str, name: str = "f"):
    namespace: dict = {}
    exec(compile(code, "<case>", "exec"), namespace)  # test-owned snippets only, never scanned user code
    return namespace[name]


# -- semantics, not spelling ----------------------------------------------------------------------

ALIAS_FORMS = [
    ("one-minus-cosine", "from numpy import *\ndef f(t):\n    return 1.0 - cos(t)\n", "2 * sin(t / 2) ** 2"),
    ("one-minus-cosine", "import numpy\ndef f(t):\n    c = numpy.cos(3 * t)\n    return c - 1\n", "-2 * numpy.sin(3 * t / 2) ** 2"),
    ("sqrt-difference", "import math as m\ndef f(x):\n    return m.sqrt(x + 2.0) - m.sqrt(x)\n", "2.0 / (m.sqrt(x + 2.0) + m.sqrt(x))"),
    ("sqrt-difference", "def f(x):\n    return (x + 1) ** 0.5 - x ** 0.5\n", "1 / ((x + 1) ** 0.5 + x ** 0.5)"),
    ("quadratic-roots", "from math import sqrt as root\ndef f(a, b, c):\n    return (-b + root(b*b - 4*a*c)) / (2*a)\n",
     "(2 * c / (-b - root(b * b - 4 * a * c)) if b > 0 else (-b + root(b * b - 4 * a * c)) / (2 * a))"),
    ("square-difference", "import numpy as np\ndef f(x, y):\n    return np.square(x) - np.square(y)\n", "(x - y) * (x + y)"),
    ("square-difference", "def f(x, y):\n    return pow(x, 2) - pow(y, 2)\n", "(x - y) * (x + y)"),
    ("unguarded-hypot", "import numpy as np\ndef f(x, y):\n    s = x**2 + y**2\n    return np.sqrt(s)\n", "np.hypot(x, y)"),
    ("unguarded-hypot", "import math\ndef f(x, y):\n    return math.sqrt(math.pow(x, 2) + y * y)\n", "math.hypot(x, y)"),
    ("atan-of-ratio", "import numpy as np\ndef f(y, x):\n    r = np.sqrt(x)\n    return np.arctan(y / r)\n", "np.arctan2(y, r)"),
    ("complement-of-cdf", "import scipy.special as sc\ndef f(z):\n    return 1 - sc.erf(z)\n", "sc.erfc(z)"),
    ("complement-of-cdf", "from scipy import special\ndef f(a, x):\n    return 1.0 - special.gammaincc(a, x)\n",
     "special.gammainc(a, x)"),
    ("complement-of-cdf", "import scipy.stats as st\ndef f(x):\n    d = st.norm(2.0, 0.5)\n    return 1 - d.cdf(x)\n", "d.sf(x)"),
    ("subtractive-cancellation", "import numpy as np\ndef f(a, d):\n    return np.exp(a + d) - np.exp(a)\n",
     "np.exp(a) * np.expm1(d)"),
    ("subtractive-cancellation", "from math import cosh\ndef f(x):\n    return 1 - cosh(x)\n", "-2 * math.sinh(x / 2) ** 2"),
]


@pytest.mark.parametrize(("rule", "code", "expected"), ALIAS_FORMS, ids=[f"{r}-{i}" for i, (r, _, _) in enumerate(ALIAS_FORMS)])
def test_alias_and_data_flow_forms(rule, code, expected):
    [f] = findings(code, rule)
    assert f.rewrite is not None and f.rewrite.text == expected


def test_rewrite_imports_what_it_needs():
    [f] = findings("from math import cos\ndef f(t):\n    return 1 - cos(t)\n", "one-minus-cosine")
    assert f.rewrite is not None and f.rewrite.text == "2 * math.sin(t / 2) ** 2"
    assert f.rewrite.imports == ("import math",)


def test_augmented_assignment_is_flagged_without_a_rewrite():
    [f] = findings("import math\ndef f(x, y):\n    d = math.sin(x)\n    d -= math.sin(x + y)\n    return d\n",
                   "subtractive-cancellation")
    assert f.span.line == 4 and f.rewrite is None


def test_rebound_names_block_a_copied_rewrite():
    # t is rebound between `c = cos(t)` and the use: copying cos's argument would change the value
    code = "import math\ndef f(t):\n    c = math.cos(t)\n    t = 0.0\n    return 1 - c\n"
    [f] = findings(code, "one-minus-cosine")
    assert f.rewrite is None


# -- one rule per site -----------------------------------------------------------------------------

SITES = [
    ("import math\ndef f(x):\n    return 1 - math.cos(x)\n", "one-minus-cosine"),
    ("import math\ndef f(x):\n    return math.cosh(x) - 1\n", "subtractive-cancellation"),
    ("import math\ndef f(x):\n    return math.sqrt(x + 1) - math.sqrt(x)\n", "sqrt-difference"),
    ("import math\ndef f(x):\n    return math.sqrt(1 + x) - 1\n", "sqrt-difference"),
    ("import math\ndef f(a, b, c):\n    return (-b - math.sqrt(b * b - 4 * a * c)) / (2 * a)\n", "quadratic-roots"),
    ("import math\ndef f(a, b, c):\n    return math.sqrt(b * b - 4 * a * c) - b\n", "quadratic-roots"),
    ("def f(x, h):\n    return (x + h) ** 2 - x ** 2\n", "square-difference"),
    ("import math\ndef f(x, y):\n    return math.sqrt(x * x + y * y) - x\n", "sqrt-difference"),
    ("import math\ndef f(x, y):\n    return math.atan(y / x)\n", "atan-of-ratio"),
    ("from scipy.stats import norm\ndef f(x):\n    return 1 - norm.cdf(x)\n", "complement-of-cdf"),
    ("import math\ndef f(x):\n    return math.exp(x) - 1\n", "exp-minus-one"),
    ("import math\ndef f(x, y):\n    return math.exp(x) - math.exp(y + x)\n", "subtractive-cancellation"),
    ("import math\ndef f(x):\n    return 1 - 0.5 * (1 + math.erf(x))\n", "complement-of-cdf"),
]


@pytest.mark.parametrize(("code", "rule"), SITES, ids=[r for _, r in SITES])
def test_exactly_one_rule_per_site(code, rule):
    assert rules_hit(code) == [rule]


def test_independent_inputs_and_stable_forms_stay_clean():
    clean = [
        "import numpy as np\ndef f(x):\n    return x - x.mean()\n",
        "import math\ndef f(a, b):\n    return math.log(a) - math.log(b)\n",
        "import time\ndef f(t0):\n    return time.time() - t0\n",
        "def f(xs, i):\n    return len(xs) - i - 1\n",
        "import math\ndef f(x):\n    return x - math.floor(x)\n",
        "import math\ndef f(x, y):\n    return 2 * math.sin(x / 2) ** 2 + math.hypot(x, y) + math.atan2(y, x)\n",
    ]
    for code in clean:
        assert [r for r in rules_hit(code) if r in ELEMENTARY] == [], code


# -- severities say how ordinary the bad inputs are --------------------------------------------------

def test_severity_follows_correlation():
    [close] = findings("def f(t, d):\n    h = t + d\n    return h * h - t * t\n", "square-difference")
    [apart] = findings("def f(r1, r2):\n    return r1 * r1 - r2 * r2\n", "square-difference")
    assert close.severity.value == "warning" and apart.severity.value == "note"
    [pos] = findings("import math\ndef f(y, x):\n    return math.atan(y / abs(x))\n", "atan-of-ratio")
    [anysign] = findings("import math\ndef f(y, x):\n    return math.atan(y / x)\n", "atan-of-ratio")
    assert pos.severity.value == "note" and pos.rewrite is not None
    assert anysign.severity.value == "warning" and anysign.rewrite is None


# -- rewrites: equal to the original, accurate where it is not --------------------------------------

mp = mpmath.mp


def mp_ref(expr):
    """Evaluate an mpmath expression at 50 digits (local precision context)."""
    def run(*args):
        with mpmath.workdps(50):
            return expr(*[mpmath.mpf(a) for a in args])
    return run


#: (rule, code of f, benign inputs, cancelling inputs, mpmath reference of f)
NUMERIC = [
    ("one-minus-cosine", "import math\ndef f(x):\n    return 1 - math.cos(x)\n", [(0.7,), (-2.0,)], [(1e-5,), (3e-9,)],
     mp_ref(lambda x: 1 - mpmath.cos(x))),
    ("sqrt-difference", "import math\ndef f(x):\n    return math.sqrt(x + 1) - math.sqrt(x)\n", [(0.5,), (3.0,)], [(1e12,)],
     mp_ref(lambda x: mpmath.sqrt(x + 1) - mpmath.sqrt(x))),
    ("sqrt-difference", "import math\ndef f(x):\n    return math.sqrt(x * x + 1) - x\n", [(0.5,), (2.0,)], [(1e8,)],
     mp_ref(lambda x: mpmath.sqrt(x * x + 1) - x)),
    ("quadratic-roots", "import math\ndef f(a, b, c):\n    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)\n",
     [(1.0, 3.0, 1.0), (1.0, -3.0, 1.0), (-1.0, 4.0, 2.0), (2.0, -5.0, 1.0), (1.0, 0.0, -4.0)],
     [(1.0, 1e8, 1.0), (-2.0, 3e7, 0.5)], mp_ref(lambda a, b, c: (-b + mpmath.sqrt(b * b - 4 * a * c)) / (2 * a))),
    ("quadratic-roots", "import math\ndef f(a, b, c):\n    return -(b + math.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)\n",
     [(1.0, 3.0, 1.0), (1.0, -3.0, 1.0), (-1.0, 4.0, 2.0)], [(1.0, -1e8, 1.0)],
     mp_ref(lambda a, b, c: -(b + mpmath.sqrt(b * b - 4 * a * c)) / (2 * a))),
    ("quadratic-roots", "import math\ndef f(p, q):\n    return (-p + math.sqrt(p * p - 4 * q)) / 2\n",
     [(3.0, 1.0), (-3.0, 1.0)], [(1e9, 2.0)], mp_ref(lambda p, q: (-p + mpmath.sqrt(p * p - 4 * q)) / 2)),
    ("sqrt-difference", "import math\ndef f(e):\n    return 1 - math.sqrt(1 - e)\n", [(0.5,), (0.9,)], [(1e-9,)],
     mp_ref(lambda e: 1 - mpmath.sqrt(1 - e))),
    ("unguarded-hypot", "import math\ndef f(x, y):\n    return math.sqrt(x * x + y * y)\n", [(3.0, 4.0), (-1.5, 0.2)],
     [(3e200, 4e200), (3e-170, 4e-170)], mp_ref(lambda x, y: mpmath.sqrt(x * x + y * y))),
    ("atan-of-ratio", "import math\ndef f(y, x):\n    return math.atan(y / abs(x))\n", [(1.0, 2.0), (-3.0, 0.5)],
     [], mp_ref(lambda y, x: mpmath.atan2(y, abs(x)))),  # a quadrant rule: nothing to gain in digits
    ("square-difference", "def f(x, d):\n    y = x + d\n    return y**2 - x**2\n", [(1.0, 0.5), (-3.0, 1.0)], [(1.0, 1e-9)],
     mp_ref(lambda x, d: (x + d) ** 2 - x ** 2)),
    ("complement-of-cdf", "from scipy.stats import norm\ndef f(z):\n    return 1 - norm.cdf(z)\n", [(0.3,), (-1.0,)], [(7.0,)],
     mp_ref(lambda z: mpmath.ncdf(-z))),
    ("complement-of-cdf", "import math\ndef f(z):\n    return 1 - math.erf(z)\n", [(0.3,), (1.1,)], [(5.0,)],
     mp_ref(lambda z: mpmath.erfc(z))),
    ("complement-of-cdf", "import math\ndef f(z):\n    return 0.5 * (1 + math.erf(z))\n", [(0.3,), (1.1,)], [(-6.0,)],
     mp_ref(lambda z: mpmath.erfc(-z) / 2)),
    ("complement-of-cdf", "from scipy.special import gammainc\ndef f(a, x):\n    return 1 - gammainc(a, x)\n",
     [(2.0, 1.0), (0.5, 0.2)], [(2.0, 45.0)], mp_ref(lambda a, x: mpmath.gammainc(a, x, mpmath.inf, regularized=True))),
    ("subtractive-cancellation", "import math\ndef f(w, d):\n    return math.sin(w + d) - math.sin(w)\n",
     [(1.0, 0.5), (-2.0, 0.3)], [(1.0, 1e-9)], mp_ref(lambda w, d: mpmath.sin(w + d) - mpmath.sin(w))),
    ("subtractive-cancellation", "import math\ndef f(x):\n    return math.exp(x) - math.exp(-x)\n", [(0.7,), (-2.0,)],
     [(1e-10,)], mp_ref(lambda x: 2 * mpmath.sinh(x))),
    ("subtractive-cancellation", "import math\ndef f(x):\n    return math.log(x + 1) - math.log(x)\n", [(0.7,), (3.0,)],
     [(1e10,)], mp_ref(lambda x: mpmath.log(x + 1) - mpmath.log(x))),
    ("subtractive-cancellation", "import math\ndef f(x):\n    return math.cosh(x) - 1\n", [(0.7,), (-2.0,)], [(1e-6,)],
     mp_ref(lambda x: mpmath.cosh(x) - 1)),
    ("subtractive-cancellation", "import math\ndef f(x):\n    return math.tan(x) - math.sin(x)\n", [(0.7,), (-1.2,)],
     [(1e-4,)], mp_ref(lambda x: mpmath.tan(x) - mpmath.sin(x))),
    ("subtractive-cancellation", "def f(n):\n    return 1 / n - 1 / (n + 1.5)\n", [(2.0,), (-7.0,)], [(3e10,)],
     mp_ref(lambda n: 1 / n - 1 / (n + mpmath.mpf(1.5)))),
]


def rel_err(value, ref) -> float:
    return float(abs((mpmath.mpf(value) - ref) / ref))


@pytest.mark.parametrize(("rule", "code", "benign", "bad", "ref"), NUMERIC, ids=[f"{r}-{i}" for i, (r, *_ ) in enumerate(NUMERIC)])
def test_rewrite_is_equal_and_accurate(rule, code, benign, bad, ref):
    original, fixed = function_of(code), function_of(rewritten(code, rule))
    for args in benign:  # no cancellation here: both forms agree to rounding
        assert fixed(*args) == pytest.approx(original(*args), rel=1e-12, abs=1e-300), args
    for args in bad:  # the original loses digits; the rewrite keeps them (checked against mpmath)
        assert rel_err(fixed(*args), ref(*args)) < 1e-12, args
        assert rel_err(original(*args), ref(*args)) > 1e-9, args


def test_quadratic_numpy_rewrite_handles_both_signs_elementwise():
    import numpy as np

    code = "import numpy as np\ndef f(a, b, c):\n    d = np.sqrt(b**2 - 4.0*a*c)\n    return (-b + d) / (2.0*a)\n"
    original, fixed = function_of(code), function_of(rewritten(code, "quadratic-roots"))
    b = np.array([3.0, -3.0, 1e8, -1e8])
    a, c = np.ones(4), np.ones(4)
    with np.errstate(all="ignore"):
        got = fixed(a, b, c)
    assert got[:2] == pytest.approx(original(a, b, c)[:2], rel=1e-12)
    assert got[2] == pytest.approx(-1e-8, rel=1e-12)  # the small root, -c/b to first order (mpmath agrees to 1e-16)
    assert got[3] == pytest.approx(1e8, rel=1e-12)


def test_quadratic_cmath_rewrite_keeps_complex_roots():
    code = "import cmath\ndef f(a, b, c):\n    return (-b + cmath.sqrt(b*b - 4*a*c)) / (2*a)\n"
    original, fixed = function_of(code), function_of(rewritten(code, "quadratic-roots"))
    for a, b, c in ((1.0, 1.0, 1.0), (2.0, -1.0, 3.0), (1.0, 3.0, 1.0), (1.0 + 1j, 2.0 - 1j, 0.5)):
        assert abs(fixed(a, b, c) - original(a, b, c)) <= 1e-12 * abs(original(a, b, c))
    with mpmath.workdps(50):
        ref = (-1e8 + mpmath.sqrt(mpmath.mpf(1e16) - 4)) / 2
    assert abs(fixed(1.0, 1e8, 1.0) - complex(ref)) < 1e-12 * abs(complex(ref))


# -- look-alikes found by scanning scipy's own sources (precision checks) ---------------------------

LOOK_ALIKES = [
    "def f(self):\n    return 1 / self.exposed - 1 / self.total\n",  # two attributes, not one variable
    "import numpy as np\ndef f(a, b, c):\n    return np.exp(-pow(a, c)) - np.exp(-pow(b, c))\n",  # share only c
    "import numpy as np\ndef f(lam, t):\n    return np.exp(-lam[1] * t) - np.exp(-lam[2] * t)\n",
    "def f(x0, h):\n    dx = (x0 + h) - x0\n    return dx\n",  # the representable step, on purpose
    "def f(x):\n    return 3 * x**4 - 2 * (1 - x * x)\n",  # 1 - x*x in a polynomial
    "from scipy.special import erf\ndef f():\n    return erf(1) + 1\n",  # a constant
    "from scipy import stats\ndef f(x, cov):\n    return 1 - stats.multivariate_normal(cov=cov).cdf(x)\n",  # no sf
    "import numpy as np\ndef f(x, rho):\n    return np.arctan(x / np.sqrt(-rho * (rho + 1j)))\n",  # complex
    "def f(theta, ci_l, ci_u):\n    ci_l, ci_u = 2 * theta - ci_u, 2 * theta - ci_l\n    return ci_l, ci_u\n",
]


@pytest.mark.parametrize("code", LOOK_ALIKES, ids=[str(i) for i in range(len(LOOK_ALIKES))])
def test_look_alikes_stay_clean(code):
    assert [r for r in rules_hit(code) if r in ELEMENTARY] == []


def test_array_elements_are_not_one_variable():
    [f] = findings("def f(x):\n    return x[0]**2 - x[1]**2\n", "square-difference")
    assert f.severity.value == "note"  # nothing says x[0] and x[1] are close


def test_root_of_one_minus_square_is_flagged():
    [f] = findings("import math\ndef f(c):\n    return math.sqrt(1 - c * c)\n", "square-difference")
    assert f.rewrite is not None and f.rewrite.text == "(1 - c) * (1 + c)"


def test_new_style_distributions_use_ccdf():
    [f] = findings("from scipy import stats\ndef f(x):\n    X = stats.Normal(mu=0.0, sigma=1.0)\n    return 1 - X.cdf(x)\n",
                   "complement-of-cdf")
    assert f.rewrite is not None and f.rewrite.text == "X.ccdf(x)"


def test_positive_powers_count_as_known_sign():
    [f] = findings("import math\ndef f(x, prec):\n    return math.atan(x / 2.0**prec)\n", "atan-of-ratio")
    assert f.severity.value == "note" and f.rewrite is not None and f.rewrite.text == "math.atan2(x, 2.0 ** prec)"


def test_quadratic_split_spelling():
    code = "import math\ndef f(a, b, c):\n    return -b / (2 * a) + math.sqrt(b * b - 4 * a * c) / (2 * a)\n"
    original, fixed = function_of(code), function_of(rewritten(code, "quadratic-roots"))
    for args in ((1.0, 3.0, 1.0), (1.0, -3.0, 1.0), (-2.0, 5.0, 1.0)):
        assert fixed(*args) == pytest.approx(original(*args), rel=1e-12)
    with mpmath.workdps(50):
        ref = (-mpmath.mpf(1e8) + mpmath.sqrt(mpmath.mpf(1e16) - 4)) / 2
    assert rel_err(fixed(1.0, 1e8, 1.0), ref) < 1e-12


def test_atan2_rewrite_survives_the_axis():
    code = "import math\ndef f(y, x):\n    return math.atan(y / abs(x))\n"
    original, fixed = function_of(code), function_of(rewritten(code, "atan-of-ratio"))
    with pytest.raises(ZeroDivisionError):
        original(1.0, 0.0)
    assert fixed(1.0, 0.0) == pytest.approx(math.pi / 2, rel=1e-15)  # atan2(1, 0) = pi/2 (C99 F.9.1.4)


@pytest.mark.parametrize("code", [
    "import math\ndef f(a, b, c):\n    d = math.sqrt(b * b - 4 * a * c)\n    if b >= 0:\n        x = (-b - d) / (2 * a)\n"
    "    else:\n        x = (-b + d) / (2 * a)\n    return x, c / (a * x)\n",
    "import numpy as np\ndef f(a, b, c):\n    d = np.sqrt(b * b - 4 * a * c)\n"
    "    return np.where(b > 0, 2 * c / (-b - d), (-b + d) / (2 * a))\n",
])
def test_quadratic_roots_chosen_by_the_sign_of_b_stay_clean(code):
    assert rules_hit(code, "quadratic-roots") == []


def test_quadratic_fix_is_not_flagged_again():
    code = "import math\ndef f(a, b, c):\n    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)\n"
    assert rules_hit(rewritten(code, "quadratic-roots"), "quadratic-roots") == []
