"""Format-preserving edits: bytes outside the spans kept, imports placed once, CRLF, overlaps,
multi-line and statement spans, refusal of results that would not parse, atomic writes."""
from __future__ import annotations

import ast
import os
import re
import string

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from auditor.fix import FilePlan, read_python, write_plan
from auditor.model import Span
from auditor.import_needs import module_bindings
from auditor.rewrite import Edit, apply_edits, rewrite_one


def span_of_text(source: str, needle: str, nth: int = 0) -> Span:
    """The 1-based, end-exclusive character span of the nth occurrence of `needle` in `source`."""
    start = -1
    for _ in range(nth + 1):
        start = source.index(needle, start + 1)
    end = start + len(needle)

    def pos(offset: int) -> tuple[int, int]:
        before = source[:offset]
        line = len(re.findall(r"\r\n|\r|\n", before)) + 1
        line_start = max(before.rfind("\n"), before.rfind("\r")) + 1
        return line, offset - line_start + 1

    return Span(*pos(start), *pos(end))


def edit(source: str, needle: str, text: str, imports: tuple[str, ...] = (), nth: int = 0, label: str = "") -> Edit:
    return Edit(span_of_text(source, needle, nth), text, imports, label or needle, needle)


SOURCE = (
    '"""Invented thermal-drift lab: gain helpers."""\n'
    "import math\n"
    "\n"
    "\n"
    "def gain( rate ,scale=2 ):   # odd spacing is kept\n"
    "    # why: the sensor reports relative change\n"
    "    g = math.exp(rate)   -   1.0  # trailing comment\n"
    "    return g*scale\n"
)


def test_bytes_outside_the_span_are_identical():
    e = edit(SOURCE, "math.exp(rate)   -   1.0", "math.expm1(rate)", ("import math",))
    out = apply_edits(SOURCE, [e])
    start = SOURCE.index("math.exp(rate)")
    expected = SOURCE[:start] + "math.expm1(rate)" + SOURCE[start + len("math.exp(rate)   -   1.0"):]
    assert out.text == expected
    assert out.imports_added == ()  # `import math` is already bound
    assert "# why: the sensor reports relative change\n" in out.text
    assert "  # trailing comment\n" in out.text


def test_import_added_once_after_docstring_and_future_imports():
    # PEP 236: `from __future__` imports must come first after the docstring; PEP 8: imports
    # go after the module docstring, at the top of the file.
    src = '"""Doc."""\nfrom __future__ import annotations\n\nimport os\n\n\ndef f(a, b):\n    return (a + 0, b + 0)\n'
    edits = [edit(src, "a + 0", "math.expm1(a)", ("import math",)), edit(src, "b + 0", "math.log1p(b)", ("import math",))]
    out = apply_edits(src, edits)
    assert out.error is None and len(out.applied) == 2
    assert out.text.count("import math\n") == 1
    assert out.imports_added == ("import math",)
    # sorted position among the existing imports (math < os), future import still first
    assert out.text.startswith('"""Doc."""\nfrom __future__ import annotations\n\nimport math\nimport os\n')
    assert out.text.endswith("    return (math.expm1(a), math.log1p(b))\n")


def test_import_sorted_after_earlier_module_and_blank_groups_kept():
    src = "import math\n\nimport numpy as np\n\nx = 1\n"
    out = apply_edits(src, [edit(src, "1", "scipy.special.erfc(2)", ("import scipy.special",))])
    assert out.text == "import math\n\nimport numpy as np\nimport scipy.special\n\nx = scipy.special.erfc(2)\n"


def test_no_imports_yet_inserts_after_docstring_keeping_comments_with_code():
    src = '"""Doc."""\n\n# helper for the bench rig\ndef f(x):\n    return x\n'
    out = apply_edits(src, [edit(src, "x", "math.sqrt(x)", ("import math",), nth=1)])
    assert out.text == '"""Doc."""\n\nimport math\n\n\n# helper for the bench rig\ndef f(x):\n    return math.sqrt(x)\n'


def test_header_comments_stay_first():
    src = "#!/usr/bin/env python3\n# -*- coding: utf-8 -*-\nx = 2.0\n"
    out = apply_edits(src, [edit(src, "2.0", "math.sqrt(2.0)", ("import math",))])
    assert out.text == "#!/usr/bin/env python3\n# -*- coding: utf-8 -*-\nimport math\n\nx = math.sqrt(2.0)\n"


