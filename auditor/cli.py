"""The command line: the only module that reads argv, prints and chooses the exit status."""
from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from pathlib import Path

from auditor.baseline import BaselineError, write_atomically, write_baseline
from auditor.catalog import CatalogError, get_rule, load_catalog, rule_ids
from auditor.config import FAIL_LEVELS, FORMATS, Config, ConfigError, load_config, parse_fail_on, parse_rule_list
from auditor.explain import explain_text, rules_table
from auditor.model import Report
from auditor.version import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_ERROR = 0, 1, 2


class UsageError(Exception):
    """Bad arguments (exit 2)."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(message)


def _common(p: argparse.ArgumentParser, measuring: bool) -> None:
    p.add_argument("paths", nargs="+", metavar="PATH", help="file, folder, or - for standard input")
    p.add_argument("--format", choices=FORMATS, help="report format (default text)")
    p.add_argument("--output", metavar="FILE", help="write the report here instead of standard output")
    p.add_argument("--only", metavar="RULE,...", help="run only these rules")
    p.add_argument("--skip", metavar="RULE,...", help="do not run these rules")
    p.add_argument("--jobs", type=int, metavar="N", help="worker processes (default 1)")
    p.add_argument("--baseline", metavar="FILE", help="report only findings not in this baseline")
    p.add_argument("--write-baseline", metavar="FILE", help="record every current finding as the baseline")
    p.add_argument("--fail-on", choices=FAIL_LEVELS, help="lowest severity that makes the exit status 1")
    p.add_argument("--changed-since", metavar="REF", help="report only findings on lines changed since a git ref")
    p.add_argument("--config", metavar="PYPROJECT", help="read [tool.auditor] from this file")
    p.add_argument("--cache", action=argparse.BooleanOptionalAction, help="reuse per-file scan results (docs/ci.md)")
    if measuring:
        p.add_argument("--samples", type=int, metavar="N", help="input samples per finding (default 256)")
        p.add_argument("--seed", type=int, metavar="N", help="random seed for sampled inputs (default 0)")
        p.add_argument("--inputs", metavar="FILE", help="recorded argument values to measure on")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="auditor", description="Find and measure floating-point cancellation and ill-conditioning.")
    parser.add_argument("--version", action="version", version=f"auditor {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    _common(sub.add_parser("scan", help="static pass only"), measuring=False)
    _common(sub.add_parser("measure", help="static pass, then high-precision measurement"), measuring=True)
    fix = sub.add_parser("fix", help="show (or --write) verified rewrites")
    _common(fix, measuring=True)
    fix.add_argument("--write", action="store_true", help="apply verified rewrites in place")
    probe = sub.add_parser("probe", help="measure one expression over an input box")
    probe.add_argument("expression")
    probe.add_argument("--var", action="append", default=[], metavar="NAME=LO..HI", help="input range")
    probe.add_argument("--at", action="append", default=[], metavar="NAME=VALUE", help="evaluate at a point")
    probe.add_argument("--samples", type=int, default=256, metavar="N")
    probe.add_argument("--seed", type=int, default=0, metavar="N")
    probe.add_argument("--format", choices=("text", "json"), default="text")
    sub.add_parser("rules", help="list the rule catalog")
    explain = sub.add_parser("explain", help="one rule's rationale, examples and rewrite")
    explain.add_argument("rule")
    return parser


def resolve_config(args: argparse.Namespace) -> Config:
    """[tool.auditor] found upward from the first target (or --config), then the options."""
    known = rule_ids()
    if args.config:
        start = Path(args.config)
        if not start.is_file():
            raise ConfigError(f"--config {args.config}: no such file")
    else:
        first = next((p for p in args.paths if p != "-"), ".")
        start = Path(first)
    base = load_config(start if start.exists() else Path("."), known)
    overrides = {
        "format": args.format,
        "output": args.output,
        "only": parse_rule_list(args.only, known, "--only") if args.only else None,
        "skip": parse_rule_list(args.skip, known, "--skip") if args.skip else None,
        "jobs": args.jobs,
        "baseline": args.baseline,
        "changed_since": args.changed_since,
        "cache": args.cache,
        "samples": getattr(args, "samples", None),
        "seed": getattr(args, "seed", None),
    }
    if args.jobs is not None and args.jobs < 1:
        raise ConfigError("--jobs must be at least 1")
    config = base.with_overrides(**overrides)
    if args.fail_on is not None:
        config = config.with_overrides(fail_on=parse_fail_on(args.fail_on)) if args.fail_on != "never" else _never(config)
    return config


def _never(config: Config) -> Config:
    from dataclasses import replace

    return replace(config, fail_on=None)


def _color(stream: object) -> bool:
    if os.environ.get("NO_COLOR"):
        return False
    return bool(getattr(stream, "isatty", lambda: False)())


def render(report: Report, fmt: str, color: bool) -> str:
    from auditor.report import render_json, render_sarif, render_text

    if fmt == "json":
        return render_json(report)
    if fmt == "sarif":
        return render_sarif(report)
    if fmt == "html":
        from auditor.report.html import render_html

        return render_html(report)
    return render_text(report, _source_lines(report), color=color)


def _source_lines(report: Report) -> dict[str, list[str]]:
    """Source lines of the files with findings, for code frames (best effort)."""
    out: dict[str, list[str]] = {}
    for path in {f.path for f in report.findings}:
        try:
            out[path] = Path(path).read_text(encoding="utf-8", errors="replace").splitlines()
        except OSError:
            continue
    return out


def emit(text: str, output: str | None) -> None:
    if output:
        write_atomically(Path(output), text)
    else:
        sys.stdout.write(text)
        sys.stdout.flush()


def run_scan_like(args: argparse.Namespace) -> int:
    config = resolve_config(args)
    if args.command == "scan":
        from auditor.scan import scan_paths

        report = scan_paths(args.paths, config)
        if config.changed_since:
            from auditor.changed import keep_changed

            report = keep_changed(report, config.changed_since)
    elif args.command == "measure":
        from auditor.measure import measure_paths

        report = measure_paths(args.paths, config, inputs=args.inputs)  # limits to changed lines before measuring
    else:
        from auditor.fix import run_fix

        return run_fix(args.paths, config, write=args.write, inputs=args.inputs)
    if args.write_baseline:
        write_baseline(report, args.write_baseline)
    emit(render(report, config.format, color=not config.output and _color(sys.stdout)), config.output)
    return EXIT_FINDINGS if report.failing(config.fail_on) else EXIT_OK


def run_probe(args: argparse.Namespace) -> int:
    from auditor.probe import probe_command

    text, status = probe_command(args.expression, args.var, args.at, args.samples, args.seed, args.format)
    sys.stdout.write(text)
    return status


def main(argv: Sequence[str] | None = None) -> int:
    try:
        args = build_parser().parse_args(argv)
        if args.command == "rules":
            sys.stdout.write(rules_table(load_catalog()))
            return EXIT_OK
        if args.command == "explain":
            rule = get_rule(args.rule)
            if rule is None:
                raise UsageError(f"unknown rule {args.rule!r} (see `auditor rules`)")
            sys.stdout.write(explain_text(rule))
            return EXIT_OK
        if args.command == "probe":
            return run_probe(args)
        return run_scan_like(args)
    except (UsageError, ConfigError, BaselineError, CatalogError) as exc:
        sys.stderr.write(f"auditor: error: {exc}\n")
        return EXIT_ERROR
    except KeyboardInterrupt:
        sys.stderr.write("auditor: interrupted\n")
        return EXIT_ERROR
    except BrokenPipeError:
        return EXIT_OK
    except Exception as exc:  # an internal error: exit 2 with one line, traceback only on request
        if os.environ.get("AUDITOR_DEBUG"):
            raise
        sys.stderr.write(f"auditor: internal error: {type(exc).__name__}: {exc} (set AUDITOR_DEBUG=1 for a traceback)\n")
        return EXIT_ERROR


def entry() -> None:
    """Console-script entry point."""
    raise SystemExit(main())
