"""Find, load and validate the rule units in `rules/` (installed as `auditor.rules`)."""
from __future__ import annotations

import ast
import functools
import importlib
import importlib.util
import inspect
import pkgutil
import re
import sys
from pathlib import Path
from types import ModuleType

from auditor.rule import Rule

_KEBAB = re.compile(r"^[a-z][a-z0-9]*(-[a-z0-9]+)*$")


class CatalogError(Exception):
    """A malformed rule module; names the file and what is wrong."""


def _rules_package() -> ModuleType:
    """Import `auditor.rules`; in a source checkout map it onto the top-level `rules/` folder."""
    try:
        return importlib.import_module("auditor.rules")
    except ModuleNotFoundError:
        folder = Path(__file__).resolve().parent.parent / "rules"
        init = folder / "__init__.py"
        if not init.is_file():
            raise CatalogError(f"rule catalog not found (looked for {folder})") from None
        spec = importlib.util.spec_from_file_location(
            "auditor.rules", init, submodule_search_locations=[str(folder)]
        )
        assert spec is not None and spec.loader is not None
        module = importlib.util.module_from_spec(spec)
        sys.modules["auditor.rules"] = module
        spec.loader.exec_module(module)
        return module


def class_name(rule_id: str) -> str:
    """'exp-minus-one' -> 'ExpMinusOne'."""
    return "".join(part.capitalize() for part in rule_id.split("-"))


def _verify(module: ModuleType, short: str) -> Rule:
    where = getattr(module, "__file__", short)
    classes = [
        obj for obj in vars(module).values()
        if inspect.isclass(obj) and issubclass(obj, Rule) and obj is not Rule and obj.__module__ == module.__name__
    ]
    if len(classes) != 1:
        raise CatalogError(f"{where}: expected exactly one Rule subclass, found {len(classes)}")
    cls = classes[0]
    rule_id = getattr(cls, "id", None)
    if not isinstance(rule_id, str) or not _KEBAB.match(rule_id):
        raise CatalogError(f"{where}: rule id {rule_id!r} is not kebab-case")
    if rule_id.replace("-", "_") != short:
        raise CatalogError(f"{where}: module name {short!r} does not match id {rule_id!r}")
    if cls.__name__ != class_name(rule_id):
        raise CatalogError(f"{where}: class {cls.__name__} should be named {class_name(rule_id)}")
    for attr in ("title", "severity", "summary", "node_types", "examples"):
        if not getattr(cls, attr, None):
            raise CatalogError(f"{where}: missing {attr}")
    if not any(e.flagged for e in cls.examples) or not any(not e.flagged for e in cls.examples):
        raise CatalogError(f"{where}: needs at least one flagged and one clean example")
    if not all(isinstance(t, type) and issubclass(t, ast.AST) for t in cls.node_types):
        raise CatalogError(f"{where}: node_types must be ast node classes")
    if not (module.__doc__ or "").strip():
        raise CatalogError(f"{where}: the module docstring (the rationale) is empty")
    cls.rationale = inspect.cleandoc(module.__doc__ or "")
    return cls()


@functools.cache
def load_catalog() -> tuple[Rule, ...]:
    """Every rule, sorted by id. Raises CatalogError on a malformed or failing module."""
    package = _rules_package()
    rules: dict[str, Rule] = {}
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"auditor.rules.{info.name}")
        rule = _verify(module, info.name)
        if rule.id in rules:
            raise CatalogError(f"{module.__file__}: duplicate rule id {rule.id!r}")
        rules[rule.id] = rule
    if not rules:
        raise CatalogError("the rule catalog is empty")
    return tuple(rules[k] for k in sorted(rules))


def rule_ids() -> tuple[str, ...]:
    return tuple(r.id for r in load_catalog())


def get_rule(rule_id: str) -> Rule | None:
    return next((r for r in load_catalog() if r.id == rule_id), None)
