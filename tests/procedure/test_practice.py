"""Practice cases: the shipped cases, a right pass, each planted mistake found and explained by its step."""

from __future__ import annotations

import copy
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.errors import BudgetFileError, InputError
from fieldbudget.procedure import load_procedure, procedure_from_dict
from fieldbudget.procedure.practice import (
    Decision,
    PracticeSession,
    practice_cases,
    practice_cases_from_list,
    practice_procedure,
)

TEMPLATES = Path(__file__).resolve().parents[2] / "templates"
NMR_TEMPLATE = TEMPLATES / "nmr-reference-field.toml"
TESLA_TEMPLATE = TEMPLATES / "teslameter-calibration.toml"
CASES = [(NMR_TEMPLATE, "routine-1t"), (NMR_TEMPLATE, "gradient-trap"),
         (TESLA_TEMPLATE, "routine-sequence"), (TESLA_TEMPLATE, "certificate-k2")]


@pytest.fixture(scope="module")
def procedures():
    return {p: load_procedure(p) for p in (NMR_TEMPLATE, TESLA_TEMPLATE)}


def _session(procedures, path, case, **answers):
    s = PracticeSession(procedures[path], case, trainee="T. Rainee (invented)")
    for d in s.case.decisions:
        s.decide(d.component, answers.get(d.component, d.answer))
    s.decide_issue(answers.get("issue", s.case.answer.issue))
    return s


def test_each_template_ships_a_straightforward_case_and_a_trap(procedures):
    for path, ids in ((NMR_TEMPLATE, ("routine-1t", "gradient-trap")),
                      (TESLA_TEMPLATE, ("routine-sequence", "certificate-k2"))):
        cases = practice_cases(procedures[path])
        assert tuple(c.id for c in cases) == ids
        assert all("invented" in c.invented.lower() for c in cases)
    trap = practice_cases(procedures[NMR_TEMPLATE])[1]
    assert trap.answer.issue is False  # the gradient invalidates the reading


@pytest.mark.parametrize("path,case", CASES, ids=[c for _, c in CASES])
def test_the_kit_reproduces_the_labs_reference_answer(procedures, path, case):
    # The answer written in the procedure file (results and key intermediate quantities) is what the
    # kit computes from the right decisions: a lab cannot ship a case whose answer the kit contradicts.
    s = _session(procedures, path, case)
    result = s.submit()
    assert result.passed, result.summary_text()
    for q, _unit, mine, ref, tol, within in result.results:
        assert within, (q, mine, ref, tol)
    inputs = {q.symbol: q for q in s.run.last_budget.inputs}
    for symbol, (estimate, u) in s.case.answer.inputs.items():
        assert inputs[symbol].estimate == pytest.approx(estimate, rel=1e-4, abs=1e-15)
        assert inputs[symbol].standard_uncertainty == pytest.approx(u, rel=1e-4)


def test_the_reference_stays_hidden_until_submitted(procedures):
    s = PracticeSession(procedures[NMR_TEMPLATE], "routine-1t")
    with pytest.raises(InputError, match="hidden until then"):
        _ = s.reference
    assert "answer" not in s.case.to_dict() and "decisions" not in s.case.to_dict()
    proc = s.practice
    for d in s.case.decisions:
        comp = proc.component(d.component)
        assert not comp.fixed and comp.value is None and comp.source == ""
        assert "hidden" in comp.training.typical
    assert proc.component("frequency_readings").fixed  # the readings are fed, not typed
    assert "invented" in proc.component("frequency_readings").source
    with pytest.raises(InputError, match="answered first"):
        s.submit()


def test_submit_needs_the_verdict_on_issuing(procedures):
    s = PracticeSession(procedures[NMR_TEMPLATE], "routine-1t")
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    assert s.progress()["decisions_made"] == 3 and not s.progress()["issue_decided"]
    with pytest.raises(InputError, match="issue the value or not"):
        s.submit()
    with pytest.raises(InputError, match="true"):
        s.decide_issue("yes")


def test_wrong_divisor_is_found_and_explained_by_its_step(procedures):
    # U = 1.0e-9 with k = 2 on the certificate: u = U/k = 5e-10 (JCGM 100:2008 4.3.3)
    r = _session(procedures, NMR_TEMPLATE, "routine-1t", timebase_u=1.0e-9).submit()
    assert not r.passed and [d.subject for d in r.differences] == ["timebase_u"]
    d = r.differences[0]
    assert "coverage factor k = 2" in d.explanation
    assert d.step == "timebase" and "'Check the frequency standard'" in d.explanation
    assert "y_tb" in d.inputs and d.u_effect > 0
    assert "instead of" in d.explanation  # what it does to U, in words


def test_missing_correction_is_found_and_explained(procedures):
    r = _session(procedures, TESLA_TEMPLATE, "routine-sequence", zero_offset=0.0).submit()
    d = next(x for x in r.differences if x.subject == "zero_offset")
    assert "missing correction" in d.explanation and d.step == "zero"
    assert "the largest |E| moves by" in d.explanation
    assert "R_zero" in d.inputs


