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


def test_the_guided_form_says_who_runs_it(tmp_path):
    from fieldbudget.files import competence_record as cr
    from fieldbudget.files.signing import new_key
    from fieldbudget.lab.competence import Competence
    from fieldbudget.procedure import load_procedure
    from fieldbudget.procedure.practice import PracticeSession
    from fieldbudget.widgets.procedure_view import ProcedureView, procedure_app

    nmr = TESLA.with_name("nmr-reference-field.toml")
    lab = tmp_path / "lab"
    lab.mkdir()
    s = PracticeSession(load_procedure(nmr), "routine-1t", trainee="S. Upervisor (invented)")
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    s.decide_issue(True)
    doc = cr.make_practice_record(s.submit())
    doc = cr.sign_document(doc, new_key("S. Upervisor (invented)", "operator", tmp_path / "s.key"))
    manager = new_key("Q. Manager (invented)", "approver", tmp_path / "q.key")
    comp = Competence(lab)
    comp.add(cr.save_document(cr.sign_document(doc, manager), tmp_path / "s.practice.json"))
    comp.authorise("S. Upervisor (invented)", load_procedure(nmr), key=manager, date_from="2026-01-01",
                   until="2099-12-31")
    view = procedure_app(nmr, operator="N. Ewcomer (invented)", lab=lab, supervisor="S. Upervisor (invented)")
    assert isinstance(view, ProcedureView)
    assert "SUPERVISED by S. Upervisor" in view.authorisation.value and "fb-verdict-open" in view.authorisation.value
    view.close()
    (lab / "settings.toml").write_text('[competence]\nunauthorised = "refuse"\n')
    refused = procedure_app(nmr, operator="N. Ewcomer (invented)", lab=lab)
    assert "cannot be shown" in refused.value and "settings refuse the run" in refused.value
