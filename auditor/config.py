"""Effective configuration: `[tool.auditor]` in pyproject.toml, overridden by the command line."""
from __future__ import annotations

import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from auditor.model import Severity

FORMATS = ("text", "json", "sarif", "html")
FAIL_LEVELS = ("error", "warning", "note", "never")


class ConfigError(Exception):
    """A bad key, value or rule id in the configuration or on the command line (exit 2)."""


@dataclass(frozen=True, slots=True)
class Config:
    """Every setting a run uses. Field names mirror the long options (kebab-case in TOML)."""

    format: str = "text"
    output: str | None = None
    only: frozenset[str] | None = None  #: rule ids to run; None runs all
    skip: frozenset[str] = frozenset()
    jobs: int = 1
    baseline: str | None = None
    fail_on: Severity | None = Severity.WARNING  #: None means never fail
    exclude: tuple[str, ...] = ()  #: gitignore-style patterns, relative to the project root
    samples: int = 256
    seed: int = 0
    domains: Mapping[str, str] = field(default_factory=dict)  #: "module:function" -> "x=LO..HI, ..."
    changed_since: str | None = None
    cache: bool = False
    root: Path | None = None  #: folder holding the pyproject.toml the settings came from

    def with_overrides(self, **changes: Any) -> Config:
        """A copy with the non-None overrides applied (the command line wins)."""
        return replace(self, **{k: v for k, v in changes.items() if v is not None})

    def enabled(self, rule_id: str) -> bool:
        if self.only is not None and rule_id not in self.only:
            return False
        return rule_id not in self.skip


def parse_fail_on(value: str) -> Severity | None:
    if value not in FAIL_LEVELS:
        raise ConfigError(f"fail-on must be one of {', '.join(FAIL_LEVELS)}, not {value!r}")
    return None if value == "never" else Severity(value)


def parse_rule_list(value: str | Iterable[str], known: Iterable[str], key: str) -> frozenset[str]:
    """'a,b' or ['a', 'b'] -> frozenset, refusing unknown rule ids."""
    items = value.split(",") if isinstance(value, str) else list(value)
    ids = frozenset(str(i).strip() for i in items if str(i).strip())
    unknown = sorted(ids - set(known))
    if unknown:
        raise ConfigError(f"{key}: unknown rule id {', '.join(unknown)} (see `auditor rules`)")
    return ids


def find_pyproject(start: Path) -> Path | None:
    """The nearest pyproject.toml at or above `start` that has a [tool.auditor] table."""
    start = start.resolve()
    folder = start if start.is_dir() else start.parent
    for candidate in (folder, *folder.parents):
        path = candidate / "pyproject.toml"
        if path.is_file():
            try:
                data = tomllib.loads(path.read_text(encoding="utf-8"))
            except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
                raise ConfigError(f"{path}: cannot read: {exc}") from None
            if "auditor" in data.get("tool", {}):
                return path
    return None


def _positive_int(key: str, value: Any) -> int:
    if not isinstance(value, int) or isinstance(value, bool) or value < 1:
        raise ConfigError(f"[tool.auditor] {key} must be a positive integer, not {value!r}")
    return value


def _strings(key: str, value: Any) -> tuple[str, ...]:
    if isinstance(value, str):
        return (value,)
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise ConfigError(f"[tool.auditor] {key} must be a list of strings")
    return tuple(value)


def from_table(table: Mapping[str, Any], known_rules: Iterable[str], root: Path | None) -> Config:
    """Build a Config from a `[tool.auditor]` table, refusing unknown keys and values."""
    known = tuple(known_rules)
    values: dict[str, Any] = {"root": root}
    for key, value in table.items():
        if key == "format":
            if value not in FORMATS:
                raise ConfigError(f"[tool.auditor] format must be one of {', '.join(FORMATS)}")
            values["format"] = value
        elif key in ("only", "skip"):
            values[key] = parse_rule_list(value if isinstance(value, str) else _strings(key, value), known, key)
        elif key == "fail-on":
            values["fail_on"] = parse_fail_on(str(value))
        elif key in ("jobs", "samples"):
            values[key] = _positive_int(key, value)
        elif key == "seed":
            if not isinstance(value, int) or isinstance(value, bool):
                raise ConfigError("[tool.auditor] seed must be an integer")
            values["seed"] = value
        elif key in ("exclude",):
            values["exclude"] = _strings(key, value)
        elif key in ("baseline", "output", "changed-since"):
            if not isinstance(value, str):
                raise ConfigError(f"[tool.auditor] {key} must be a string")
            values[key.replace("-", "_")] = value
        elif key == "cache":
            if not isinstance(value, bool):
                raise ConfigError("[tool.auditor] cache must be true or false")
            values["cache"] = value
        elif key == "domains":
            if not isinstance(value, dict) or not all(isinstance(v, str) for v in value.values()):
                raise ConfigError('[tool.auditor.domains] maps "module:function" to "x=LO..HI, ..." strings')
            values["domains"] = dict(value)
        else:
            raise ConfigError(f"[tool.auditor] unknown key {key!r}")
    return Config(**values)


def load_config(start: Path, known_rules: Iterable[str]) -> Config:
    """The configuration found upward from `start`, or the defaults."""
    path = find_pyproject(start)
    if path is None:
        return Config()
    table = tomllib.loads(path.read_text(encoding="utf-8"))["tool"]["auditor"]
    if not isinstance(table, dict):
        raise ConfigError(f"{path}: [tool.auditor] must be a table")
    return from_table(table, known_rules, path.parent)
