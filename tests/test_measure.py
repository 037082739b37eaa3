"""`auditor measure`: findings measured, inputs chosen in the contract's order, rewrites verified."""
from __future__ import annotations

import ast
import json
from pathlib import Path

from auditor.config import Config
from auditor.measure import measure_finding, measure_paths
from auditor.model import Severity, Verdict
from auditor.recorded import save_recorded
from auditor.report.jsonv1 import render_json
from tests.numerics_helpers import finding_for, measure_code

LAB = '''import math


# auditor: domain r=1e-12..1e-6
def growth(r):
    return math.exp(r) - 1.0


# auditor: domain r=1..10
def big_growth(r):
    return math.exp(r) - 1.0


def from_config(r):
    return math.exp(r) - 1.0


def from_call_site(r):
    return math.exp(r) - 1.0


def assumed(r):
    return math.exp(r) - 1.0


RATE = from_call_site(2e-9)
'''


def _measure(tmp_path: Path, config: Config, inputs: str | None = None) -> dict:
    (tmp_path / "lab.py").write_text(LAB, encoding="utf-8")
    report = measure_paths([str(tmp_path / "lab.py")], config, inputs=inputs)
    return {f.function: f for f in report.findings if f.rule == "exp-minus-one"}


def test_domains_call_sites_and_assumed_box(tmp_path):
    config = Config(samples=64, domains={"lab:from_config": "r=1e-9..1e-9"})
    found = _measure(tmp_path, config)
    growth = found["growth"]
    m = growth.measurement
    assert m.verdict is Verdict.UNSTABLE and "domain r=1e-12..1e-6" in m.reason
    assert 1e-12 <= m.worst_inputs["r"] <= 1e-6
    assert growth.severity is Severity.ERROR  # unstable and >= 8 digits lost (expm1 reference, mpmath)
    assert growth.rewrite is not None and growth.rewrite.verified and growth.rewrite.digits_lost_max_after < 1
    assert found["big_growth"].measurement.verdict is Verdict.BENIGN
    assert found["big_growth"].severity is Severity.NOTE
    assert found["from_config"].measurement.worst_inputs == {"r": 1e-9}
    assert found["from_config"].measurement.samples == 1
    assert "call site" in found["from_call_site"].measurement.reason
    assert 1e-9 <= found["from_call_site"].measurement.worst_inputs["r"] <= 4e-9  # within a factor 2 of 2e-9
    assert "assumed" in found["assumed"].measurement.reason


def test_recorded_inputs_come_first(tmp_path):
    save_recorded(tmp_path / "inputs.json", {"lab:assumed": [{"r": 3e-10}, {"r": 5e-10}]})
    found = _measure(tmp_path, Config(samples=64), inputs=str(tmp_path / "inputs.json"))
    m = found["assumed"].measurement
    assert m.samples == 2 and "recorded" in m.reason and m.worst_inputs["r"] in (3e-10, 5e-10)


def test_same_seed_same_report(tmp_path):
    config = Config(samples=32, seed=7)
    first = _measure(tmp_path, config)
    second = _measure(tmp_path, config)
    assert {k: v.measurement for k, v in first.items()} == {k: v.measurement for k, v in second.items()}


def test_json_report_carries_measurements(tmp_path):
    (tmp_path / "lab.py").write_text(LAB, encoding="utf-8")
    report = measure_paths([str(tmp_path / "lab.py")], Config(samples=16))
    data = json.loads(render_json(report))
    measured = [f for f in data["findings"] if f["measurement"]]
    assert measured and all(f["measurement"]["verdict"] in ("unstable", "ill-conditioned", "benign", "not-measured") for f in measured)
    assert any(f["rewrite"] and f["rewrite"]["verified"] for f in measured)


def test_wrong_rewrite_is_not_verified():
    code = "import math\n# auditor: domain x=1e-10..1e-5\ndef f(x):\n    return math.exp(x) - 1.0\n"
    got = measure_code(code, "exp-minus-one", ast.BinOp, replacement="math.expm1(2 * x)")
    assert not got.verified and "different value" in got.note
    good = measure_code(code, "exp-minus-one", ast.BinOp, replacement="math.expm1(x)")
    assert good.verified and good.after is not None and good.after.digits_lost_max < 1


def test_per_sample_points_are_exposed():
    code = "import math\n# auditor: domain x=1e-10..1e-5\ndef f(x):\n    return math.exp(x) - 1.0\n"
    got = measure_code(code, "exp-minus-one", ast.BinOp, samples=20, replacement="math.expm1(x)")
    assert len(got.samples) == 20 and len(got.after_samples) == 20
    for before, after in zip(got.samples, got.after_samples):
        assert before.inputs == after.inputs
        assert before.digits_lost is not None and before.condition_log10 is not None
        assert abs(before.condition_log10) < 0.01  # expm1 is perfectly conditioned for small x (common practice)


def test_locals_are_inlined_into_the_expression():
    code = "import numpy as np\n# auditor: domain x=1e-9..1e-9\ndef f(x):\n    e = np.exp(x)\n    return e - 1\n"
    got = measure_code(code, "exp-minus-one", ast.BinOp)
    assert got.measurement.worst_inputs == {"x": 1e-9}
    assert got.measurement.verdict is Verdict.UNSTABLE


def test_unevaluable_unit_does_not_stop_the_run(tmp_path):
    (tmp_path / "model.py").write_text(
        "import math\nclass M:\n    def f(self, x):\n        return math.exp(self.model.predict(x)) - 1.0\n"
        "def g(x):\n    return math.exp(x) - 1.0\n", encoding="utf-8")
    report = measure_paths([str(tmp_path / "model.py")], Config(samples=8))
    verdicts = {f.function: f.measurement.verdict for f in report.findings}
    assert verdicts["M.f"] is Verdict.NOT_MEASURED and verdicts["g"] is not Verdict.NOT_MEASURED
    assert "self.model.predict" in next(f for f in report.findings if f.function == "M.f").measurement.reason


def test_float32_code_uses_float32_digits():
    code = "import numpy as np\n# auditor: domain x=0.5..0.5\ndef f(x):\n    return np.float32(x) * np.float32(3.0) - np.float32(1.0)\n"
    m = measure_code(code, "subtractive-cancellation", ast.BinOp).measurement
    assert m.digits_lost_max is not None and m.digits_lost_max <= 7.22
