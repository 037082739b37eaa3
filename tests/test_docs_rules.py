"""docs/rules/ must match what docs/generate_rules.py makes from the rule units."""
from __future__ import annotations

import difflib
import importlib.util
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _generator():
    spec = importlib.util.spec_from_file_location("generate_rules", ROOT / "docs" / "generate_rules.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_rule_pages_are_current():
    gen = _generator()
    problems = []
    for name, text in sorted(gen.pages().items()):
        path = ROOT / "docs" / "rules" / name
        old = path.read_text(encoding="utf-8") if path.is_file() else ""
        if old != text:
            diff = difflib.unified_diff(old.splitlines(), text.splitlines(), f"committed/{name}", f"generated/{name}", lineterm="")
            problems.append("\n".join(list(diff)[:40]))
    extra = [p.name for p in (ROOT / "docs" / "rules").glob("*.md") if p.name not in gen.pages()]
    problems += [f"docs/rules/{name} is no longer generated" for name in extra]
    assert not problems, "\n\n".join(problems) + f"\n\nregenerate with: {gen.COMMAND}"


def test_every_rule_has_a_page_with_its_method(catalog):
    gen = _generator()
    pages = gen.pages()
    for rule in catalog:
        page = pages[f"{rule.id}.md"]
        assert f"# `{rule.id}`" in page
        assert "## Flagged" in page and "## Clean" in page
        # the issue asks for the published method behind each fix on every page
        assert "## Method behind the fix" in page, f"{rule.id}: rule unit has no `method`"
        assert f"[`{rule.id}`]({rule.id}.md)" in pages["README.md"]
