"""Field trial: scan (then measure a sample of) real scientific packages nobody here wrote.

    python bench/field_trial.py --out /tmp/trial               # install, scan, measure
    python bench/field_trial.py --out /tmp/trial --venv /tmp/v  # reuse an environment
    python bench/field_trial.py draw --out /tmp/trial -n 100    # findings to judge by hand
    python bench/field_trial.py recheck --out /tmp/trial        # which drawn findings remain now

The packages are installed with pip into a throwaway virtual environment; the auditor
runs from this checkout with the interpreter running this script and only *reads* their
sources (`-P` keeps the installed packages off the auditor's own import path). Raw JSON
reports go to --out; nothing downloaded is kept in the repository.
"""
from __future__ import annotations

import argparse
import json
import random
import subprocess
import sys
import tempfile
import time
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
#: the auditor source tree that runs (--checkout; default this one)
CHECKOUT = ROOT
#: pip name -> import folder
PACKAGES = {"numpy": "numpy", "scipy": "scipy", "statsmodels": "statsmodels",
            "scikit-learn": "sklearn", "astropy": "astropy"}
VERDICTS = ("unstable", "ill-conditioned", "benign", "not-measured")


@dataclass(slots=True)
class Outcome:
    """What one package gave."""

    name: str
    files: int = 0
    lines: int = 0
    seconds: float = 0.0
    rules: Counter = field(default_factory=Counter)
    syntax_errors: int = 0
    internal_errors: int = 0
    other_errors: int = 0
    exit_status: int | None = None
    crash: str = ""
    measured_files: int = 0
    measured_findings: int = 0
    measure_seconds: float = 0.0
    verdicts: Counter = field(default_factory=Counter)
    measure_crash: str = ""


def make_venv(folder: Path, packages: list[str]) -> Path:
    """A fresh virtual environment with the packages installed; returns its site-packages."""
    subprocess.run([sys.executable, "-m", "venv", str(folder)], check=True)
    py = folder / "bin" / "python"
    subprocess.run([str(py), "-m", "pip", "install", "-q", "--disable-pip-version-check", *packages], check=True)
    return site_packages(folder)


def site_packages(folder: Path) -> Path:
    py = folder / "bin" / "python"
    out = subprocess.run([str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['platlib'])"],
                         check=True, capture_output=True, text=True)
    return Path(out.stdout.strip())


