"""Local data flow: which bindings a scope has (statements, unpacking, loops, walrus, nesting)."""
from __future__ import annotations

import ast

from auditor.flow import analyse_scope


def flow_of(code: str, walrus: bool = True):
    tree = ast.parse(code)
    return analyse_scope(tree.body[0], walrus=walrus)


def test_bindings_by_kind():
    f = flow_of(
        "def f(x, *a, k=1, **kw):\n"
        "    e = x + 1\n"
        "    s, t = 0.0, 1.0\n"
        "    for i in range(3):\n"
        "        s += t\n"
        "        if (y := s * 2) > 1:\n"
        "            break\n"
        "    with open('p') as h:\n"
        "        pass\n"
        "    def g():\n"
        "        inner = 1\n"
        "    return e\n"
    )
    kinds = {name: [b.kind for b in f.of(name)] for name in f.bindings}
    assert kinds["x"] == ["other"] and kinds["kw"] == ["other"] and kinds["a"] == ["other"]
    assert kinds["e"] == ["assign"]
    assert kinds["s"] == ["unpack", "aug"] and kinds["t"] == ["unpack"]
    assert kinds["i"] == ["loop"] and kinds["y"] == ["assign"] and kinds["h"] == ["other"]
    assert kinds["g"] == ["other"] and "inner" not in kinds
    assert ast.unparse(f.of("t")[0].value) == "1.0"


def test_walrus_only_searched_when_asked():
    code = "def f(v):\n    if (n := len(v)) > 2:\n        return n\n"
    assert flow_of(code).of("n") and not flow_of(code, walrus=False).of("n")


def test_reaching_binding_is_the_last_before_the_use():
    f = flow_of("def f(x):\n    a = x\n    a = a * 2\n    return a\n")
    assert ast.unparse(f.reaching("a", 4, 11).value) == "a * 2"
    assert ast.unparse(f.reaching("a", 3, 8).value) == "x"
