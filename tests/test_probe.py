"""`auditor probe`: one expression over a box or at a point; text with a chart, or JSON."""
from __future__ import annotations

import json

import mpmath
import pytest

from auditor.cli import main
from auditor.probe import probe_command


def test_text_report_has_figures_and_chart():
    text, status = probe_command("sqrt(x + 1) - sqrt(x)", ["x=1..1e15"], [], 128, 0, "text")
    assert status == 1  # unstable
    assert "verdict:    unstable" in text
    assert "digits lost vs x" in text and "#" in text
    assert "rewrite:" in text and "verified" in text


def test_json_fields_follow_the_contract():
    text, status = probe_command("math.exp(x) - 1", ["x=-1e-3..1e-3"], [], 64, 3, "json")
    data = json.loads(text)
    for key in ("samples", "digits_lost_max", "digits_lost_median", "condition_log10_max", "worst_inputs",
                "float_value", "reference_value", "verdict", "reason", "series", "expression", "rewrite"):
        assert key in data
    assert data["expression"] == "math.exp(x) - 1"
    assert data["rewrite"] == {"text": "math.expm1(x)", "verified": True, "digits_lost_max_after": data["rewrite"]["digits_lost_max_after"]}
    # The reported reference at the worst input is expm1 there (reference mpmath.expm1).
    x = data["worst_inputs"]["x"]
    with mpmath.workdps(40):
        assert mpmath.mpf(data["reference_value"]) == pytest.approx(mpmath.expm1(mpmath.mpf(x)), rel=1e-30)


def test_point_evaluation():
    text, status = probe_command("log(x + y)", [], ["x=1", "y=1e-12"], 256, 0, "json")
    data = json.loads(text)
    assert data["samples"] == 1 and data["verdict"] == "ill-conditioned" and status == 0


def test_same_seed_same_output():
    a = probe_command("x * x - y * y", ["x=1..2", "y=1..2"], [], 64, 5, "json")
    b = probe_command("x * x - y * y", ["x=1..2", "y=1..2"], [], 64, 5, "json")
    c = probe_command("x * x - y * y", ["x=1..2", "y=1..2"], [], 64, 6, "json")
    assert a == b and a != c


def test_unnamed_variables_are_assumed_and_said_so():
    text, _ = probe_command("1 - cos(t)", [], [], 64, 0, "json")
    assert "assumed" in json.loads(text)["reason"]


@pytest.mark.parametrize(("expr", "var", "at"), [
    ("x +", ["x=1..2"], []),
    ("x + 1", ["x=2..1"], []),
    ("x + 1", ["x=a..b"], []),
    ("x + 1", [], ["x"]),
    ("x + 1", ["y=1..2"], []),
])
def test_bad_arguments_exit_2(expr, var, at):
    text, status = probe_command(expr, var, at, 16, 0, "text")
    assert status == 2 and text.startswith("auditor: error:")


def test_cli_probe(capsys):
    status = main(["probe", "math.log(1 + x)", "--at", "x=1e-15", "--format", "json"])
    data = json.loads(capsys.readouterr().out)
    assert status == 1 and data["verdict"] == "unstable" and data["digits_lost_max"] > 14


def test_hostile_expression_is_not_measured():
    text, status = probe_command("__import__('os').getcwd()", [], [], 8, 0, "json")
    data = json.loads(text)
    assert data["verdict"] == "not-measured" and "__import__" in data["reason"] and status == 0