def run_auditor(args: list[str], cwd: Path, timeout: float) -> tuple[int | None, str, float]:
    """(exit status or None on time-out, stderr, seconds) of `auditor ARGS` run from CHECKOUT."""
    env_cmd = [sys.executable, "-P", "-c", f"import sys; sys.path.insert(0, {str(CHECKOUT)!r}); "
               "from auditor.cli import main; raise SystemExit(main(sys.argv[1:]))", *args]
    started = time.perf_counter()
    try:
        done = subprocess.run(env_cmd, cwd=cwd, capture_output=True, text=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return None, "timed out", time.perf_counter() - started
    return done.returncode, done.stderr.strip(), time.perf_counter() - started


def classify(errors: list[dict], outcome: Outcome) -> None:
    for e in errors:
        msg = e["message"]
        # parser-level failures of the file itself; a rule's RecursionError ("too deeply nested to
        # analyse") is the auditor's own failure and counts as internal
        if msg.startswith(("syntax error", "bad coding", "cannot parse", "too deeply nested for the Python parser")):
            outcome.syntax_errors += 1
        elif "internal error" in msg or "too deeply nested to analyse" in msg:
            outcome.internal_errors += 1
        else:
            outcome.other_errors += 1


def scan_package(name: str, folder: str, site: Path, out: Path, jobs: int) -> Outcome:
    outcome = Outcome(name)
    report_path = out / f"{name}.scan.json"
    status, err, secs = run_auditor(["scan", folder, "--format", "json", "--jobs", str(jobs),
                                     "--fail-on", "never", "--output", str(report_path)], site, timeout=3600)
    outcome.exit_status, outcome.seconds = status, round(secs, 1)
    if status != 0:
        outcome.crash = err.splitlines()[-1] if err else f"exit {status}"
    if not report_path.is_file():
        return outcome
    report = json.loads(report_path.read_text(encoding="utf-8"))
    outcome.files, outcome.lines = report["stats"]["files"], report["stats"]["lines"]
    outcome.rules = Counter(f["rule"] for f in report["findings"])
    classify(report["errors"], outcome)
    return outcome


def measure_package(outcome: Outcome, folder: str, site: Path, out: Path, limit: int, seed: int, budget: float) -> None:
    """Measure the findings of up to `limit` files drawn at random (fixed seed) from those with findings."""
    report = json.loads((out / f"{outcome.name}.scan.json").read_text(encoding="utf-8"))
    files = sorted({f["path"] for f in report["findings"]})
    chosen = sorted(random.Random(seed).sample(files, min(limit, len(files))))
    if not chosen:
        return
    report_path = out / f"{outcome.name}.measure.json"
    status, err, secs = run_auditor(["measure", *chosen, "--format", "json", "--fail-on", "never",
                                     "--seed", str(seed), "--output", str(report_path)], site, timeout=budget)
    outcome.measured_files, outcome.measure_seconds = len(chosen), round(secs, 1)
    if status != 0:
        outcome.measure_crash = err.splitlines()[-1] if err else ("timed out" if status is None else f"exit {status}")
    if report_path.is_file():
        measured = json.loads(report_path.read_text(encoding="utf-8"))
        outcome.measured_findings = len(measured["findings"])
        outcome.verdicts = Counter((f["measurement"] or {}).get("verdict", "none") for f in measured["findings"])
        errs = Outcome(outcome.name)
        classify(measured["errors"], errs)
        outcome.internal_errors += errs.internal_errors


def print_table(outcomes: list[Outcome]) -> None:
    print(f"\n{'package':<13}{'files':>7}{'lines':>10}{'scan s':>8}{'findings':>10}{'syntax':>8}{'internal':>9}"
          f"{'other':>7}  crash")
    for o in outcomes:
        print(f"{o.name:<13}{o.files:>7}{o.lines:>10}{o.seconds:>8}{sum(o.rules.values()):>10}{o.syntax_errors:>8}"
              f"{o.internal_errors:>9}{o.other_errors:>7}  {o.crash or '-'}")
    for o in outcomes:
        print(f"\n{o.name}: findings per rule: " + ", ".join(f"{r} {n}" for r, n in sorted(o.rules.items())))
        if o.measured_files:
            verdicts = ", ".join(f"{v} {o.verdicts.get(v, 0)}" for v in (*VERDICTS, "none") if o.verdicts.get(v, 0) or v in VERDICTS)
            print(f"{o.name}: measured {o.measured_findings} findings in {o.measured_files} files "
                  f"({o.measure_seconds} s): {verdicts}{'; ' + o.measure_crash if o.measure_crash else ''}")


def trial(args: argparse.Namespace) -> int:
    global CHECKOUT
    CHECKOUT = Path(args.checkout).resolve() if args.checkout else ROOT
    out = Path(args.out).resolve()
    out.mkdir(parents=True, exist_ok=True)
    if args.venv and (Path(args.venv) / "bin" / "python").exists():
        site = site_packages(Path(args.venv))
    else:
        venv = Path(args.venv) if args.venv else Path(tempfile.mkdtemp(prefix="auditor-trial-")) / "venv"
        print(f"installing {', '.join(args.packages)} into {venv} ...", flush=True)
        site = make_venv(venv, args.packages)
    outcomes = []
    for name in args.packages:
        folder = PACKAGES.get(name, name)
        print(f"scanning {name} ({site / folder}) ...", flush=True)
        outcome = scan_package(name, folder, site, out, args.jobs)
        if args.measure_limit > 0 and outcome.rules:
            print(f"measuring {name} ({args.measure_limit} files) ...", flush=True)
            measure_package(outcome, folder, site, out, args.measure_limit, args.seed, args.measure_budget)
        outcomes.append(outcome)
    print_table(outcomes)
    summary = [{**{k: getattr(o, k) for k in Outcome.__slots__}, "rules": dict(o.rules), "verdicts": dict(o.verdicts)}
               for o in outcomes]
    (out / "summary.json").write_text(json.dumps({"site": str(site), "packages": summary}, indent=2) + "\n")
    bad = any(o.crash or o.internal_errors or o.measure_crash for o in outcomes)
    return 1 if bad else 0


def draw(args: argparse.Namespace) -> int:
    """Print `n` findings drawn at random (fixed seed) over all packages, with source context."""
    out = Path(args.out).resolve()
    site = Path(json.loads((out / "summary.json").read_text())["site"])
    pool = []
    for name in PACKAGES:
        path = out / f"{name}.scan.json"
        if path.is_file():
            pool += [(name, f) for f in json.loads(path.read_text())["findings"]]
    pool.sort(key=lambda nf: (nf[1]["path"], nf[1]["line"], nf[1]["column"], nf[1]["rule"]))
    picked = random.Random(args.seed).sample(pool, min(args.n, len(pool)))
    keep = [{"number": i, "package": name, "rule": f["rule"], "path": f["path"], "line": f["line"]}
            for i, (name, f) in enumerate(picked, start=1)]
    (out / "draw.json").write_text(json.dumps(keep, indent=1) + "\n")
    for number, (name, f) in enumerate(picked, start=1):
        lines = (site / f["path"]).read_text(encoding="utf-8", errors="replace").splitlines()
        lo, hi = max(0, f["line"] - 1 - args.context), min(len(lines), f["end_line"] + args.context)
        print(f"### {number}. {f['rule']} {f['path']}:{f['line']}\n{f['message']}")
        print("\n".join(f"{i + 1:>6}{'>' if f['line'] <= i + 1 <= f['end_line'] else ' '} {lines[i]}" for i in range(lo, hi)))
        print()
    print(f"# drew {len(picked)} of {len(pool)} findings (seed {args.seed})")
    return 0


def recheck(args: argparse.Namespace) -> int:
    """Scan the files of the last draw again (with --checkout) and say which findings remain."""
    global CHECKOUT
    CHECKOUT = Path(args.checkout).resolve() if args.checkout else ROOT
    out = Path(args.out).resolve()
    site = Path(json.loads((out / "summary.json").read_text())["site"])
    drawn = json.loads((out / "draw.json").read_text())
    files = sorted({d["path"] for d in drawn})
    status, err, _ = run_auditor(["scan", *files, "--format", "json", "--fail-on", "never",
                                  "--output", str(out / "recheck.json")], site, timeout=1800)
    if status != 0:
        print(f"recheck scan failed: {err}")
        return 2
    now = {(f["rule"], f["path"], f["line"]) for f in json.loads((out / "recheck.json").read_text())["findings"]}
    for d in drawn:
        state = "still flagged" if (d["rule"], d["path"], d["line"]) in now else "gone"
        print(f"{d['number']:>3} {state:<13} {d['rule']} {d['path']}:{d['line']}")
    return 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("action", nargs="?", choices=("trial", "draw", "recheck"), default="trial")
    parser.add_argument("--out", required=True, help="folder for the raw JSON reports")
    parser.add_argument("--venv", help="virtual environment to create (or reuse when it exists)")
    parser.add_argument("--packages", nargs="+", default=list(PACKAGES), help="pip names to install and scan")
    parser.add_argument("--checkout", help="auditor source tree to run (e.g. a `git archive` of a commit)")
    parser.add_argument("--jobs", type=int, default=2, help="scan worker processes")
    parser.add_argument("--measure-limit", type=int, default=20,
                        help="files per package (drawn at random among those with findings) to measure; 0 skips")
    parser.add_argument("--measure-budget", type=float, default=240.0, help="seconds allowed per package's measure run")
    parser.add_argument("--seed", type=int, default=0, help="seed for every random draw")
    parser.add_argument("-n", type=int, default=100, help="draw: findings to draw")
    parser.add_argument("--context", type=int, default=3, help="draw: source lines shown around each finding")
    args = parser.parse_args(argv)
    return {"draw": draw, "recheck": recheck, "trial": trial}[args.action](args)


if __name__ == "__main__":
    raise SystemExit(main())
