"""`auditor fix` end to end on temporary files: the diff, --write, idempotence, errors as data."""
from __future__ import annotations

import os
import shutil
import subprocess
from dataclasses import replace

import pytest

from auditor import Config, scan_paths
from auditor import fix as fix_module
from auditor.cli import main
from auditor.model import Report

ONLY = ["--only", "exp-minus-one,log-of-one-plus"]

#: An invented field-station module: one expm1 case, one log1p case, one clean function.
STATION = (
    '"""Invented wind-tunnel station: small-rate helpers."""\n'
    "import math\n"
    "\n"
    "\n"
    "def gust_gain(rate):\n"
    "    # relative change over one sampling interval\n"
    "    return math.exp(rate) - 1.0  # hot path\n"
    "\n"
    "\n"
    "def damping(p):\n"
    "    return math.log(1 + p)\n"
    "\n"
    "\n"
    "def clean(x):\n"
    "    return math.expm1(x)\n"
)
FIXED = STATION.replace("math.exp(rate) - 1.0", "math.expm1(rate)").replace("math.log(1 + p)", "math.log1p(p)")


def verify_all(paths, config: Config, inputs) -> Report:
    """Test-only stand-in for the dynamic pass: the static pass with every rewrite marked verified."""
    report = scan_paths(paths, config)
    findings = tuple(
        f.with_(rewrite=replace(f.rewrite, verified=True, digits_lost_max_after=0.0)) if f.rewrite else f
        for f in report.findings
    )
    return replace(report, findings=findings)


def verify_only(rule: str):
    def measure(paths, config, inputs):
        report = verify_all(paths, config, inputs)
        kept = tuple(f if f.rule == rule else f.with_(rewrite=replace(f.rewrite, verified=False, note="made worse"))
                     for f in report.findings)
        return replace(report, findings=kept)
    return measure


