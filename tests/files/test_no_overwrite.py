"""No command, function or widget silently replaces its own input, a record, or an existing report."""

from __future__ import annotations

import json

import pytest

from fieldbudget.cli import main
from fieldbudget.errors import OutputError
from fieldbudget.files.guard import check_output
from fieldbudget.files.record import load_record
from tests.report._budgets import mixed_budget, nmr_budget


@pytest.fixture
def lab(tmp_path):
    b = tmp_path / "b.json"
    b.write_text(json.dumps(nmr_budget()))
    rec = tmp_path / "r.json"
    assert main(["record", str(b), "-o", str(rec)]) == 0
    return tmp_path, b, rec


def _err(capsys):
    err = capsys.readouterr().err
    assert err.count("\n") == 1, err
    return err


def test_record_refuses_an_existing_file(lab, capsys):
    d, b, rec = lab
    before = rec.read_bytes()
    assert main(["record", str(b), "-o", str(rec)]) == 2
    assert "is a record; records are never overwritten" in _err(capsys)
    other = d / "notes.txt"
    other.write_text("keep me")
    assert main(["record", str(b), "-o", str(other)]) == 2
    assert "a new file" in _err(capsys) and other.read_text() == "keep me"
    assert rec.read_bytes() == before


def test_record_onto_itself_as_the_next_revision(lab, capsys):
    d, b, rec = lab
    old = load_record(rec)
    assert main(["record", str(b), "-o", str(rec), "--previous", str(rec)]) == 2
    assert "--reason must be a text" in _err(capsys)
    assert main(["record", str(b), "-o", str(rec), "--previous", str(rec), "--reason", "re-read the counter"]) == 0
    new = load_record(rec)
    assert new.revision == 2 and new.previous_digest == old.digest
    assert new.changes[-1]["detail"] == "re-read the counter"


def test_next_revision_needs_the_same_measurand(lab, capsys):
    d, b, rec = lab
    other = d / "other.json"
    other.write_text(json.dumps(mixed_budget()))
    assert main(["record", str(other), "-o", str(d / "r2.json"), "--previous", str(rec), "--reason", "x"]) == 2
    err = _err(capsys)
    assert "same measurand" in err and "B in T" in err


def test_output_equal_to_an_input_is_refused(lab, capsys):
    d, b, rec = lab
    assert main(["record", str(b), "-o", str(b)]) == 2
    assert "is the budget file this command reads" in _err(capsys)
    assert main(["report", str(rec), "-o", str(rec), "--to", "md"]) == 2
    assert "is the record this command reads" in _err(capsys)
    # through another spelling of the same path
    assert main(["report", str(rec), "-o", str(d / "." / rec.name), "--to", "md", "--force"]) == 2
    _err(capsys)


def test_report_overwrites_a_report_only_with_force_and_never_a_record(lab, capsys):
    d, b, rec = lab
    out = d / "r.md"
    assert main(["report", str(rec), "-o", str(out)]) == 0
    assert main(["report", str(rec), "-o", str(out)]) == 2
    assert "exists already; pass --force" in _err(capsys)
    assert main(["report", str(rec), "-o", str(out), "--force"]) == 0
    rec2 = d / "r2.json"
    assert main(["record", str(b), "-o", str(rec2)]) == 0
    assert main(["report", str(rec), "-o", str(rec2), "--to", "md", "--force"]) == 2
    assert "records are never overwritten" in _err(capsys)


def test_nmr_budget_out_rules(tmp_path, capsys):
    from pathlib import Path

    src = Path(__file__).parents[1] / "nmr" / "data" / "water_cylinder_1p5T.json"
    m = tmp_path / "m.json"
    m.write_bytes(src.read_bytes())
    assert main(["nmr", str(m), "--budget-out", str(m)]) == 2
    assert "is the measurement file this command reads" in _err(capsys)
    out = tmp_path / "b.json"
    assert main(["nmr", str(m), "--budget-out", str(out)]) == 0
    assert main(["nmr", str(m), "--budget-out", str(out)]) == 2
    assert "pass --force" in _err(capsys)
    assert main(["nmr", str(m), "--budget-out", str(out), "--force"]) == 0


@pytest.mark.parametrize("path,words", [("", "an empty path"), ("missing-folder/x.json", "does not exist")])
def test_output_path_problems_name_the_given_path(tmp_path, path, words, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "b.json").write_text(json.dumps(mixed_budget()))
    assert main(["record", "b.json", "-o", path]) == 2
    err = _err(capsys)
    assert words in err and ".tmp" not in err
    if path:
        assert path in err


def test_check_output_refuses_a_folder(tmp_path):
    with pytest.raises(OutputError, match="is a folder"):
        check_output(tmp_path, what="report")


def test_export_bar_never_replaces_a_record_and_asks_before_a_report(tmp_path):
    pytest.importorskip("ipywidgets")
    from fieldbudget.drafts import BudgetDraft
    from fieldbudget.files.signing import new_key
    from fieldbudget.widgets import ExportBar

    draft = BudgetDraft(model="a + b", rows=[{"symbol": "a", "estimate": "1", "uncertainty": "0.3"},
                                            {"symbol": "b", "estimate": "2", "uncertainty": "0.4"}])
    key = new_key("R. Okafor", "operator", tmp_path / "okafor.key")
    bar = ExportBar(draft, folder=tmp_path, sign=key)
    bar.record_button.click()
    first = (tmp_path / "budget.record.json").read_bytes()
    assert json.loads(first)["signatures"][0]["name"] == "R. Okafor"
    bar.replace.value = True
    bar.record_button.click()
    assert "never overwritten" in bar.status.value and (tmp_path / "budget.record.json").read_bytes() == first
    bar.replace.value = False
    bar.report_format.value = "md"
    bar.report_button.click()
    assert "saved" in bar.status.value
    bar.report_button.click()
    assert "pass --force" in bar.status.value or "exists already" in bar.status.value
    bar.replace.value = True
    bar.report_button.click()
    assert "saved" in bar.status.value
