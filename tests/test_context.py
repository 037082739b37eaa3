"""Context facts shared by rules: source segments, parents and scopes."""
from __future__ import annotations

import ast

from hypothesis import given, settings
from hypothesis import strategies as st

from auditor.rule import Context

WORDS = st.sampled_from(["x", "é", "ñandú", "a1", "Δt", "µ", "b"])


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(WORDS, WORDS, st.sampled_from(["\n", "\r\n"])), min_size=1, max_size=6))
def test_segment_matches_the_standard_library(rows):
    # the standard library's ast.get_source_segment is the reference for the text of a node
    source = "".join(f"{a} = ({b} +\n  '{a}') * f({b}, '{a}'){end}" for a, b, end in rows)
    tree = ast.parse(source)
    ctx = Context(tree, "t.py", source)
    for node in ast.walk(tree):
        if getattr(node, "end_col_offset", None) is not None:
            assert ctx.segment(node) == ast.get_source_segment(source, node)


def test_parents_and_scopes():
    source = "def f(x):\n    def g(y):\n        return y + 1\n    return g(x) * 2\nz = f(3)\n"
    tree = ast.parse(source)
    ctx = Context(tree, "t.py", source)
    f, assign = tree.body
    g = f.body[0]
    inner = g.body[0].value
    assert ctx.scope(inner) is g and ctx.scope(inner.left) is g
    assert ctx.scope(g) is f and ctx.scope(f.body[1].value) is f
    assert ctx.scope(assign.value) is tree and ctx.scope(f) is tree
    assert ctx.parent(inner) is g.body[0] and ctx.parent(tree) is None
    made = ast.Name("q", ast.Load())  # a node a rule builds is outside the tree
    assert ctx.scope(made) is tree and ctx.parent(made) is None


def test_text_prefilters():
    source = "import numpy as np\n# determine the deterministic part\nq = np.linalg.slogdet(a)\nr = x ** k\n"
    ctx = Context(ast.parse(source), "t.py", source)
    assert not ctx.mentions("det")  # whole words only: determine, slogdet are not det
    assert ctx.mentions("det", "slogdet") and ctx.mentions("**")
    assert ctx.matches(r"\*\*") and not ctx.matches(r"%\s*2\b")


@settings(max_examples=200, deadline=None)
@given(st.text(alphabet="detx_ (.)é1\n", max_size=40))
def test_whole_word_search_agrees_with_the_regex_word_boundary(text):
    # Python's re \b (Unicode word characters) is the reference for "a whole word"
    import re

    from auditor.rule import text_mentions

    assert text_mentions(text, ("det",)) == (re.search(r"\bdet\b", text) is not None)
