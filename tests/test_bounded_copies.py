"""Bounded components (unguarded-hypot) and copies of one matrix (explicit-inverse), seen through local data flow.

References: numpy.linalg.norm / numpy.hypot as the reference length; pyerfa `pn` returns (modulus,
unit vector) and `s2c` direction cosines (pyerfa documentation, from memory).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from auditor import Config, scan_source


def lines(code: str, rule: str) -> list[int]:
    report = scan_source(code, "case.py", Config(only=frozenset({rule})))
    assert not report.errors, report.errors
    return [f.span.line for f in report.findings if f.rule == rule]


HYPOT_CLEAN = [
    # x / hypot(x, y) and y / hypot(x, y) are a cosine and a sine
    "import numpy as np\ndef f(x, y):\n    c = x / np.hypot(x, y)\n    s = y / np.hypot(x, y)\n    return np.sqrt(c**2 + s**2)\n",
    # normalised in place
    "import numpy as np\ndef f(v):\n    v /= np.linalg.norm(v)\n    return np.sqrt(v[0]**2 + v[1]**2)\n",
    # divided by a broadcast sqrt-of-sum-of-squares norm
    "import numpy as np\ndef f(v):\n    u = v / np.sqrt(np.sum(v**2, axis=1))[:, None]\n    return np.sqrt(u[:, 0]**2 + u[:, 1]**2)\n",
    # direction cosines unpacked from a transpose
    "import erfa\nimport numpy as np\ndef f(a, b):\n    x, y, z = erfa.s2c(a, b).T\n    return np.sqrt(x**2 + y**2)\n",
    # the unit-vector item taken by index
    "import erfa\nimport numpy as np\ndef f(p):\n    u = erfa.pn(p)[1]\n    return np.sqrt(u[0]**2 + u[1]**2)\n",
    # resultant length of mean sines and cosines (circular statistics)
    "import numpy as np\ndef f(t):\n    s = np.mean(np.sin(t))\n    c = np.mean(np.cos(t))\n    return np.sqrt(s**2 + c**2)\n",
]

HYPOT_FLAGGED = [
    # a ratio of a component to the length of others is unbounded
    "import numpy as np\ndef f(v):\n    x, y, z = v\n    a = z / np.hypot(x, y)\n    b = y / np.hypot(x, y)\n    return np.sqrt(a**2 + b**2)\n",
    # the modulus from pn, not the unit vector
    "import erfa\nimport numpy as np\ndef f(p, q):\n    r, u = erfa.pn(p)\n    s, w = erfa.pn(q)\n    return np.sqrt(r**2 + s**2)\n",
    # divided by the smallest element: not bounded
    "import numpy as np\ndef f(v):\n    u = v / np.linalg.norm(v, ord=-np.inf)\n    return np.sqrt(u[0]**2 + u[1]**2)\n",
    # rebound inside the loop: which value reaches is not known
    "import erfa\nimport numpy as np\ndef f(ps):\n    for p in ps:\n        r, u = erfa.pn(p)\n"
    "        print(np.sqrt(u[0]**2 + u[1]**2))\n        u = p\n",
]


@pytest.mark.parametrize("code", HYPOT_CLEAN)
def test_bounded_components_are_not_flagged(code: str) -> None:
    assert lines(code, "unguarded-hypot") == []


@pytest.mark.parametrize("code", HYPOT_FLAGGED)
def test_unbounded_components_stay_flagged(code: str) -> None:
    assert lines(code, "unguarded-hypot") != []


def test_unit_components_need_no_hypot() -> None:
    """The premise: once normalised, even huge data gives the length hypot gives (math/numpy hypot as reference)."""
    v = np.array([3e200, 4e200])
    u = v / math.hypot(*v)  # a scaled length: numpy.linalg.norm squares unscaled and would overflow here
    plain = np.sqrt(u[0] ** 2 + u[1] ** 2)
    assert plain == pytest.approx(np.hypot(u[0], u[1]), rel=4e-16)
    assert plain == pytest.approx(1.0, rel=4e-16)
    with np.errstate(over="ignore"):
        assert np.sqrt(v[0] ** 2 + v[1] ** 2) == np.inf  # while the raw components overflow (IEEE 754 double)


INVERSE_CLEAN = [
    "import numpy as np\ndef f(a0):\n    a = np.asfortranarray(a0)\n    return np.linalg.inv(a) @ a0\n",
    "import numpy as np\ndef f(a0):\n    a = np.array(a0, dtype=float)\n    b = a\n    return np.linalg.inv(b) @ a0.copy()\n",
    "import numpy as np\ndef f(a0):\n    a = np.copy(a0)\n    return np.linalg.inv(a0) @ np.triu(a)\n",
]

INVERSE_FLAGGED = [
    "import numpy as np\ndef f(a0, b0):\n    a = a0.copy()\n    b = b0.copy()\n    return np.linalg.inv(a) @ b\n",
    "import numpy as np\ndef f(a0):\n    a = a0.copy()\n    a += 1.0\n    return np.linalg.inv(a) @ a0\n",
    "import numpy as np\ndef f(a0):\n    a = a0.copy()\n    a[:, 0] = 0.5\n    return np.linalg.inv(a) @ a0\n",
]


@pytest.mark.parametrize("code", INVERSE_CLEAN)
def test_inverse_checked_against_a_copy_is_not_flagged(code: str) -> None:
    assert lines(code, "explicit-inverse") == []


@pytest.mark.parametrize("code", INVERSE_FLAGGED)
def test_inverse_applied_to_other_data_stays_flagged(code: str) -> None:
    assert lines(code, "explicit-inverse") != []