def test_the_gradient_trap_ignored_is_found(procedures):
    r = _session(procedures, NMR_TEMPLATE, "gradient-trap", issue=True).submit()
    assert not r.passed and [d.kind for d in r.differences] == ["issue"]
    text = r.differences[0].explanation
    assert "NOT to issue" in text and "broadened beyond the usable limit" in text
    assert r.differences[0].step == "review" and "do not issue the value" in text


def test_the_certificate_k2_trap_ignored_is_found(procedures):
    r = _session(procedures, TESLA_TEMPLATE, "certificate-k2", zero_offset_u=6.0e-6).submit()
    d = r.differences[0]
    assert d.subject == "zero_offset_u" and "coverage factor k = 2" in d.explanation
    assert d.u_effect > 0 and "+" in d.explanation


def test_a_rectangular_bound_not_divided_by_sqrt3_is_named(procedures):
    # a bound with no distribution stated: rectangular, u = a / sqrt(3) (JCGM 100:2008 4.3.7)
    r = _session(procedures, TESLA_TEMPLATE, "routine-sequence", temperature_coefficient_u=3.5e-5).submit()
    assert "sqrt(3) x the reference" in r.differences[0].explanation


def test_the_result_is_a_readable_immutable_value(procedures):
    r = _session(procedures, NMR_TEMPLATE, "routine-1t", timebase_u=1.0e-9).submit()
    assert "not passed, 1 difference(s)" in repr(r)
    d = r.to_dict()
    assert d["passed"] is False and d["differences"][0]["subject"] == "timebase_u"
    assert any(row["differs"] and row["symbol"] == "y_tb" for row in d["budget"])
    assert sum(row["differs"] for row in d["budget"]) == 1
    html = r._repr_html_()
    assert html.count('class="fb-practice-differs"') == 1 and "fb-practice-side-by-side" in html
    page = r.summary_html()
    assert page.startswith("<!DOCTYPE html>") and "6.2.5" in page and "Supervisor:" in page
    with pytest.raises(AttributeError):
        r.trainee = "someone else"


def test_after_submitting_nothing_changes(procedures):
    s = _session(procedures, NMR_TEMPLATE, "routine-1t")
    first = s.submit()
    assert s.submit() is first
    with pytest.raises(InputError, match="submitted"):
        s.decide("timebase_u", 1e-9)


def _bad(nmr_data, edit):
    data = copy.deepcopy(nmr_data)
    edit(data["practice"][0])
    return practice_cases_from_list(procedure_from_dict(nmr_data, "lab.toml"), data["practice"], "lab.toml")


def test_a_bad_practice_case_names_the_file_and_key_path(nmr_data):
    with pytest.raises(BudgetFileError, match=r"lab.toml, at practice\[0\].decisions\[0\].component: must name"):
        _bad(nmr_data, lambda c: c["decisions"][0].update(component="nonesuch"))
    with pytest.raises(BudgetFileError, match=r"at practice\[0\].invented: must say that the practice data is inv"):
        _bad(nmr_data, lambda c: c.update(invented="real data"))
    with pytest.raises(BudgetFileError, match=r"at practice\[0\].given.line_fwhm: must be a finite number"):
        _bad(nmr_data, lambda c: c["given"].update(line_fwhm="wide"))
    with pytest.raises(BudgetFileError, match=r"at practice\[0\].answer.results.u_rel: must be one of"):
        _bad(nmr_data, lambda c: c["answer"]["results"].update(u_rel={"value": 1, "tolerance": 0}))
    with pytest.raises(BudgetFileError, match=r"at practice\[0\]: missing required key 'answer'"):
        _bad(nmr_data, lambda c: c.pop("answer"))


def test_a_practice_case_does_not_change_the_procedure_itself(procedures):
    proc = procedures[NMR_TEMPLATE]
    case = practice_cases(proc)[0]
    practice = practice_procedure(proc, case)
    assert proc.component("timebase_u").fixed and proc.component("timebase_u").value == 5.0e-10
    assert not practice.component("timebase_u").fixed


@given(st.floats(min_value=-0.5, max_value=0.5))
def test_a_number_agrees_exactly_within_its_tolerance(e):
    d = Decision("x", "?", 5.0e-10, tolerance=1e-3)
    value = 5.0e-10 * (1 + e)
    assert d.agrees(value) == (abs(value - 5.0e-10) <= 1e-3 * 5.0e-10)
    assert not d.agrees(None) and not d.agrees(True)


@settings(max_examples=15, deadline=None)
@given(st.floats(min_value=0.2, max_value=5.0))
def test_a_run_passes_exactly_when_every_decision_agrees(ratio):
    # the invariant: scale the timebase u by any factor; the run passes only within the case's tolerance
    proc = load_procedure(NMR_TEMPLATE)
    s = PracticeSession(proc, "routine-1t", trainee="T. Rainee (invented)")
    for d in s.case.decisions:
        s.decide(d.component, d.answer * ratio if d.component == "timebase_u" else d.answer)
    s.decide_issue(True)
    r = s.submit()
    assert r.passed == (abs(ratio - 1) <= s.case.decision("timebase_u").tolerance)
    assert r.passed == all(ok for *_, ok in r.decisions)
