"""The practice screen driven without a browser: hidden answer, submit, side-by-side table, saved files."""

from __future__ import annotations

from pathlib import Path

from fieldbudget.files.competence_record import load_document
from fieldbudget.widgets.practice_view import PracticeView, practice_app

TESLA = Path(__file__).resolve().parents[2] / "templates" / "teslameter-calibration.toml"


def test_the_trainee_goes_from_the_form_to_the_comparison(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    view = practice_app(TESLA, "certificate-k2", trainee="T. Rainee (invented)")
    assert isinstance(view, PracticeView)
    assert "invented" in view.story.value and view.result.value == ""
    assert "decisions made: 0 of 3" in view.progress.value
    view.submit_button.click()
    assert "answered first" in view.message.value and view.result.value == ""
    rows = view.form._all_rows
    rows["zero_offset"].input.value = "3.1e-5"
    rows["zero_offset_u"].input.value = "6.0e-6"   # the trap: U copied without dividing by k = 2
    rows["temperature_coefficient_u"].input.value = "2.0207e-5"
    assert "decisions made: 3 of 3" in view.progress.value
    view.issue.value = "issue the value"
    view.submit_button.click()
    assert view.submit_button.disabled and "Not passed" in view.result.value
    assert "coverage factor k = 2" in view.result.value
    assert view.result.value.count('class="fb-practice-differs"') == 1
    view.save_record_button.click()
    assert "Saved" in view.message.value
    assert load_document(tmp_path / "certificate-k2.practice.json").content["practice"]["passed"] is False
    view.save_summary_button.click()
    assert (tmp_path / "certificate-k2.practice.html").read_text().startswith("<!DOCTYPE html>")
    view.save_record_button.click()  # a training record is never replaced
    assert "never replaced" in view.message.value
    view.close()


def test_an_unknown_case_is_a_message_not_a_traceback():
    view = practice_app(TESLA, "nonesuch")
    assert "cannot be shown" in view.value and "routine-sequence" in view.value
