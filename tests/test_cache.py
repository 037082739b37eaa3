"""The per-file result cache: same report warm as cold, keyed right, corrupt entries rebuilt, --jobs safe."""
from __future__ import annotations

import json
import multiprocessing
from pathlib import Path

import pytest

from auditor import Config, scan_paths
from auditor.cache import ResultCache, default_folder, entry_key, result_from_dict, result_to_dict
from auditor.cli import main
from auditor.scan import FileResult, scan_text
from auditor.catalog import load_catalog

# exp-minus-one fires on `math.exp(x) - 1`, log-of-one-plus on `math.log(1 + x)`
SOURCE = "import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n\n\ndef loss(x):\n    return math.log(1 + x)\n"


@pytest.fixture()
def tree(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    monkeypatch.chdir(tmp_path)
    for i in range(6):
        (tmp_path / "src").mkdir(exist_ok=True)
        (tmp_path / "src" / f"m{i}.py").write_text(SOURCE + f"\n\nTAG = {i}\n")
    (tmp_path / "src" / "broken.py").write_text("def oops(:\n")
    return tmp_path


def entries(tree: Path) -> list[Path]:
    return sorted((tree / "xdg" / "auditor").rglob("*.json"))


def comparable(report):  # stats.seconds differs between runs
    return report.findings, report.errors, report.stats.files, report.stats.lines


def test_location_follows_xdg(tree: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # XDG Base Directory Specification: $XDG_CACHE_HOME, default $HOME/.cache (freedesktop.org)
    assert default_folder() == tree / "xdg" / "auditor"
    monkeypatch.delenv("XDG_CACHE_HOME")
    assert default_folder() == Path.home() / ".cache" / "auditor"
    monkeypatch.setenv("XDG_CACHE_HOME", "relative/not/allowed")  # the spec says relative paths are invalid
    assert default_folder() == Path.home() / ".cache" / "auditor"


def test_warm_report_equals_cold_and_files_are_written(tree: Path) -> None:
    cold = scan_paths(["src"], Config(cache=True))
    assert len(entries(tree)) == 7
    warm = scan_paths(["src"], Config(cache=True))
    plain = scan_paths(["src"], Config())
    assert comparable(warm) == comparable(cold) == comparable(plain)
    assert any(e.path == "src/broken.py" for e in warm.errors)
    assert len(warm.findings) == 12


def test_cache_off_writes_nothing(tree: Path) -> None:
    scan_paths(["src"], Config())
    assert entries(tree) == []


def test_a_hit_is_used_without_rescanning(tree: Path) -> None:
    scan_paths(["src/m0.py"], Config(cache=True))
    [entry] = entries(tree)
    data = json.loads(entry.read_text())
    data["result"]["findings"][0]["message"] = "served from the cache"
    entry.write_text(json.dumps(data))
    report = scan_paths(["src/m0.py"], Config(cache=True))
    assert report.findings[0].message == "served from the cache"


def test_key_depends_on_content_path_and_rules() -> None:
    rules = ["exp-minus-one", "log-of-one-plus"]
    base = entry_key(b"x = 1\n", "a.py", rules)
    assert base == entry_key(b"x = 1\n", "a.py", list(reversed(rules)))  # order of ids does not matter
    assert base != entry_key(b"x = 2\n", "a.py", rules)
    assert base != entry_key(b"x = 1\n", "b.py", rules)  # findings carry the path and path-based fingerprints
    assert base != entry_key(b"x = 1\n", "a.py", rules[:1])


def test_changing_a_file_or_the_rule_set_misses(tree: Path) -> None:
    scan_paths(["src"], Config(cache=True))
    (tree / "src" / "m0.py").write_text(SOURCE.replace("math.log(1 + x)", "x"))
    report = scan_paths(["src"], Config(cache=True))
    assert len(entries(tree)) == 8
    assert [f.rule for f in report.findings if f.path == "src/m0.py"] == ["exp-minus-one"]
    only = scan_paths(["src"], Config(cache=True, only=frozenset({"log-of-one-plus"})))
    assert {f.rule for f in only.findings} == {"log-of-one-plus"}


@pytest.mark.parametrize("garbage", [b"", b"{not json", b'{"format": "auditor-cache/1"}', b"\xff\xfe\x00", b"[]",
                                     b'{"format": "auditor-cache/1", "key": "wrong", "result": {}}'])
def test_corrupt_entries_are_ignored_and_rebuilt(tree: Path, garbage: bytes) -> None:
    cold = scan_paths(["src/m1.py"], Config(cache=True))
    [entry] = entries(tree)
    entry.write_bytes(garbage)
    again = scan_paths(["src/m1.py"], Config(cache=True))
    assert comparable(again) == comparable(cold)
    assert json.loads(entry.read_text())["format"] == "auditor-cache/1"  # rebuilt in place


def test_round_trip_keeps_every_field() -> None:
    rules = [r for r in load_catalog() if r.id in ("exp-minus-one", "log-of-one-plus")]
    result = scan_text(SOURCE, "lab/gauge.py", rules)
    assert result.findings and all(f.fingerprint for f in result.findings)
    assert result_from_dict(json.loads(json.dumps(result_to_dict(result)))) == result


def _hammer(args: tuple[str, str]) -> bool:
    folder, key = args
    rules = [r for r in load_catalog() if r.id == "exp-minus-one"]
    cache = ResultCache(Path(folder))
    result = scan_text(SOURCE, "gauge.py", rules)
    for _ in range(30):
        cache.put(key, result)
        got = cache.get(key)
        if got is not None and got != result:
            return False
    return True


def test_parallel_writers_never_expose_half_an_entry(tmp_path: Path) -> None:
    key = "ab" + "0" * 62
    with multiprocessing.get_context("spawn").Pool(4) as pool:
        assert all(pool.map(_hammer, [(str(tmp_path), key)] * 8))
    assert not list(tmp_path.rglob(".tmp-*"))  # no temp files left behind


def test_jobs_with_cache_cli(tree: Path) -> None:
    out = tree / "r.json"
    assert main(["scan", "src", "--jobs", "3", "--cache", "--format", "json", "--output", str(out)]) == 1
    cold = json.loads(out.read_text())
    assert len(entries(tree)) == 7
    assert main(["scan", "src", "--jobs", "3", "--cache", "--format", "json", "--output", str(out)]) == 1
    warm = json.loads(out.read_text())
    assert cold["findings"] == warm["findings"] and cold["errors"] == warm["errors"]


def test_config_key_and_no_cache_option(tree: Path) -> None:
    (tree / "pyproject.toml").write_text("[tool.auditor]\ncache = true\n")
    assert main(["scan", "src", "--no-cache", "--format", "json", "--output", "r.json"]) == 1
    assert entries(tree) == []
    assert main(["scan", "src", "--format", "json", "--output", "r.json"]) == 1
    assert len(entries(tree)) == 7
