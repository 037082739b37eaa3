"""The pytest plugin records real argument values in a real pytest run; recorded.py reads them back."""
from __future__ import annotations

import json
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from auditor.recorded import SCHEMA, RecordedError, load_recorded, module_key, save_recorded
from auditor.pytest_plugin import CAP, numeric

ROOT = Path(__file__).resolve().parent.parent

OPTICS = '''import math


def focal_shift(x, scale=1.0):
    return scale * (math.exp(x) - 1)


class Lens:
    def sag(self, r, *, label="front"):
        return math.log(1 + r)


def doubled(x):
    return 2 * x
'''

TESTS = '''import numpy as np
from lab.optics import Lens, doubled, focal_shift


def test_shift_over_a_sweep():
    for i in range(500):
        assert focal_shift(1e-9 * (i + 1), scale=2) > 0


def test_lens():
    assert Lens().sag(1e-12) > 0
    assert Lens().sag(np.float64(3e-10), label="rear") > 0
    assert Lens().sag(float("inf")) == float("inf")
    assert doubled(4.0) == 8.0
'''


@pytest.fixture()
def project(tmp_path: Path) -> Path:
    (tmp_path / "lab").mkdir()
    (tmp_path / "lab" / "__init__.py").write_text("")
    (tmp_path / "lab" / "optics.py").write_text(OPTICS)
    (tmp_path / "tests").mkdir()
    (tmp_path / "tests" / "test_optics.py").write_text(TESTS)
    (tmp_path / "pyproject.toml").write_text("[tool.pytest.ini_options]\npythonpath = ['.']\n")
    return tmp_path


def run_pytest(project: Path, *args: str) -> subprocess.CompletedProcess[str]:
    # autoload off: where auditor is installed its pytest11 entry point would load the plugin a second time
    env = {**os.environ, "PYTEST_DISABLE_PLUGIN_AUTOLOAD": "1", "PYTHONPATH": str(ROOT)}
    return subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "auditor.pytest_plugin", *args],
                          cwd=project, env=env, capture_output=True, text=True, timeout=300)


def test_a_real_pytest_run_records_arguments(project: Path) -> None:
    done = run_pytest(project, "--auditor-record", "rec.json")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "auditor: recorded" in done.stdout
    data = json.loads((project / "rec.json").read_text())
    assert data["schema"] == SCHEMA
    recorded = load_recorded(project / "rec.json")
    assert set(recorded) == {"lab.optics:focal_shift", "lab.optics:Lens.sag"}  # doubled() holds no finding
    shifts = recorded["lab.optics:focal_shift"]
    assert len(shifts) == CAP  # 500 calls, capped by the reservoir
    assert all(s["scale"] == 2 and 1e-9 <= s["x"] <= 5.0001e-7 for s in shifts)
    assert len({s["x"] for s in shifts}) == CAP
    assert isinstance(shifts[0]["scale"], int)  # ints stay ints
    # the inf call keeps no sample (non-finite); the numpy scalar is stored as a float
    assert recorded["lab.optics:Lens.sag"] == [{"r": 1e-12}, {"r": 3e-10}]


def test_same_run_same_file(project: Path) -> None:
    assert run_pytest(project, "--auditor-record", "a.json").returncode == 0
    assert run_pytest(project, "--auditor-record", "b.json").returncode == 0
    assert (project / "a.json").read_text() == (project / "b.json").read_text()  # seeded reservoir


def test_without_the_option_nothing_is_written(project: Path) -> None:
    done = run_pytest(project)
    assert done.returncode == 0 and "auditor: recorded" not in done.stdout
    assert not list(project.glob("*.json"))


def test_failing_user_tests_still_record(project: Path) -> None:
    (project / "tests" / "test_fail.py").write_text("from lab.optics import Lens\n\n\n"
                                                     "def test_bad():\n    assert Lens().sag(0.25) < 0\n")
    done = run_pytest(project, "--auditor-record", "rec.json")
    assert done.returncode == 1
    assert {"r": 0.25} in load_recorded(project / "rec.json")["lab.optics:Lens.sag"]


def test_entry_point_is_declared() -> None:
    data = tomllib.loads((ROOT / "pyproject.toml").read_text())
    assert data["project"]["entry-points"]["pytest11"] == {"auditor": "auditor.pytest_plugin"}


def test_module_key_and_numeric() -> None:
    import numpy as np

    assert module_key("lab/optics.py", "Lens.sag") == "lab.optics:Lens.sag"
    assert module_key("lab/__init__.py", "f") == "lab:f"
    assert module_key("solo.py", "f") == "solo:f"
    assert numeric(np.float32(0.5)) == 0.5 and numeric(np.int64(3)) == 3 and numeric(np.array(2.5)) == 2.5
    assert numeric(True) is None and numeric(np.array([1.0])) is None and numeric(1j) is None
    assert numeric(np.complex128(1)) is None and numeric("3") is None


def test_save_and_load_round_trip(tmp_path: Path) -> None:
    path = tmp_path / "inputs.json"
    save_recorded(path, {"m:f": [{"x": 1.5, "n": 3, "s": "no", "b": True}, {"x": float("nan")}], "m:g": []})
    assert load_recorded(path) == {"m:f": [{"x": 1.5, "n": 3}]}


@pytest.mark.parametrize("text, why", [
    ("{", "not valid JSON"),
    ('{"schema": "other/1", "functions": {}}', "not a recorded-inputs file"),
    ('{"schema": "auditor-inputs/1", "functions": {"nocolon": []}}', "bad entry"),
])
def test_bad_inputs_files_are_refused(tmp_path: Path, text: str, why: str) -> None:
    path = tmp_path / "bad.json"
    path.write_text(text)
    with pytest.raises(RecordedError, match=why):
        load_recorded(path)
    with pytest.raises(RecordedError, match="cannot read"):
        load_recorded(tmp_path / "missing.json")


def digits_lost_exp_minus_one(x: float) -> float:
    """CONTRACT.md's formula, reference from mpmath at 60 digits (exact binary value of x)."""
    import math

    import mpmath

    with mpmath.workdps(60):
        ref = mpmath.expm1(mpmath.mpf(x))
        err = abs((mpmath.mpf(math.exp(x) - 1) - ref) / ref)
        return 0.0 if err == 0 else max(0.0, 15.95 + float(mpmath.log10(err)))


def test_recorded_inputs_replay_in_measure(project: Path) -> None:
    assert run_pytest(project, "--auditor-record", "rec.json").returncode == 0
    recorded = load_recorded(project / "rec.json")["lab.optics:focal_shift"]
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run([sys.executable, "-m", "auditor", "measure", "lab/optics.py", "--inputs", "rec.json",
                           "--format", "json", "--fail-on", "never"], cwd=project, env=env, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout)
    [shift] = [f for f in report["findings"] if f["rule"] == "exp-minus-one"]
    m = shift["measurement"]
    assert m["samples"] == len(recorded)
    assert m["worst_inputs"]["x"] in {s["x"] for s in recorded}
    expected = max(digits_lost_exp_minus_one(s["x"]) for s in recorded)
    assert abs(m["digits_lost_max"] - expected) < 0.05
