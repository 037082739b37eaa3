"""The series rules on forms their examples do not cover, and their rewrites against outside references."""
from __future__ import annotations

import ast
import math

import mpmath
import pytest
import scipy.special

from auditor import Config, scan_source

ALT, DIV = "alternating-series", "divergent-series"


def findings(code: str, rule: str):
    report = scan_source(code, "example.py", Config(only=frozenset({rule})))
    assert not report.errors, report.errors
    return [f for f in report.findings if f.rule == rule]


def apply_rewrite(code: str, finding) -> str:
    """Splice the rewrite over the finding's span (1-based, end column exclusive) and add its imports."""
    lines = code.splitlines(keepends=True)
    sp = finding.span
    start = sum(len(line) for line in lines[: sp.line - 1]) + sp.column - 1
    end = sum(len(line) for line in lines[: sp.end_line - 1]) + sp.end_column - 1
    out = code[:start] + finding.rewrite.text + code[end:]
    return "".join(f"{imp}\n" for imp in finding.rewrite.imports) + out


def load(code: str, name: str):
    """Run test-owned snippet code (never scanned code during a scan) and return one function."""
    namespace: dict = {}
    exec(compile(code, "<snippet>", "exec"), namespace)  # noqa: S102 - the test's own snippet
    return namespace[name]


def digits_lost(value: float, reference) -> float:
    """CONTRACT.md: max(0, 15.95 + log10(|float - ref| / |ref|))."""
    err = abs(mpmath.mpf(value) - reference) / abs(reference)
    return max(0.0, 15.95 + float(mpmath.log10(err))) if err else 0.0


# -- alternating-series: spellings -----------------------------------------------------

FLAGGED = {
    "factorial alias": "from math import factorial as fac\ndef f(x):\n    s = 0.0\n    for k in range(40):\n"
    "        s += (-1)**k * x**k / fac(k)\n    return s\n",
    "numpy alias": "import numpy as np\nfrom scipy.special import factorial\ndef f(x):\n    k = np.arange(40)\n"
    "    return np.sum((-1.0)**k * x**k / factorial(k))\n",
    "numpy full name": "import numpy\nimport scipy.special as sc\ndef f(x):\n    k = numpy.arange(40)\n"
    "    return numpy.sum((-x)**k / sc.factorial(k))\n",
    "tuple unpacking": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s, t = s + t, -t*x/k\n    return s\n",
    "list comprehension": "import numpy as np\nimport math\ndef f(x):\n"
    "    return np.sum([(-1)**k * x**(2*k) / math.factorial(2*k) for k in range(30)])\n",
    "while tolerance": "def f(x, tol=1e-16):\n    s, t, k = 0.0, 1.0, 0\n    while abs(t) > tol:\n        s += t\n"
    "        k += 1\n        t *= -x / k\n    return s\n",
    "sign through a local": "def f(x):\n    s = 0.0\n    p = 1.0\n    for k in range(1, 40):\n        sg = (-1)**k\n"
    "        term = sg * p\n        s += term\n        p *= x / k\n    return s\n",
    "augmented subtract with flip": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 40):\n        s -= t\n"
    "        t *= -x / k\n    return -s\n",
    "cmath pow": "import cmath\ndef f(z):\n    s = 0j\n    for k in range(40):\n        s += pow(-1, k) * z**k / (k + 1)\n    return s\n",
}


@pytest.mark.parametrize("code", FLAGGED.values(), ids=FLAGGED.keys())
def test_alternating_forms_flagged(code):
    assert findings(code, ALT)


CLEAN = {
    "positive series": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s += t\n        t *= x / k\n    return s\n",
    "data total": "def f(values):\n    s = 0.0\n    for v in values:\n        s += v\n    return s\n",
    "integer alternating": "from math import comb\ndef f(n):\n    total, sign = 0, 1\n    for k in range(n + 1):\n"
    "        total += sign * comb(n, k) * (n - k)**4\n        sign = -sign\n    return total\n",
    "horner": "def f(c, x):\n    s = 0.0\n    for a in reversed(c):\n        s = s * (-x) + a\n    return s\n",
    "library": "import numpy as np\ndef f(x):\n    return np.exp(-x)\n",
    "positive twin added": "import math\ndef f(x):\n    a = sum(x**(2*k) / math.factorial(2*k) for k in range(20))\n"
    "    b = sum(x**(2*k+1) / math.factorial(2*k+1) for k in range(20))\n    return a + b\n",
    "reset each pass": "def f(rows, d):\n    for i in range(1, len(rows)):\n        col = rows[i - 1]\n"
    "        col += (-1)**i * d[i]\n        rows[i] = col\n    return rows\n",
    "divergent goes to its own rule": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 20):\n        s += t\n"
    "        t *= -k / x\n    return s\n",
}