def test_file_style_alias_reused_and_from_import_merged():
    src = "import numpy as np\nfrom scipy.special import erfc\n\ny = np.log(1 + x)\nz = w\n"
    e1 = edit(src, "np.log(1 + x)", "np.log1p(x)", ("import numpy as np",))
    e2 = edit(src, "w", "logsumexp(w)", ("from scipy.special import logsumexp",))
    out = apply_edits(src, [e1, e2])
    assert out.text == "import numpy as np\nfrom scipy.special import erfc, logsumexp\n\ny = np.log1p(x)\nz = logsumexp(w)\n"
    assert out.imports_added == ("from scipy.special import logsumexp",)


def test_submodule_import_is_not_mistaken_for_the_package():
    src = "import scipy\n\nv = q\n"
    out = apply_edits(src, [edit(src, "q", "scipy.special.erfc(q)", ("import scipy.special",))])
    assert "import scipy\nimport scipy.special\n" in out.text


def test_import_that_would_rebind_a_name_is_refused():
    src = "import cmath as math\n\nv = q\n"
    out = apply_edits(src, [edit(src, "q", "math.sqrt(q)", ("import math",))])
    assert out.text == src and not out.applied
    assert "rebind" in out.skipped[0].reason


def test_crlf_line_endings_are_kept_everywhere():
    src = "def total(xs):\r\n    s = 0.0\r\n    for v in xs:\r\n        s += v\r\n    return s\r\n"
    loop = "for v in xs:\r\n        s += v"
    out = apply_edits(src, [edit(src, loop, "s = math.fsum(\n    xs\n)", ("import math",))])
    assert out.error is None, out
    assert re.search(r"(?<!\r)\n", out.text) is None  # no bare LF anywhere
    assert out.text == ("import math\r\n\r\n\r\ndef total(xs):\r\n    s = 0.0\r\n    s = math.fsum(\r\n        xs\r\n"
                        "    )\r\n    return s\r\n")


def test_nested_edits_keep_the_outer_one():
    src = "y = (a - b) * (a + b)\n"
    outer = edit(src, "(a - b) * (a + b)", "a * a - b * b", label="outer")
    inner = edit(src, "a - b", "b - a", label="inner")
    out = apply_edits(src, [inner, outer])
    assert out.text == "y = a * a - b * b\n"
    assert [s.edit.label for s in out.skipped] == ["inner"]
    assert out.skipped[0].reason.startswith("overlaps outer")


def test_crossing_edits_keep_the_first_and_duplicates_apply_once():
    src = "y = a + b + c\n"
    first, second = edit(src, "a + b", "fsum1", label="first"), edit(src, "b + c", "fsum2", label="second")
    out = apply_edits(src, [second, first, first])
    assert out.text == "y = fsum1 + c\n"
    reasons = sorted(s.reason for s in out.skipped)
    assert reasons == ["duplicate of first", "overlaps first, which is applied; run fix again for this one"]


def test_multi_line_expression_span():
    src = "def f(x, y):\n    r = math.sqrt(\n        x * x\n        + y * y\n    )  # radius\n    return r\n"
    out = apply_edits("import math\n" + src, [edit("import math\n" + src, "math.sqrt(\n        x * x\n        + y * y\n    )",
                                                   "math.hypot(x, y)", ("import math",))])
    assert out.text == "import math\ndef f(x, y):\n    r = math.hypot(x, y)  # radius\n    return r\n"


def test_statement_span_is_reindented_to_its_place():
    src = ("class Bench:\n    def run(self, xs):\n        if xs:\n            s = 0.0\n            for v in xs:\n"
           "                s += v\n            return s\n        return None\n")
    loop = "for v in xs:\n                s += v"
    replacement = "c = 0.0\nfor v in xs:\n    y = v - c\n    t = s + y\n    c = (t - s) - y\n    s = t\n"
    out = apply_edits(src, [edit(src, loop, replacement)])
    assert out.error is None and out.applied
    body = "            c = 0.0\n            for v in xs:\n                y = v - c\n"
    assert body in out.text
    assert "                s = t\n            return s\n" in out.text
    ast.parse(out.text)


def test_statement_replacement_already_indented_is_accepted():
    # Column 0 is the convention; a replacement that only parses with its indentation taken as
    # absolute is placed as written.
    src = "def f(xs):\n    s = 0\n    for v in xs:\n        s += v\n    return s\n"
    replacement = "total = math.fsum(xs)\n    s += total"
    out = apply_edits(src, [edit(src, "for v in xs:\n        s += v", replacement)])
    assert out.text == "def f(xs):\n    s = 0\n    total = math.fsum(xs)\n    s += total\n    return s\n"


