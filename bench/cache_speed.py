"""Benchmark: a cold scan of the installed numpy + scipy sources, then a warm rescan from the cache.

Run from the repository root: `python bench/cache_speed.py [--jobs N]`. Prints both wall times and
their ratio (the target is warm <= cold / 10). The cache lives in a fresh temporary folder, so
the first scan is truly cold and nothing is left behind.
"""
from __future__ import annotations

import argparse
import importlib.util
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from auditor import Config, scan_paths  # noqa: E402


def package_folder(name: str) -> str:
    """Where an installed package's sources are, found without importing it."""
    spec = importlib.util.find_spec(name)
    if spec is None or not spec.submodule_search_locations:
        raise SystemExit(f"{name} is not installed")
    return str(next(iter(spec.submodule_search_locations)))


def timed_scan(targets: list[str], jobs: int) -> tuple[float, int, int, int]:
    started = time.perf_counter()
    report = scan_paths(targets, Config(cache=True, jobs=jobs))
    return time.perf_counter() - started, report.stats.files, report.stats.lines, len(report.findings)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--jobs", type=int, default=1)
    args = parser.parse_args()
    targets = [package_folder("numpy"), package_folder("scipy")]
    with tempfile.TemporaryDirectory(prefix="auditor-bench-") as cache_home:
        os.environ["XDG_CACHE_HOME"] = cache_home
        cold, files, lines, findings = timed_scan(targets, args.jobs)
        warm, files2, lines2, findings2 = timed_scan(targets, args.jobs)
    if (files, lines, findings) != (files2, lines2, findings2):
        raise SystemExit("warm report differs from cold report")
    print(f"scanned {files} files, {lines} lines, {findings} findings (jobs={args.jobs})")
    print(f"cold {cold:.2f} s")
    print(f"warm {warm:.2f} s")
    print(f"ratio warm/cold {warm / cold:.3f} ({'meets' if warm <= cold / 10 else 'misses'} the 1/10 target)")


if __name__ == "__main__":
    main()