@pytest.mark.parametrize("code", CLEAN.values(), ids=CLEAN.keys())
def test_alternating_lookalikes_clean(code):
    assert not findings(code, ALT)


def test_one_finding_for_a_series_summed_inside_a_data_loop():
    code = ("import math\ndef f(xs):\n    total = 0.0\n    for x in xs:\n"
            "        total += sum((-1)**k * x**k / math.factorial(k) for k in range(40))\n    return total\n")
    hits = findings(code, ALT)
    assert [h.span.line for h in hits] == [5]


def test_nested_loops_flag_the_inner_series_only():
    code = ("def f(xs):\n    out = []\n    for x in xs:\n        s, t = 0.0, 1.0\n        for k in range(1, 50):\n"
            "            s += t\n            t *= -x / k\n        out.append(s)\n    return out\n")
    assert [h.span.line for h in findings(code, ALT)] == [5]


def test_complex_series_rewrites_to_cmath():
    code = "import math\ndef f(z):\n    s, t = 0j, 1 + 0j\n    for k in range(1, 60):\n        s += t\n        t *= -z / k\n    return s\n"
    (hit,) = findings(code, ALT)
    assert hit.rewrite.text == "s = cmath.exp(-z)" and hit.rewrite.imports == ("import cmath",)
    z = complex(3.0, 4.0)
    assert load(apply_rewrite(code, hit), "f")(z) == pytest.approx(complex(mpmath.exp(-mpmath.mpc(z))), rel=1e-15)


def test_rewrite_uses_the_files_import_style():
    code = "from math import exp\ndef f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s += t\n        t *= -x / k\n    return s\n"
    (hit,) = findings(code, ALT)
    assert hit.rewrite.text == "s = exp(-x)" and hit.rewrite.imports == ()


def test_no_rewrite_when_the_loop_state_is_used_afterwards():
    code = ("import math\ndef f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 60):\n        s += t\n        t *= -x / k\n"
            "    return s, t\n")
    (hit,) = findings(code, ALT)
    assert hit.rewrite is None and "math.exp(-x)" in hit.message


def test_inline_sign_array_is_recognised():
    code = ("import numpy as np\nfrom scipy.special import factorial\ndef f(x, n=40):\n"
            "    signs = (-1.0) ** np.arange(n)\n    terms = x ** np.arange(n) / factorial(np.arange(n))\n"
            "    return np.dot(signs, terms)\n")
    (hit,) = findings(code, ALT)
    assert hit.rewrite is not None and hit.rewrite.text == "np.exp(-x)"


def test_severity_note_for_log_series():
    code = "def f(x):\n    return sum((-1)**(k+1) * x**k / k for k in range(1, 50))\n"
    (hit,) = findings(code, ALT)
    assert hit.severity.value == "note"
    assert hit.rewrite is not None and hit.rewrite.text == "math.log1p(x)"


# -- alternating-series: rewrites measured against mpmath ------------------------------

REWRITES = [
    # (code, function, input, mpmath reference) -- references: mpmath at 50 digits
    (FLAGGED["tuple unpacking"], "f", 12.0, mpmath.exp),
    ("import math\ndef g(x):\n    return sum((-1)**k * x**(2*k+1) / math.factorial(2*k+1) for k in range(60))\n",
     "g", 20.0, mpmath.sin),
]


@pytest.mark.parametrize(("code", "name", "x", "ref"), REWRITES)
def test_library_rewrite_recovers_digits(code, name, x, ref):
    (hit,) = findings(code, ALT)
    fixed = apply_rewrite(code, hit)
    ast.parse(fixed)
    with mpmath.workdps(50):
        want = ref(-mpmath.mpf(x)) if ref is mpmath.exp else ref(mpmath.mpf(x))
        before = digits_lost(load(code, name)(x), want)
        after = digits_lost(load(fixed, name)(x), want)
    assert before > 5 and after < 1, (before, after, fixed)


