"""Name resolution shared by all rules: aliases and qualified names, not spelling."""
from __future__ import annotations

import ast

import pytest

from auditor.rule import Context
from conftest import rules_hit


def family_of_call(code: str) -> str | None:
    tree = ast.parse(code)
    ctx = Context(tree, "t.py", code)
    call = next(n for n in ast.walk(tree.body[-1]) if isinstance(n, ast.Call))
    return ctx.family(call)


@pytest.mark.parametrize(
    "code",
    [
        "import numpy as np\nnp.exp(x)",
        "import numpy\nnumpy.exp(x)",
        "from math import exp as e\ne(x)",
        "import cmath\ncmath.exp(x)",
        "from numpy import *\nexp(x)",
        "import mpmath\nmpmath.exp(x)",
        "import mpmath\nmpmath.mp.exp(x)",
    ],
)
def test_exp_under_any_alias(code):
    assert family_of_call(code) == "exp"


def test_qualified_names():
    assert family_of_call("import scipy.special as sc\nsc.log1p(x)") == "log1p"
    assert family_of_call("import numpy as np\nnp.arctan(x)") == "atan"
    assert family_of_call("from numpy.linalg import inv\ninv(a)") == "inv"


def test_unrelated_names_do_not_resolve():
    assert family_of_call("def exp(x):\n    return x\nexp(x)") is None
    assert family_of_call("import mylib as np\nnp.exp(x)") is None
    assert family_of_call("from . import exp\nexp(x)") is None


def test_local_data_flow_and_aliases_reach_rules():
    code = "import numpy as N\ndef f(x):\n    e = N.exp(x)\n    y = e - 1.0\n    return y\n"
    assert rules_hit(code, "exp-minus-one") == ["exp-minus-one"]
    shadowed = "import numpy as N\ndef f(x):\n    e = N.exp(x)\n    e = 3.0\n    return e - 1.0\n"
    assert rules_hit(shadowed, "exp-minus-one") == []