def test_rewrite_that_breaks_the_syntax_is_skipped_and_file_unchanged():
    src = "def f(x):\n    return x - 1\n"
    out = apply_edits(src, [edit(src, "x - 1", "math.expm1(x")])
    assert out.text == src and not out.applied and not out.changed
    assert "does not parse" in out.skipped[0].reason


def test_unparsable_file_is_refused():
    src = "def f(x:\n    return x - 1\n"
    out = apply_edits(src, [edit(src, "x - 1", "y")])
    assert out.error is not None and out.text == src


def test_stale_and_out_of_range_spans_are_skipped():
    src = "y = a - b\n"
    stale = Edit(Span(1, 5, 1, 10), "z", (), "stale", "c - d")
    outside = Edit(Span(4, 1, 4, 3), "z", (), "outside")
    out = apply_edits(src, [stale, outside])
    assert out.text == src
    assert {s.edit.label: s.reason for s in out.skipped} == {
        "stale": "the source changed since it was measured", "outside": "its span lies outside the file"}


def test_character_columns_after_non_ascii_text():
    src = "é = 1\nlabel = 'µ-probe'; y = a - b\n"
    out = apply_edits(src, [edit(src, "a - b", "b")])
    assert out.text == "é = 1\nlabel = 'µ-probe'; y = b\n"


def test_module_bindings_ignore_function_local_imports():
    tree = ast.parse("import numpy as np\ntry:\n    import scipy\nexcept ImportError:\n    pass\ndef f():\n    import math\n")
    assert module_bindings(tree) == {"np": "numpy", "scipy": "scipy"}


# -- property: arbitrary layouts around the edited spans survive byte for byte ----------------

_blank = st.text(alphabet=" ", max_size=3)
_comment = st.text(alphabet=string.ascii_letters + " #'\"-", max_size=20).map(lambda s: f"  # {s}" if s else "")


@st.composite
def modules(draw):
    n = draw(st.integers(2, 8))
    lines, targets = [], []
    for i in range(n):
        left, right = draw(_blank), draw(_blank)
        expr = f"math.exp(v{i}){left}-{right}1.0"
        lines.append(f"w{i} = {expr}{draw(_comment)}")
        targets.append(expr)
    newline = draw(st.sampled_from(["\n", "\r\n"]))
    chosen = draw(st.lists(st.integers(0, n - 1), unique=True, min_size=1))
    return newline.join(lines) + newline, targets, chosen


@settings(max_examples=60, deadline=None)
@given(modules())
def test_property_only_the_spans_change(case):
    src, targets, chosen = case
    edits = [edit(src, targets[i], f"math.expm1(v{i})", ("import math",)) for i in chosen]
    out = apply_edits(src, edits)
    expected = src
    for i in sorted(chosen, reverse=True):
        expected = expected.replace(targets[i], f"math.expm1(v{i})", 1)
    newline = "\r\n" if "\r\n" in src else "\n"
    assert out.text == f"import math{newline}{newline}" + expected
    assert apply_edits(out.text, []).text == out.text


# -- writing ----------------------------------------------------------------------------------


def _plan(path, text_after: str) -> FilePlan:
    data, encoding, text = read_python(str(path))
    outcome = apply_edits(text, [])
    outcome = type(outcome)(text_after, (Edit(Span(1, 1, 1, 1), ""),), ())
    return FilePlan(path.name, str(path), data, encoding, text, outcome, (), ())


def test_atomic_write_leaves_no_temp_files_and_keeps_mode(tmp_path):
    target = tmp_path / "probe.py"
    target.write_bytes(b"x = 1\n")
    os.chmod(target, 0o640)
    assert write_plan(_plan(target, "x = 2\n")) is None
    assert target.read_bytes() == b"x = 2\n"
    assert os.listdir(tmp_path) == ["probe.py"]
    assert os.stat(target).st_mode & 0o777 == 0o640


def test_write_refuses_text_that_does_not_parse(tmp_path):
    target = tmp_path / "probe.py"
    target.write_bytes(b"x = 1\n")
    problem = write_plan(_plan(target, "x = (\n"))
    assert problem is not None and "would not parse" in problem
    assert target.read_bytes() == b"x = 1\n" and os.listdir(tmp_path) == ["probe.py"]


def test_failed_replace_leaves_original_and_no_temp_file(tmp_path, monkeypatch):
    target = tmp_path / "probe.py"
    target.write_bytes(b"x = 1\n")
    plan = _plan(target, "x = 2\n")

    def refuse(src, dst):  # the rename fails as on a full or read-only folder
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(os, "replace", refuse)
    assert "Permission denied" in (write_plan(plan) or "")
    assert target.read_bytes() == b"x = 1\n" and os.listdir(tmp_path) == ["probe.py"]