def test_message_magnitudes_match_measurement():
    """MAGNITUDE claims: e^-x series loses ~7 digits at x = 10 and ~16 at 20; sin ~3 at 10 (mpmath, 60 digits)."""
    def exp_neg(x):
        s, t = 0.0, 1.0
        for k in range(1, 400):
            s += t
            t *= -x / k
        return s

    def sine(x):
        s, t = 0.0, x
        for k in range(1, 400):
            s += t
            t = -t * x * x / ((2 * k) * (2 * k + 1))
        return s

    with mpmath.workdps(60):
        assert 6.5 <= digits_lost(exp_neg(10.0), mpmath.exp(-10)) <= 8.5
        assert digits_lost(exp_neg(20.0), mpmath.exp(-20)) >= 15
        assert 2.5 <= digits_lost(sine(10.0), mpmath.sin(10)) <= 4.0
    (hit,) = findings(FLAGGED["tuple unpacking"], ALT)
    assert "7 at x = 10" in hit.message and "all 16 by x ≈ 20" in hit.message


# -- divergent-series ------------------------------------------------------------------

DIVERGENT = {
    "factorial alias over a power": "from math import factorial as fac\ndef f(x, n=12):\n    s = 0.0\n"
    "    for j in range(n):\n        s += fac(j) / x**j\n    return s\n",
    "gamma ratio, module alias": "import scipy.special as sc\ndef f(x, a):\n    s = 0.0\n    for k in range(20):\n"
    "        s += sc.gamma(k + a) / (sc.gamma(a) * x**k)\n    return s\n",
    "while counter": "def f(x):\n    s, t, k = 0.0, 1.0, 1\n    while k < 30:\n        s += t\n        t = -t * k / x\n"
    "        k += 1\n    return s\n",
    "generator": "import math\ndef f(x):\n    return sum((-1)**k * math.factorial(k) / x**(k+1) for k in range(25))\n",
}


@pytest.mark.parametrize("code", DIVERGENT.values(), ids=DIVERGENT.keys())
def test_divergent_forms_flagged(code):
    assert findings(code, DIV)


DIV_CLEAN = {
    "ratio stop": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 50):\n        r = -k / x\n"
    "        if abs(r) >= 1:\n            break\n        s += t\n        t *= r\n    return s\n",
    "previous term": "def f(x):\n    s, t, old = 0.0, 1.0, 2.0\n    for k in range(1, 50):\n        if abs(t) > abs(old):\n"
    "            break\n        s += t\n        old = t\n        t *= -k / x\n    return s\n",
    "convergent": "def f(x):\n    s, t = 0.0, 1.0\n    for k in range(1, 50):\n        s += t\n        t *= -x * x / (k * k)\n    return s\n",
}


@pytest.mark.parametrize("code", DIV_CLEAN.values(), ids=DIV_CLEAN.keys())
def test_divergent_lookalikes_clean(code):
    assert not findings(code, DIV)


def test_smallest_term_rewrite_matches_exp1():
    """E1(x) ~ e^-x/x * sum (-1)^k k!/x^k (DLMF 6.12.1); reference scipy.special.exp1."""
    code = ("import math\ndef e1(x, n=20):\n    s, t = 0.0, 1.0\n    for k in range(1, n):\n        s += t\n"
            "        t *= -k / x\n    return math.exp(-x) / x * s\n")
    (hit,) = findings(code, DIV)
    fixed = apply_rewrite(code, hit)
    x = 6.0
    ref = scipy.special.exp1(x)
    before = abs(load(code, "e1")(x) - ref) / ref
    after = abs(load(fixed, "e1")(x) - ref) / ref
    # optimal truncation: error about the smallest term, 6!/6^6 ~ 1.5e-2 here (common practice)
    assert before > 1.0 and after < 2e-2, (before, after)
    assert not findings(fixed, DIV), "the rewritten loop must be clean"


def test_explicit_term_rewrite_parses_and_is_clean():
    code = DIVERGENT["factorial alias over a power"]
    (hit,) = findings(code, DIV)
    fixed = apply_rewrite(code, hit)
    ast.parse(fixed)
    assert not findings(fixed, DIV)
    x = 3.5  # no tie between neighbouring terms
    terms = [math.factorial(j) / x**j for j in range(12)]
    smallest = min(range(12), key=lambda j: terms[j])
    assert load(fixed, "f")(x) == pytest.approx(sum(terms[: smallest + 1]), rel=1e-12)


def test_corpus_rewrites_parse():
    from pathlib import Path

    folder = Path(__file__).resolve().parent / "corpus"
    for path in sorted(folder.glob("series_*.py")):
        code = path.read_text(encoding="utf-8")
        report = scan_source(code, path.name, Config(only=frozenset({ALT, DIV})))
        for f in report.findings:
            if f.rewrite is not None:
                ast.parse(apply_rewrite(code, f))
