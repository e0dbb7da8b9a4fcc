"""`fieldbudget evaluate`: table, JSON keys, one-line errors with a non-zero exit."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from fieldbudget.cli import main

BUDGET = {
    "measurand": {"symbol": "P", "unit": "W"},
    "model": "V**2 / R",
    "inputs": {
        "V": {"value": 10.0, "u": 0.01, "unit": "V", "source": "voltmeter cert. FB-V-001"},
        "R": {"value": 100.0, "half_width": 0.2, "distribution": "rectangular", "unit": "ohm"},
        "n": {"readings": [1.0, 1.1, 0.9, 1.0], "unit": "1"},
    },
    "coverage_probability": 0.95,
}


@pytest.fixture
def budget_file(tmp_path):
    p = tmp_path / "power.json"
    p.write_text(json.dumps(BUDGET))
    return p


def test_json_keys(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("value", "u", "nu_eff", "k", "U", "coverage_probability", "contributions"):
        assert key in out
    assert {"symbol", "sensitivity", "u_contribution"} <= set(out["contributions"][0])
    assert out["value"] == pytest.approx(1.0)


def test_table_output(budget_file, capsys):
    assert main(["evaluate", str(budget_file)]) == 0
    out = capsys.readouterr().out
    assert "voltmeter cert. FB-V-001" in out and "P = (" in out


def test_user_mistake_is_one_line_and_exit_2(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text(json.dumps({"model": "x", "inputs": {"x": {"value": 1, "u": 0.1, "dof": 0}}}))
    proc = subprocess.run([sys.executable, "-m", "fieldbudget", "evaluate", str(p)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0 and "Traceback" not in proc.stderr
    assert proc.stderr.strip() == f"fieldbudget evaluate: {p}, at #/inputs/x/dof: dof must be a number > 0 or infinite (got 0)"


def test_missing_file(tmp_path, capsys):
    assert main(["evaluate", str(tmp_path / "nope.json")]) == 2
    assert "no such file" in capsys.readouterr().err


def test_monte_carlo_keys(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--json", "--monte-carlo", "20000", "--seed", "7"]) == 0
    mc = json.loads(capsys.readouterr().out)["mc"]
    for key in ("value", "u", "interval", "shortest_interval", "trials", "seed", "validated"):
        assert key in mc
    assert mc["trials"] == 20000 and mc["seed"] == 7
    # two stages of 10 000 trials cannot estimate the spread of the interval ends: undecided, with the M needed
    assert mc["validated"] is None and mc["validation"]["verdict"] == "undecided"
    assert mc["validation"]["trials_needed"] >= 100_000


def test_second_order_key(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--json", "--second-order"]) == 0
    assert json.loads(capsys.readouterr().out)["u_second_order"] > 0


def test_monte_carlo_of_a_several_output_budget(tmp_path, capsys):
    p = tmp_path / "two.json"
    p.write_text(json.dumps({"model": {"s": "a + b", "d": "a - b"},
                             "inputs": {"a": {"value": 1, "u": 0.1}, "b": {"value": 2, "u": 0.2}}}))
    assert main(["evaluate", str(p), "--json", "--monte-carlo", "400000", "--seed", "3"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [o["mc"]["validated"] for o in out["outputs"]] == [True, True]


def test_monte_carlo_count_may_be_written_as_a_float(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--json", "--monte-carlo", "1e5", "--seed", "1"]) == 0
    assert json.loads(capsys.readouterr().out)["mc"]["trials"] == 100_000


@pytest.mark.parametrize("bad", ["1.5", "0", "-3", "many", "1e400"])
def test_monte_carlo_count_that_is_not_whole_is_refused(budget_file, capsys, bad):
    try:
        code = main(["evaluate", str(budget_file), "--monte-carlo", bad])
    except SystemExit as exc:
        code = exc.code
    assert code == 2
    assert "whole number of trials" in capsys.readouterr().err


def test_seed_without_monte_carlo_warns(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--seed", "5"]) == 0
    assert "--seed is ignored" in capsys.readouterr().err


def test_adaptive_with_a_count_treats_it_as_the_limit(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--json", "--adaptive", "--monte-carlo", "100000", "--seed", "2"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["mc"]["trials"] <= 100_000 and out["mc"]["adaptive"] is True
    assert "at most 100000 trials" in out["notes"][0]


def test_second_order_line_says_which_u_the_statement_uses(budget_file, capsys):
    assert main(["evaluate", str(budget_file), "--second-order"]) == 0
    out = capsys.readouterr().out
    assert "the statement uses the first-order u_c" in out
    assert main(["evaluate", str(budget_file), "--json", "--second-order"]) == 0
    assert json.loads(capsys.readouterr().out)["statement_u"] == "first_order"
