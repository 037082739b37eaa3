"""A non-editable install carries the whole rule catalog (rules/ installs as auditor.rules)."""
from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("wheel")
    done = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(out), str(ROOT)],
        capture_output=True, text=True,
    )
    if done.returncode != 0:
        pytest.fail(f"building the wheel failed:\n{done.stdout}\n{done.stderr}")
    (path,) = out.glob("cancellation_auditor-*.whl")
    return path


def test_wheel_holds_every_rule_module(wheel):
    names = set(zipfile.ZipFile(wheel).namelist())
    expected = {f"auditor/rules/{p.name}" for p in (ROOT / "rules").glob("*.py")}
    assert expected <= names, expected - names
    assert not any(n.startswith("rules/") for n in names), "no top-level rules package may be installed"
    assert any(n.endswith("entry_points.txt") for n in names)


def test_installed_tool_lists_the_full_catalog(wheel, tmp_path):
    target = tmp_path / "site"
    subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target", str(target), str(wheel)],
                   check=True, capture_output=True)
    env = {**os.environ, "PYTHONPATH": str(target)}
    done = subprocess.run([sys.executable, "-m", "auditor", "rules"], capture_output=True, text=True,
                          env=env, cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    probe = subprocess.run([sys.executable, "-c", "import auditor; print(auditor.__file__)"],
                           capture_output=True, text=True, env=env, cwd=tmp_path)
    assert probe.stdout.startswith(str(target)), probe.stdout  # the installed copy, not the checkout
    listed = {line.split()[0] for line in done.stdout.splitlines()[1:] if line.strip() and not line[0].isdigit()}
    assert listed == {p.stem.replace("_", "-") for p in (ROOT / "rules").glob("*.py") if not p.stem.startswith("_")}