@pytest.fixture
def station(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "station.py"
    path.write_text(STATION, encoding="utf-8")
    return path


def use(monkeypatch, measure):
    monkeypatch.setattr(fix_module, "default_measure", lambda: measure)


def test_diff_is_printed_and_file_untouched(station, monkeypatch, capsys):
    use(monkeypatch, verify_all)
    status = main(["fix", "station.py", *ONLY])
    out, err = capsys.readouterr()
    assert status == 1  # the findings are still in the code
    assert out.startswith("--- a/station.py\n+++ b/station.py\n")
    assert "-    return math.exp(rate) - 1.0  # hot path\n+    return math.expm1(rate)  # hot path\n" in out
    assert "+    return math.log1p(p)\n" in out
    assert station.read_text(encoding="utf-8") == STATION
    assert "2 verified rewrite(s) shown" in err


def test_printed_diff_applies_with_git_to_the_written_result(station, monkeypatch, capsys, tmp_path):
    # External check: `git apply` (unified diff format, POSIX diff -u) turns the original into the fixed file.
    if shutil.which("git") is None:
        pytest.skip("git not installed")
    use(monkeypatch, verify_all)
    main(["fix", "station.py", *ONLY])
    patch = capsys.readouterr().out
    (tmp_path / "fix.patch").write_text(patch, encoding="utf-8")
    done = subprocess.run(["git", "apply", "--unsafe-paths", "fix.patch"], cwd=tmp_path, capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert station.read_text(encoding="utf-8") == FIXED


def test_write_applies_and_second_run_is_a_no_op(station, monkeypatch, capsys, tmp_path):
    use(monkeypatch, verify_all)
    assert main(["fix", "station.py", "--write", *ONLY]) == 0
    first_out, first_err = capsys.readouterr()
    assert station.read_text(encoding="utf-8") == FIXED
    assert "2 verified rewrite(s) applied" in first_err
    assert sorted(os.listdir(tmp_path)) == ["station.py"]  # no temp file left behind
    assert main(["fix", "station.py", "--write", *ONLY]) == 0
    second_out, second_err = capsys.readouterr()
    assert second_out == "" and "0 verified rewrite(s) applied" in second_err
    assert station.read_text(encoding="utf-8") == FIXED


def test_unverified_rewrites_are_listed_not_applied(station, monkeypatch, capsys):
    use(monkeypatch, verify_only("log-of-one-plus"))
    status = main(["fix", "station.py", "--write", *ONLY])
    out, err = capsys.readouterr()
    assert status == 1  # the unverified exp-minus-one finding remains
    text = station.read_text(encoding="utf-8")
    assert "math.log1p(p)" in text and "math.exp(rate) - 1.0" in text
    assert "station.py:7:12: exp-minus-one: not applied (made worse); suggested: math.expm1(rate)" in err


def test_fail_on_never_gives_zero(station, monkeypatch, capsys):
    use(monkeypatch, verify_only("log-of-one-plus"))
    assert main(["fix", "station.py", "--fail-on", "never", *ONLY]) == 0


def test_bad_file_is_an_error_and_the_others_are_fixed(station, monkeypatch, capsys, tmp_path):
    use(monkeypatch, verify_all)
    (tmp_path / "broken.py").write_text("def f(:\n", encoding="utf-8")
    main(["fix", ".", "--write", *ONLY])
    _, err = capsys.readouterr()
    assert "broken.py: error: syntax error" in err
    assert station.read_text(encoding="utf-8") == FIXED
    assert (tmp_path / "broken.py").read_text(encoding="utf-8") == "def f(:\n"


def test_crlf_file_keeps_its_line_endings(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    use(monkeypatch, verify_all)
    path = tmp_path / "crlf.py"
    path.write_bytes(STATION.replace("\n", "\r\n").encode())
    main(["fix", "crlf.py", "--write", *ONLY])
    assert path.read_bytes() == FIXED.replace("\n", "\r\n").encode()


def test_output_option_writes_the_diff_to_a_file(station, monkeypatch, capsys, tmp_path):
    use(monkeypatch, verify_all)
    main(["fix", "station.py", "--output", "fix.diff", *ONLY])
    out, _ = capsys.readouterr()
    assert out == ""
    assert (tmp_path / "fix.diff").read_text(encoding="utf-8").startswith("--- a/station.py\n")


def test_standard_input_is_refused(monkeypatch, capsys):
    use(monkeypatch, verify_all)
    assert main(["fix", "-", *ONLY]) == 2
    assert "standard input" in capsys.readouterr().err


def test_without_the_dynamic_pass_nothing_is_applied(station, monkeypatch, capsys):
    # the static pass alone never verifies a rewrite, so fix must not touch the file
    use(monkeypatch, lambda paths, config, inputs: scan_paths(paths, config))
    main(["fix", "station.py", "--write", *ONLY])
    out, err = capsys.readouterr()
    assert out == "" and station.read_text(encoding="utf-8") == STATION
    assert "exp-minus-one: not applied" in err


def test_real_dynamic_pass_verifies_and_applies_expm1(station, capsys):
    # Needs auditor/measure.py. expm1 is the C99 / IEEE 754-2008 remedy for exp(x) - 1 near 0
    # (common practice); the measured rewrite must therefore verify and be applied.
    pytest.importorskip("auditor.measure")
    status = main(["fix", "station.py", "--write", *ONLY])
    _, err = capsys.readouterr()
    text = station.read_text(encoding="utf-8")
    assert "math.expm1(rate)" in text and "math.log1p(p)" in text, err
    assert status == 0, err


def test_format_option_is_named_as_not_applying(station, monkeypatch, capsys):
    use(monkeypatch, verify_all)
    main(["fix", "station.py", "--format", "json", *ONLY])
    out, err = capsys.readouterr()
    assert out.startswith("--- a/station.py\n") and "--format json applies to scan and measure" in err


def test_of_two_rewrites_for_one_span_the_more_accurate_is_applied(station, monkeypatch, capsys):
    def two_rules(paths, config, inputs):
        report = verify_all(paths, config, inputs)
        target = next(f for f in report.findings if f.rule == "exp-minus-one")
        worse = target.with_(rule="subtractive-cancellation",
                             rewrite=replace(target.rewrite, text="(math.exp(rate) - 1.0)", digits_lost_max_after=9.0))
        best = target.with_(rewrite=replace(target.rewrite, digits_lost_max_after=0.1))
        others = tuple(f for f in report.findings if f is not target)
        return replace(report, findings=(worse, best, *others))

    use(monkeypatch, two_rules)
    main(["fix", "station.py", "--write", *ONLY])
    _, err = capsys.readouterr()
    assert station.read_text(encoding="utf-8") == FIXED
    assert "station.py:7:12: subtractive-cancellation: verified rewrite not applied: duplicate" not in err
    assert "subtractive-cancellation: verified rewrite not applied: overlaps exp-minus-one at 7:12" in err
