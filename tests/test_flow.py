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


def _reaching_line(source: str, name: str, line: int, column: int) -> int | None:
    import ast as _ast

    from auditor.flow import analyse_scope

    found = analyse_scope(_ast.parse(source).body[0]).reaching(name, line, column)
    return None if found is None else found.line


def test_bindings_are_recorded_and_reached_in_source_order() -> None:
    # Python semantics: within one branch the assignment just above the use is the one in effect
    # (here line 7, not the `elif` body's line 5, which the walk used to record last)
    source = ("def f(c, d, a, b):\n    if c:\n        s = a\n    elif d:\n        s = b\n    else:\n"
              "        s = inv(a)\n        t = s\n    return s\n")
    assert _reaching_line(source, "s", 8, 12) == 7
    assert _reaching_line(source, "s", 9, 11) == 7  # after the if: the last written (one of three)


def test_an_except_handler_binding_only_reaches_inside_its_handler_or_as_a_fallback() -> None:
    source = ("def f(m):\n    try:\n        a = inv(m)\n    except E:\n        a = pinv(m)\n        b = a\n"
              "    return a\n")
    assert _reaching_line(source, "a", 7, 11) == 3  # after the try: the path normally taken
    assert _reaching_line(source, "a", 6, 12) == 5  # inside the handler: the handler's own
    fallback = "def f(m):\n    try:\n        g(m)\n    except E:\n        a = m\n    return a\n"
    assert _reaching_line(fallback, "a", 6, 11) == 5  # nothing else reaches
