"""Words about rules: the catalog table and one rule's explanation (also the docs' source)."""
from __future__ import annotations

import textwrap
from collections.abc import Sequence

from auditor.rule import Rule


def rules_table(rules: Sequence[Rule]) -> str:
    width = max(len(r.id) for r in rules)
    lines = [f"{'rule':<{width}}  {'severity':<8}  summary"]
    lines += [f"{r.id:<{width}}  {r.severity.value:<8}  {r.summary}" for r in rules]
    return "\n".join(lines) + f"\n\n{len(rules)} rules; `auditor explain RULE` for details.\n"


def _indent(code: str) -> str:
    return "\n".join("    " + line if line else "" for line in code.strip("\n").splitlines())


def explain_sections(rule: Rule) -> list[tuple[str, str]]:
    """(heading, body) pairs shared by `auditor explain` and docs/rules/."""
    bad = next(e for e in rule.examples if e.flagged)
    good = next(e for e in rule.examples if not e.flagged)
    sections = [
        ("Summary", f"{rule.summary} (default severity: {rule.severity.value})"),
        ("Why", rule.rationale),
        ("Flagged", _indent(bad.code)),
        ("Clean", _indent(good.code)),
    ]
    if rule.rewrite_template or bad.rewrite:
        sections.append(("Rewrite", _indent(bad.rewrite or rule.rewrite_template)))
    if rule.method:
        sections.append(("Method behind the fix", rule.method))
    return sections


def explain_text(rule: Rule) -> str:
    out = [f"{rule.id}: {rule.title}", ""]
    for heading, body in explain_sections(rule):
        out += [f"{heading}:", body, ""]
    return "\n".join(out)


def explain_markdown(rule: Rule) -> str:
    """A docs/rules page for one rule (same sections as `auditor explain`)."""
    out = [f"# `{rule.id}`: {rule.title}", ""]
    for heading, body in explain_sections(rule):
        out += [f"## {heading}", ""]
        if heading in ("Flagged", "Clean", "Rewrite"):
            out += ["```python", textwrap.dedent(body), "```", ""]
        else:
            out += [body, ""]
    return "\n".join(out)
