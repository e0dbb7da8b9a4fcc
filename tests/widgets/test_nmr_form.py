"""The NMR form driven from Python: values, messages and physics warnings beside their fields."""

import datetime
import re

import pytest
from nmr_description import nmr_description

from fieldbudget.drafts.nmr_draft import NMRDraft
from fieldbudget.widgets import BudgetView, NMRForm
from fieldbudget.widgets.budget_view import format_u


@pytest.fixture
def form():
    d = NMRDraft(nmr_description())
    return d, NMRForm(d), BudgetView(d)


def test_changing_a_box_changes_budget_and_table(form):
    d, f, v = form
    before = d.result.standard_uncertainty
    f.boxes["sample.u_temperature_C"].box.value = "3"
    assert d.budget.input("t_s").standard_uncertainty == 3.0
    assert d.result.standard_uncertainty > before
    shown = re.search(r'<td class="fb-uc"[^>]*>([^<]*)</td>', v.table.value).group(1)
    assert shown == format_u(d.result.standard_uncertainty, "T")


def test_bad_value_message_beside_the_field(form):
    d, f, v = form
    good = d.result
    box = f.boxes["timebase.u"]
    box.box.value = "-5e-11"
    assert d.result is good and box.box.value == "-5e-11"
    assert "must be a number &gt;= 0" in box.msg.value
    assert "last budget that could be evaluated" in v.note.value


def test_physics_warning_beside_the_field_it_concerns(form):
    _d, f, _v = form
    f.boxes["sample.temperature_C"].box.value = "60"
    assert "outside 5 to 45 degC" in f.warnings["sample.temperature_C"].value
    assert f.warnings["gradient_T_per_m"].value == ""
    f.boxes["sample.temperature_C"].box.value = "22"
    assert f.warnings["sample.temperature_C"].value == ""


def test_a_note_is_shown_as_a_note_not_as_a_warning(form):
    # regression: the note that the line noise is already in the readings' scatter (JCGM 100:2008 4.2)
    # was shown with the warning style and word beside its field and under the budget
    d, f, v = form
    note = f.warnings["line.noise_in_readings"].value
    assert 'class="fb-status-note"' in note and "fb-warning" not in note
    assert 'class="fb-warning"' in f.warnings["line.detection"].value
    notes = [w for w in d.result.warnings if getattr(w, "severity", "warning") == "note"]
    assert notes and v.warnings.value.count('class="fb-status-note"') == len(notes)
    assert "fb-warning" in v.warnings.value  # the real warnings keep theirs


def test_choices_for_nucleus_and_edition(form):
    d, f, _v = form
    assert "2018" in f.boxes["codata"].box.options
    f.boxes["codata"].box.value = "2018"
    assert d.budget.metadata["codata"] == 2018


def test_readings_pasted_and_uploaded(form):
    d, f, _v = form
    f.boxes["frequency.readings_Hz"].box.value = "42576395.1, 42576395.3\n42576395.2"
    assert d.result.contribution("f_read").dof == 2
    content = b"time,frequency_Hz\n1,42576395.0\n2,42576395.4\n3,42576395.2\n4,42576395.2\n"
    f.upload.value = ({"name": "ct9.csv", "type": "text/csv", "size": len(content), "content": memoryview(content),
                       "last_modified": datetime.datetime(2026, 11, 30, tzinfo=datetime.UTC)},)
    assert d.result.contribution("f_read").dof == 3
    assert f.boxes["frequency.readings_Hz"].box.value.splitlines()[0] == "42576395"


def test_repr(form):
    assert repr(form[1]).startswith("<NMRForm over <NMRDraft shielded-proton")


def test_no_exception_escapes_a_callback(form, monkeypatch):
    d, f, _v = form

    def boom(*a, **k):
        raise ZeroDivisionError("deep inside")

    monkeypatch.setattr(d, "set", boom)
    f.boxes["line.snr"].box.value = "10"
    assert "internal error (ZeroDivisionError: deep inside)" in f.status.value
    monkeypatch.setattr(d, "load_counter_csv", boom)
    content = b"f\n1\n2\n"
    f.upload.value = ({"name": "c.csv", "type": "text/csv", "size": len(content), "content": memoryview(content),
                       "last_modified": datetime.datetime(2026, 11, 30, tzinfo=datetime.UTC)},)
    assert "internal error" in f.status.value
