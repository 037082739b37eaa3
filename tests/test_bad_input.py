"""Bad input: each bad file gives one plain `errors` entry, every other file is still scanned,
and scanning never imports or runs the scanned code."""
from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest

from auditor import Config, scan_paths

GOOD = "import math\n\ndef gain(r):\n    return math.exp(r) - 1.0\n"


def scan_dir(folder: Path):
    report = scan_paths([str(folder)], Config(only=frozenset({"exp-minus-one"})))
    return report


def errors_for(report, name: str) -> list[str]:
    return [e.message for e in report.errors if e.path.endswith(name)]


def assert_good_still_scanned(report):
    assert any(f.path.endswith("good.py") for f in report.findings), report


@pytest.fixture
def folder(tmp_path):
    (tmp_path / "good.py").write_text(GOOD)
    return tmp_path


def test_syntax_error(folder):
    (folder / "broken.py").write_text("def f(:\n    pass\n")
    report = scan_dir(folder)
    (msg,) = errors_for(report, "broken.py")
    assert msg.startswith("syntax error at line 1")
    assert "Traceback" not in msg
    assert_good_still_scanned(report)


def test_pep263_latin1_is_honoured(folder):
    code = "# -*- coding: latin-1 -*-\nimport math\n# caf\xe9\ndef f(x):\n    return math.exp(x) - 1\n"
    (folder / "latin.py").write_bytes(code.encode("latin-1"))
    report = scan_dir(folder)
    assert not errors_for(report, "latin.py")
    assert [f.span.line for f in report.findings if f.path.endswith("latin.py")] == [5]


def test_non_utf8_without_coding_line(folder):
    (folder / "bytes.py").write_bytes(b"x = '\xff\xfe caf\xe9'\n")
    report = scan_dir(folder)
    (msg,) = errors_for(report, "bytes.py")
    assert "not valid utf-8" in msg and "line 1" in msg
    assert_good_still_scanned(report)


def test_bom_and_columns(folder):
    (folder / "bom.py").write_bytes(b"\xef\xbb\xbf" + GOOD.encode())
    report = scan_dir(folder)
    (finding,) = [f for f in report.findings if f.path.endswith("bom.py")]
    assert (finding.span.line, finding.span.column) == (4, 12)


def test_crlf(folder):
    (folder / "crlf.py").write_bytes(GOOD.replace("\n", "\r\n").encode())
    report = scan_dir(folder)
    (finding,) = [f for f in report.findings if f.path.endswith("crlf.py")]
    assert finding.span.line == 4 and "\r" not in finding.snippet


def test_binary_file(folder):
    (folder / "blob.py").write_bytes(bytes(range(256)) * 4)
    report = scan_dir(folder)
    (msg,) = errors_for(report, "blob.py")
    assert msg.startswith("binary file")
    assert_good_still_scanned(report)


def test_empty_file(folder):
    (folder / "empty.py").write_text("")
    report = scan_dir(folder)
    assert not errors_for(report, "empty.py")
    assert report.stats.files == 2


def test_five_megabyte_generated_module(folder):
    body = "".join(f"C{i} = {i} * 0.5 + {i}\n" for i in range(260_000))
    (folder / "generated.py").write_text(body + GOOD)
    assert (folder / "generated.py").stat().st_size > 5_000_000
    report = scan_dir(folder)
    assert not errors_for(report, "generated.py")
    assert any(f.path.endswith("generated.py") for f in report.findings)


def test_deeply_nested_expression(folder):
    (folder / "deep.py").write_text("x = " + "(" * 2000 + "1" + ")" * 2000 + "\n")
    (folder / "deep2.py").write_text("x = " + "-" * 2000 + "1\n" + "y = " + "+".join(["a"] * 2000) + "\n")
    report = scan_paths([str(folder)], Config())
    assert len(errors_for(report, "deep.py")) == 1
    assert "nested" in errors_for(report, "deep.py")[0] or "syntax error" in errors_for(report, "deep.py")[0]
    assert len(errors_for(report, "deep2.py")) <= 1
    assert_good_still_scanned(report)


@pytest.mark.skipif(not hasattr(os, "geteuid"), reason="POSIX permissions")
def test_unreadable_file(tmp_path):
    shared = Path("/tmp") / f"auditor-perm-{os.getpid()}"
    shared.mkdir(mode=0o755, exist_ok=True)
    shared.chmod(0o755)
    (shared / "good.py").write_text(GOOD)
    locked = shared / "locked.py"
    locked.write_text(GOOD)
    locked.chmod(0o000)
    scan_dir(shared)  # warm imports while still privileged
    as_root = os.geteuid() == 0
    try:
        if as_root:  # root reads anything: drop the effective uid to nobody for the scan
            os.seteuid(65534)
        report = scan_dir(shared)
    finally:
        if as_root:
            os.seteuid(0)
        locked.chmod(0o644)
        for p in shared.iterdir():
            p.unlink()
        shared.rmdir()
    assert errors_for(report, "locked.py") == ["permission denied"]
    assert_good_still_scanned(report)


def test_broken_symlink(folder):
    (folder / "dangling.py").symlink_to(folder / "missing.py")
    report = scan_dir(folder)
    (msg,) = errors_for(report, "dangling.py")
    assert "broken symbolic link" in msg
    assert_good_still_scanned(report)


def test_symlink_loops(folder):
    (folder / "a.py").symlink_to(folder / "b.py")
    (folder / "b.py").symlink_to(folder / "a.py")
    (folder / "sub").mkdir()
    (folder / "sub" / "back").symlink_to(folder)
    report = scan_dir(folder)
    assert len(errors_for(report, "a.py")) == 1 and "loop" in errors_for(report, "a.py")[0]
    assert len(errors_for(report, "sub/back")) == 1 and "loop" in errors_for(report, "sub/back")[0]
    assert_good_still_scanned(report)


def test_never_imports_or_runs_scanned_code(tmp_path):
    marker = tmp_path / "ran"
    (tmp_path / "evil.py").write_text(
        f"import pathlib\npathlib.Path({str(marker)!r}).write_text('x')\nraise SystemExit(3)\n" + GOOD
    )
    report = scan_paths([str(tmp_path)], Config())
    assert not marker.exists()
    assert "evil" not in sys.modules
    assert any(f.rule == "exp-minus-one" for f in report.findings)


def test_missing_path_is_an_error_not_a_crash(tmp_path):
    report = scan_paths([str(tmp_path / "nope.py")], Config())
    assert [e.message for e in report.errors] == ["no such file or folder"]
