"""pytest plugin: `--auditor-record FILE` records the numeric arguments reaching functions that hold findings.

At session start the project (pytest's rootdir) is scanned statically to list the functions with
findings. While the user's own tests run, a profile hook sees every Python call; it looks each code
object up once (by identity) and, for the listed functions only, keeps the finite numeric scalar
arguments, at most CAP samples per function (reservoir sampling, seeded). `auditor measure
--inputs FILE` replays them. Without the option the plugin does nothing.
"""
from __future__ import annotations

import os
import random
import sys
import threading
from pathlib import Path
from types import CodeType, FrameType
from typing import Any

CAP = 200  #: samples kept per function
_UNSEEN = object()


def pytest_addoption(parser: Any) -> None:
    group = parser.getgroup("auditor", "numerical cancellation auditor")
    group.addoption(
        "--auditor-record", metavar="FILE", default=None,
        help="record numeric arguments of functions with auditor findings into FILE (for `auditor measure --inputs`)",
    )


def pytest_configure(config: Any) -> None:
    target = config.getoption("auditor_record", None)
    if target:
        out = Path(config.invocation_params.dir) / target
        config.pluginmanager.register(Recorder(Path(config.rootpath), out), "auditor-recorder")


def find_targets(root: Path) -> dict[str, dict[str, str]]:
    """Real file path -> {qualified function name -> 'module:function'} for functions holding findings."""
    from auditor.catalog import rule_ids
    from auditor.config import load_config
    from auditor.recorded import module_key
    from auditor.scan import enabled_rule_ids, scan_refs
    from auditor.sources import discover

    config = load_config(root, rule_ids())
    refs, _ = discover([str(root)], config.exclude, base=root)
    refs = [r for r in refs if r.display.endswith(".py")]
    targets: dict[str, dict[str, str]] = {}
    for result in scan_refs(refs, enabled_rule_ids(config), 1):
        for f in result.findings:
            if f.function:
                real = os.path.realpath(root / f.path)
                targets.setdefault(real, {})[f.function] = module_key(f.path, f.function)
    return targets


def numeric(value: object) -> float | int | None:
    """A finite int or float, from Python or numpy scalars (0-d arrays too); None for anything else."""
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        return value
    if getattr(value, "shape", None) == () and hasattr(value, "dtype") and hasattr(value, "item"):
        kind = getattr(value.dtype, "kind", "")
        if kind in "iuf":
            item = value.item()
            return item if isinstance(item, (int, float)) and not isinstance(item, bool) else None
    return None


class Recorder:
    """The profile hook and the samples it keeps; registered as a pytest plugin object."""

    def __init__(self, root: Path, out: Path) -> None:
        self.root, self.out = root, out
        self.targets: dict[str, dict[str, str]] = {}
        self.seen: dict[CodeType, object] = {}
        self.samples: dict[str, list[dict[str, float]]] = {}
        self.calls: dict[str, int] = {}
        self.rng = random.Random(0)
        self.previous: Any = None

    def pytest_sessionstart(self, session: Any) -> None:
        self.targets = find_targets(self.root)
        self.previous = sys.getprofile()
        sys.setprofile(self.profile)
        threading.setprofile(self.profile)

    def pytest_sessionfinish(self, session: Any, exitstatus: int) -> None:
        sys.setprofile(self.previous)
        threading.setprofile(self.previous)
        from auditor.recorded import save_recorded

        save_recorded(self.out, self.samples)

    def pytest_terminal_summary(self, terminalreporter: Any) -> None:
        kept = sum(len(v) for v in self.samples.values())
        terminalreporter.write_line(
            f"auditor: recorded {kept} argument samples for {len(self.samples)} of "
            f"{sum(len(v) for v in self.targets.values())} functions with findings into {self.out}"
        )

    def profile(self, frame: FrameType, event: str, arg: object) -> None:
        if self.previous is not None:
            self.previous(frame, event, arg)
        if event != "call":
            return
        code = frame.f_code
        key = self.seen.get(code, _UNSEEN)
        if key is _UNSEEN:
            key = self.seen[code] = self.classify(code)
        if key is not None:
            try:
                self.record(str(key), frame, code)
            except Exception:  # noqa: BLE001 - the user's tests must never fail because of the recorder
                return

    def classify(self, code: CodeType) -> str | None:
        by_name = self.targets.get(os.path.realpath(code.co_filename))
        if not by_name:
            return None
        return by_name.get(code.co_qualname.replace(".<locals>", ""))

    def record(self, key: str, frame: FrameType, code: CodeType) -> None:
        names = code.co_varnames[: code.co_argcount + code.co_kwonlyargcount]
        local = frame.f_locals
        sample: dict[str, float] = {n: v for n in names if (v := numeric(local.get(n))) is not None}
        if not sample:
            return
        count = self.calls[key] = self.calls.get(key, 0) + 1
        kept = self.samples.setdefault(key, [])
        if len(kept) < CAP:
            kept.append(sample)
        else:  # reservoir sampling (Vitter's algorithm R, from memory): each call kept with prob CAP/count
            j = self.rng.randrange(count)
            if j < CAP:
                kept[j] = sample
