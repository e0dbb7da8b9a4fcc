"""``fieldbudget larmor`` and ``fieldbudget nmr``: output, JSON keys, errors, and the budget-file round trip."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.cli import main

DATA = Path(__file__).parent / "data"


def run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_larmor_frequency_to_field(capsys):
    code, out, _ = run(capsys, "larmor", "100", "MHz", "--json")
    d = json.loads(out)
    assert code == 0
    assert round(d["field_T"], 10) == 2.3487198124  # CODATA 2022, computed here
    assert d["nucleus"] == "shielded-proton" and d["codata"] == 2022
    assert d["u"] == pytest.approx(d["field_T"] * 0.00000017 / 42.57638543, rel=1e-9)


@pytest.mark.parametrize("value, unit", [("1", "T"), ("1000", "mT"), ("10000", "G"), ("1000000", "uT")])
def test_larmor_field_units(capsys, value, unit):
    _code, out, _ = run(capsys, "larmor", value, unit, "--nucleus", "proton", "--codata", "2018", "--json")
    d = json.loads(out)
    # CODATA 2018 proton gyromag. ratio in MHz/T: 42.577 478 518
    assert d["frequency_Hz"] == pytest.approx(42.577478518e6, rel=1e-14)
    assert d["codata"] == 2018


def test_larmor_text(capsys):
    code, out, _ = run(capsys, "larmor", "2", "MHz")
    assert code == 0 and out.startswith("B = 0.0469")


@pytest.mark.parametrize("argv, words", [
    (("larmor", "1", "ppm"), "UNIT must be a frequency unit"),
    (("larmor", "1", "T", "--nucleus", "muon"), "nucleus must be one of"),
    (("larmor", "1", "T", "--codata", "1998"), "codata must be one of the CODATA editions"),
])
def test_larmor_user_errors_exit_2(capsys, argv, words):
    code, _out, err = run(capsys, *argv)
    assert code == 2 and words in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


def test_nmr_text_and_json(capsys):
    code, out, _ = run(capsys, "nmr", str(DATA / "low_field_47mT.json"))
    # six repeated readings: the line noise is in their scatter, not added again, and the output says so
    assert code == 0 and "Model: B0 = (f_read + d_res) " in out and "note: the line-centre noise" in out
    code, out, _ = run(capsys, "nmr", str(DATA / "low_field_47mT.json"), "--json")
    d = json.loads(out)
    assert any("already in the scatter of the 6 repeated readings" in w for w in d["warnings"])


def test_nmr_budget_out_round_trip_through_evaluate(capsys, tmp_path):
    budget = tmp_path / "budget.json"
    code, out, _ = run(capsys, "nmr", str(DATA / "water_cylinder_1p5T.json"), "--json", "--budget-out", str(budget))
    assert code == 0
    nmr = json.loads(out)
    code, out, _ = run(capsys, "evaluate", str(budget), "--json")
    assert code == 0
    ev = json.loads(out)
    nmr_only = set(nmr["warnings"]) - set(ev["warnings"])
    # this example raises two NMR notes only: the line noise is in the readings' scatter, and the
    # cylinder's susceptibility broadening makes the detection method matter
    notes = ("already in the scatter", "susceptibility broadening")
    assert len(nmr_only) == 2 and all(any(n in w for n in notes) for w in nmr_only)
    nmr["warnings"] = [w for w in nmr["warnings"] if w not in nmr_only]
    assert ev == nmr


def test_nmr_bad_file_exit_2(capsys, tmp_path):
    p = tmp_path / "m.json"
    p.write_text(json.dumps({"frequency": {"value_Hz": 1e6, "u_Hz": 0.1}, "sample": {"shape": "cube"}}))
    code, _, err = run(capsys, "nmr", str(p))
    assert code == 2 and "at #/sample/shape" in err


def test_documented_example_is_the_test_file():
    # docs/nmr-measurement-file.md shows tests/nmr/data/water_cylinder_1p5T.json in full; keep them equal
    doc = (Path(__file__).parents[2] / "docs" / "nmr-measurement-file.md").read_text(encoding="utf-8")
    block = doc.split("## A full example", 1)[1].split("```json", 1)[1].split("```", 1)[0]
    assert json.loads(block) == json.loads((DATA / "water_cylinder_1p5T.json").read_text(encoding="utf-8"))