def test_write_keeps_bom_and_declared_encoding(tmp_path):
    # PEP 263 coding line and the UTF-8 BOM: the bytes written use the file's own encoding.
    bom = tmp_path / "bom.py"
    bom.write_bytes(b"\xef\xbb\xbfx = 1\r\n")
    assert write_plan(_plan(bom, "x = 2\r\n")) is None
    assert bom.read_bytes() == b"\xef\xbb\xbfx = 2\r\n"
    latin = tmp_path / "latin.py"
    latin.write_bytes(b"# -*- coding: latin-1 -*-\nlabel = '\xb5'\nx = 1\n")
    assert write_plan(_plan(latin, "# -*- coding: latin-1 -*-\nlabel = '\xb5'\nx = 2\n")) is None
    assert latin.read_bytes() == b"# -*- coding: latin-1 -*-\nlabel = '\xb5'\nx = 2\n"


def test_write_refuses_a_file_changed_meanwhile(tmp_path):
    target = tmp_path / "probe.py"
    target.write_bytes(b"x = 1\n")
    plan = _plan(target, "x = 2\n")
    target.write_bytes(b"x = 3\n")
    assert "changed on disk" in (write_plan(plan) or "")
    assert target.read_bytes() == b"x = 3\n"


def test_new_spans_locate_each_replacement_in_the_result():
    src = "def f(a, b):\r\n    x = a - b\r\n    for k in b:\r\n        x += k\r\n    return (a + 0) * x\r\n"
    loop = "for k in b:\r\n        x += k"
    edits = [edit(src, "a - b", "math.fsum([a, -b])", ("import math",)), edit(src, loop, "x = x + math.fsum(\n    b)"),
             edit(src, "a + 0", "a")]
    out = apply_edits(src, edits)
    assert len(out.new_spans) == 3
    lines = out.text.split("\r\n")
    pieces = []
    for span in out.new_spans:
        if span.line == span.end_line:
            pieces.append(lines[span.line - 1][span.column - 1 : span.end_column - 1])
        else:
            pieces.append("\r\n".join([lines[span.line - 1][span.column - 1 :], *lines[span.line : span.end_line - 1],
                                       lines[span.end_line - 1][: span.end_column - 1]]))
    assert pieces == ["math.fsum([a, -b])", "x = x + math.fsum(\r\n        b)", "a"]


def test_absolute_indentation_matching_the_replaced_block_is_kept():
    # Both readings parse here; the one as deep as the replaced loop body (8 spaces) wins.
    src = "def tail(u, n):\n    total = term = 1.0\n    for k in range(1, n):\n        term *= -k / u\n        total += term\n    return total\n"
    loop = "for k in range(1, n):\n        term *= -k / u\n        total += term"
    replacement = ("for k in range(1, n):\n        nxt = term * (-k / u)\n        if abs(nxt) > abs(term):\n"
                   "            break\n        term = nxt\n        total += term")
    out = apply_edits(src, [edit(src, loop, replacement)])
    assert "    for k in range(1, n):\n        nxt = term * (-k / u)\n        if abs(nxt) > abs(term):\n            break\n" in out.text


def test_a_guarded_rewrite_already_in_place_is_not_nested_again():
    # The stable quadratic root keeps the textbook form in the branch where it is safe; a rule
    # that flags that branch again must not make a second fix wrap it once more.
    guarded = "(2.0 * c / (-b - math.sqrt(d)) if b > 0 else (-b + math.sqrt(d)) / (2.0 * a))"
    src = f"import math\n\ndef root(a, b, c, d):\n    return {guarded}\n"
    inner = "(-b + math.sqrt(d)) / (2.0 * a)"
    out = apply_edits(src, [edit(src, inner, guarded)])
    assert out.text == src and not out.applied
    assert out.skipped[0].reason.startswith("already rewritten")
    first = "def root(a, b, c, d):\n    return (-b + math.sqrt(d)) / (2.0 * a)\n"
    assert apply_edits(first, [edit(first, inner, guarded)]).applied  # the first time it applies


def test_rewrite_one_gives_the_text_and_the_new_span():
    src = "def f(x):\n    return math.exp(x) - 1.0  # gain\n"
    got = rewrite_one(src, span_of_text(src, "math.exp(x) - 1.0"), "math.expm1(x)", ("import math",))
    assert got == ("import math\n\n\ndef f(x):\n    return math.expm1(x)  # gain\n", Span(5, 12, 5, 25))
    assert "does not parse" in rewrite_one(src, span_of_text(src, "math.exp(x)"), "math.expm1(")
