"""Static-pass speed: `auditor scan --jobs 1` against bare `ast.parse` over the same files.

Scans the .py files of the installed numpy and scipy (or the folders given) and prints, in one
run: the time of reading + `ast.parse` for every file, the time of the scan (a child process,
so its peak memory is measured apart), their ratio, peak RSS, and findings per 1,000 lines
for each rule. Both sides run three times, interleaved, and each keeps its best time.

    python bench/static_speed.py [FOLDER ...]
    python bench/static_speed.py --per-rule [FOLDER ...]   # where the scan's time goes, by rule
"""
from __future__ import annotations

import ast
import importlib.util
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
ROUNDS = 3  #: interleaved runs of each side; the best of each is reported


def package_dir(name: str) -> Path:
    spec = importlib.util.find_spec(name)
    if spec is None or not spec.submodule_search_locations:
        raise SystemExit(f"{name} is not installed")
    return Path(next(iter(spec.submodule_search_locations)))


def bare_parse(files: list[Path]) -> tuple[float, float, int]:
    """Wall and CPU seconds to read and parse every file, and the number of lines."""
    lines = 0
    cpu = time.process_time()
    start = time.perf_counter()
    for path in files:
        data = path.read_bytes()
        lines += data.count(b"\n")
        try:
            ast.parse(data, filename=str(path))
        except (SyntaxError, ValueError, RecursionError):
            pass
    return time.perf_counter() - start, time.process_time() - cpu, lines


def _child_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def auditor_scan(folders: list[Path]) -> tuple[float, float, dict, int]:
    """Wall and CPU seconds, the JSON report, and the child's peak RSS in KiB."""
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "report.json"
        cmd = [sys.executable, "-m", "auditor", "scan", "--jobs", "1", "--format", "json",
               "--fail-on", "never", "--output", str(out), *map(str, folders)]
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        cpu = _child_cpu()
        start = time.perf_counter()
        done = subprocess.run(cmd, env=env, cwd=tmp, capture_output=True, text=True)
        seconds = time.perf_counter() - start
        cpu = _child_cpu() - cpu
        if done.returncode not in (0, 1):
            raise SystemExit(f"scan failed ({done.returncode}): {done.stderr}")
        report = json.loads(out.read_text())
    peak_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return seconds, cpu, report, peak_kib


def per_rule_times(files: list[Path]) -> None:
    """Seconds spent inside each rule's check (in this process), to find the expensive rules."""
    sys.path.insert(0, str(ROOT))
    from auditor.catalog import load_catalog
    from auditor.scan import scan_text

    spent: Counter[str] = Counter()
    rules = load_catalog()
    for rule in rules:
        original = rule.check

        def timed(node, ctx, _orig=original, _id=rule.id):  # type: ignore[no-untyped-def]
            start = time.perf_counter()
            out = list(_orig(node, ctx))
            spent[_id] += time.perf_counter() - start
            return out

        rule.check = timed  # type: ignore[method-assign]
    start = time.perf_counter()
    for path in files:
        try:
            scan_text(path.read_text(encoding="utf-8"), str(path), rules)
        except (UnicodeDecodeError, OSError):
            continue
    total = time.perf_counter() - start
    print(f"\nin-process scan {total:.2f} s; time inside each rule:")
    for rule_id, secs in spent.most_common():
        print(f"  {rule_id:<30} {secs:8.2f} s")


def interleaved(files: list[Path]) -> tuple[float, float]:
    """CPU seconds of bare parsing and of the scan's per-file work (read, decode, parse, walk,
    rules), measured file by file in turn, so both sides run at the same machine speed."""
    sys.path.insert(0, str(ROOT))
    from auditor.catalog import load_catalog
    from auditor.scan import scan_source_ref
    from auditor.sources import SourceRef

    ids = [r.id for r in load_catalog()]
    parse_cpu = scan_cpu = 0.0
    for path in files:
        start = time.process_time()
        try:
            ast.parse(path.read_bytes(), filename=str(path))
        except (SyntaxError, ValueError, RecursionError):
            pass
        middle = time.process_time()
        scan_source_ref(SourceRef(str(path), str(path)), ids)
        parse_cpu += middle - start
        scan_cpu += time.process_time() - middle
    return parse_cpu, scan_cpu


def main(argv: list[str]) -> None:
    if argv and argv[0] == "--per-rule":
        folders = [Path(a) for a in argv[1:]] or [package_dir("numpy"), package_dir("scipy")]
        per_rule_times(sorted(p for folder in folders for p in folder.rglob("*.py")))
        return
    folders = [Path(a) for a in argv] or [package_dir("numpy"), package_dir("scipy")]
    files = sorted(p for folder in folders for p in folder.rglob("*.py"))
    # warm the page cache so neither side pays for the first read
    for p in files:
        p.read_bytes()
    # The two sides alternate ROUNDS times and each keeps its best time: on a shared virtual
    # machine the speed drifts by 30% from one minute to the next, and the best of interleaved
    # runs compares both sides at the same machine speed.
    parse_s = parse_cpu = scan_s = scan_cpu = float("inf")
    for _ in range(ROUNDS):
        p_wall, p_cpu, lines = bare_parse(files)
        s_wall, s_cpu, report, peak_kib = auditor_scan(folders)
        parse_s, parse_cpu = min(parse_s, p_wall), min(parse_cpu, p_cpu)
        scan_s, scan_cpu = min(scan_s, s_wall), min(scan_cpu, s_cpu)
    print(f"files: {len(files)}   lines: {lines}")
    print(f"bare ast.parse:          {parse_s:8.2f} s wall {parse_cpu:8.2f} s CPU  ({lines / parse_cpu:,.0f} lines/CPU-s)")
    print(f"auditor scan --jobs 1:   {scan_s:8.2f} s wall {scan_cpu:8.2f} s CPU  ({lines / scan_cpu:,.0f} lines/CPU-s)")
    print(f"ratio scan / parse:      {scan_s / parse_s:8.2f} wall {scan_cpu / parse_cpu:8.2f} CPU   (target <= 2.5;"
          " CPU time is the steadier figure on a shared machine; the scan includes interpreter start-up)")
    p_cpu, s_cpu = interleaved(files)
    print(f"interleaved, file by file (same machine speed for both sides; CPU): parse {p_cpu:.2f} s, "
          f"scan {s_cpu:.2f} s, ratio {s_cpu / p_cpu:.2f}")
    print(f"peak RSS of the scan:    {peak_kib / 1024:8.0f} MiB (target < 1024)")
    print(f"errors: {len(report['errors'])}   findings: {len(report['findings'])}")
    per_rule = Counter(f["rule"] for f in report["findings"])
    print("\nfindings per 1,000 lines by rule:")
    for rule, count in sorted(per_rule.items(), key=lambda kv: -kv[1]):
        print(f"  {rule:<30} {count:>6}  {1000 * count / lines:7.3f}")


if __name__ == "__main__":
    main(sys.argv[1:])
