"""Recorded argument values (from the pytest plugin) that the dynamic pass replays as its inputs.

File format (JSON): {"schema": "auditor-inputs/1", "functions": {"module:function": [{"x": 1.5, "n": 3}, ...]}}
where module is the file's path relative to the project root without `.py`, slashes as dots
(`lab/optics.py` -> `lab.optics`), and function the qualified name (`Lens.focal`, `outer.inner`).
Only finite numeric scalars are kept; ints stay ints (loop counts must remain integers).
"""
from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from pathlib import Path, PurePosixPath

from auditor.baseline import write_atomically
from auditor.config import ConfigError

SCHEMA = "auditor-inputs/1"

Samples = dict[str, list[dict[str, float]]]


class RecordedError(ConfigError):
    """The inputs file is missing, unreadable or not ours (exit 2)."""


def module_key(rel_path: str, qualname: str) -> str:
    """'lab/optics.py', 'Lens.focal' -> 'lab.optics:Lens.focal' (an `__init__.py` names its package)."""
    parts = list(PurePosixPath(rel_path).with_suffix("").parts)
    if len(parts) > 1 and parts[-1] == "__init__":
        parts.pop()
    return f"{'.'.join(parts)}:{qualname}"


def _clean(sample: Mapping[str, object]) -> dict[str, float] | None:
    out: dict[str, float] = {}
    for name, value in sample.items():
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            continue
        if isinstance(value, float) and not math.isfinite(value):
            continue
        out[str(name)] = value
    return out or None


def save_recorded(path: str | Path, samples: Mapping[str, Sequence[Mapping[str, object]]]) -> None:
    """Write the samples atomically (temp file + rename), dropping non-numeric and non-finite values."""
    functions: Samples = {}
    for key in sorted(samples):
        kept = [c for c in (_clean(s) for s in samples[key]) if c is not None]
        if kept:
            functions[key] = kept
    text = json.dumps({"schema": SCHEMA, "functions": functions}, indent=1, sort_keys=True) + "\n"
    write_atomically(Path(path), text)


def load_recorded(path: str | Path) -> Samples:
    """'module:function' -> list of {argument: value}; RecordedError when the file is not usable."""
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as exc:
        raise RecordedError(f"cannot read inputs file {path}: {exc.strerror or exc}") from None
    except ValueError as exc:
        raise RecordedError(f"inputs file {path} is not valid JSON: {exc}") from None
    if not isinstance(data, dict) or data.get("schema") != SCHEMA or not isinstance(data.get("functions"), dict):
        raise RecordedError(f"{path} is not a recorded-inputs file (schema {SCHEMA})")
    out: Samples = {}
    for key, rows in data["functions"].items():
        if not isinstance(key, str) or ":" not in key or not isinstance(rows, list):
            raise RecordedError(f"{path}: bad entry {key!r} (expected 'module:function' -> list of samples)")
        out[key] = [c for c in (_clean(r) for r in rows if isinstance(r, dict)) if c is not None]
    return out
