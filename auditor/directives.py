"""In-source directives: `# auditor: accept RULE -- reason` and `# auditor: domain x=LO..HI`."""
from __future__ import annotations

import re
from dataclasses import dataclass, field

_DIRECTIVE = re.compile(r"#\s*auditor:\s*(?P<verb>accept|domain)\b(?P<rest>[^#]*)")
_RULES = re.compile(r"^\s*(?P<ids>[a-z0-9,\s-]*?)\s*(?:--.*)?$")
ALL = "*"


@dataclass(slots=True)
class Directives:
    """Per-line acceptances and domains of one file."""

    accepts: dict[int, frozenset[str]] = field(default_factory=dict)  #: line -> rule ids (or {"*"})
    domains: dict[int, str] = field(default_factory=dict)  #: line -> raw domain text
    comment_only: set[int] = field(default_factory=set)  #: lines holding nothing but a comment

    def accepted(self, rule: str, line: int) -> bool:
        """True when `rule` is accepted on `line` or by a comment-only line just above it."""
        for where in (line, line - 1):
            ids = self.accepts.get(where)
            if ids is None or (where != line and where not in self.comment_only):
                continue
            if ALL in ids or rule in ids:
                return True
        return False

    def domain_for(self, def_line: int) -> str | None:
        """The domain text on a `def` line or the line above it."""
        return self.domains.get(def_line) or self.domains.get(def_line - 1)


def parse_directives(source: str) -> Directives:
    """Find directives in comments. A cheap substring test skips files without any."""
    found = Directives()
    if "auditor:" not in source:
        return found
    for number, line in enumerate(source.splitlines(), start=1):
        if "auditor:" not in line:
            continue
        match = _DIRECTIVE.search(line)
        if match is None:
            continue
        if line.lstrip().startswith("#"):
            found.comment_only.add(number)
        rest = match.group("rest")
        if match.group("verb") == "domain":
            found.domains[number] = rest.strip()
            continue
        ids_match = _RULES.match(rest.split("--", 1)[0])
        ids = {i.strip() for i in (ids_match.group("ids") if ids_match else "").split(",") if i.strip()}
        found.accepts[number] = frozenset(ids) if ids else frozenset({ALL})
    return found
