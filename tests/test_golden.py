"""Golden reports of samples/: `measure` in JSON, text and SARIF, pinned with stated tolerances.

Measured figures may move slightly with the platform's libm, so they are compared within
a tolerance (digits lost and log10 condition numbers: +-0.5 digit; reference values and
series term sizes: relative 1e-3); the float result at the worst input is not compared
(cancellation amplifies last-bit libm differences there). Everything else must match
exactly. Regenerate after a reviewed change with `python tests/golden/regenerate.py`.
"""
from __future__ import annotations

import difflib
import importlib.util
import json
import math
import re
from pathlib import Path

import jsonschema
import pytest

HERE = Path(__file__).resolve().parent / "golden"
DIGITS = 0.5  #: absolute tolerance, decimal digits (digits lost, log10 condition, cancellation)
RELATIVE = 1e-3  #: relative tolerance for reference values and term magnitudes
_DIGIT_KEYS = {"digits_lost_max", "digits_lost_median", "condition_log10_max", "cancellation_log10",
               "digits_lost_max_after"}
_RELATIVE_KEYS = {"reference_value", "smallest_term", "truncation_error"}
_SKIPPED_KEYS = {"float_value"}


def _regenerate():
    spec = importlib.util.spec_from_file_location("golden_regenerate", HERE / "regenerate.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def generated():
    module = _regenerate()
    return module, module.build()


def _close(key: str, old, new) -> bool:
    if key in _SKIPPED_KEYS:
        return True
    if old is None or new is None:
        return old is new
    if key in _DIGIT_KEYS:
        return abs(float(old) - float(new)) <= DIGITS
    if key in _RELATIVE_KEYS:
        try:
            a, b = float(old), float(new)
        except ValueError:  # a non-numeric result (a boolean test) is compared as text
            return old == new
        return a == b or (math.isfinite(a) and abs(a - b) <= RELATIVE * max(abs(a), abs(b)))
    return old == new


def mismatches(old, new, key: str = "", where: str = "") -> list[str]:
    """Paths where two JSON values differ beyond the tolerances."""
    if isinstance(old, dict) and isinstance(new, dict):
        out = [f"{where}.{k}: only in {'golden' if k in old else 'new'}" for k in old.keys() ^ new.keys()]
        for k in old.keys() & new.keys():
            out += mismatches(old[k], new[k], k, f"{where}.{k}")
        return out
    if isinstance(old, list) and isinstance(new, list):
        if len(old) != len(new):
            return [f"{where}: {len(old)} items in the golden, {len(new)} now"]
        return [m for i, (a, b) in enumerate(zip(old, new)) for m in mismatches(a, b, key, f"{where}[{i}]")]
    if key == "worst_inputs" or where.split(".")[-2:-1] == ["worst_inputs"]:
        return [] if _close("reference_value", old, new) else [f"{where}: {old!r} -> {new!r}"]
    return [] if _close(key, old, new) else [f"{where}: {old!r} -> {new!r}"]


_NUMBER = re.compile(r"-?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def text_mismatches(old: str, new: str) -> list[str]:
    """Lines that differ beyond +-DIGITS in their decimal numbers (the text shows measured figures)."""
    old_lines, new_lines = old.splitlines(), new.splitlines()
    if len(old_lines) != len(new_lines):
        return [f"{len(old_lines)} lines in the golden, {len(new_lines)} now"]
    out = []
    for n, (a, b) in enumerate(zip(old_lines, new_lines), start=1):
        if a == b:
            continue
        na, nb = _NUMBER.findall(a), _NUMBER.findall(b)
        same_shape = _NUMBER.sub("#", a) == _NUMBER.sub("#", b) and len(na) == len(nb)
        if not same_shape or not all(_near(float(x), float(y)) for x, y in zip(na, nb)):
            out.append(f"line {n}")
    return out


def _near(x: float, y: float) -> bool:
    """Text figures: +-DIGITS for small numbers (digits, log10s), relative for the rest."""
    if max(abs(x), abs(y)) < 100:
        return abs(x - y) <= DIGITS
    return abs(x - y) <= RELATIVE * max(abs(x), abs(y))


def _fail(fmt: str, old: str, new: str, problems: list[str], command: str) -> None:
    diff = "\n".join(difflib.unified_diff(old.splitlines(), new.splitlines(), f"golden/samples.{fmt}",
                                          f"now/samples.{fmt}", lineterm="", n=2))
    pytest.fail(f"samples.{fmt} differs beyond tolerance at {', '.join(problems[:10])}\n{diff[:6000]}\n\n"
                f"if the change is intended, review it and regenerate with: {command}")


@pytest.mark.parametrize("fmt", ["json", "sarif"])
def test_json_goldens(generated, fmt):
    module, built = generated
    path = module.golden_path(fmt)
    assert path.is_file(), f"missing {path}; create it with {module.REGENERATE}"
    old_text = path.read_text(encoding="utf-8")
    problems = mismatches(json.loads(old_text), json.loads(built[fmt]))
    if problems:
        _fail(fmt, old_text, built[fmt], problems, module.REGENERATE)


def test_text_golden(generated):
    module, built = generated
    old_text = module.golden_path("txt").read_text(encoding="utf-8")
    problems = text_mismatches(old_text, built["txt"])
    if problems:
        _fail("txt", old_text, built["txt"], problems, module.REGENERATE)


def test_sarif_golden_is_valid(sarif_schema):
    # SARIF 2.1.0 schema (OASIS standard), as CONTRACT.md requires
    jsonschema.validate(json.loads((HERE / "samples.sarif").read_text(encoding="utf-8")), sarif_schema)


def test_golden_json_is_contract_shaped():
    data = json.loads((HERE / "samples.json").read_text(encoding="utf-8"))
    assert data["schema"] == "auditor-report/1" and not data["errors"]
    assert data["stats"]["files"] == 5


def test_tolerance_catches_real_changes():
    # the comparison must fail on a changed verdict and a figure moved by more than the tolerance
    base = {"measurement": {"verdict": "unstable", "digits_lost_max": 8.0, "reference_value": "1.5e-9"}}
    assert not mismatches(base, {"measurement": {**base["measurement"], "digits_lost_max": 8.4}})
    assert mismatches(base, {"measurement": {**base["measurement"], "digits_lost_max": 8.6}})
    assert mismatches(base, {"measurement": {**base["measurement"], "verdict": "benign"}})
    assert mismatches(base, {"measurement": {**base["measurement"], "reference_value": "1.6e-9"}})
    assert text_mismatches("lost 8.2 digits", "lost 8.4 digits") == []
    assert text_mismatches("lost 8.2 digits", "lost 9.2 digits") == ["line 1"]
