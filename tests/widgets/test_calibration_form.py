"""The calibration form driven from Python."""

import pytest

from fieldbudget.drafts import CalibrationDraft
from fieldbudget.widgets import calibration_app


@pytest.fixture
def app():
    pts = [{"reference_t": b, "u_reference_t": 1e-8, "readings_t": [b + 1.5e-4, b + 1.6e-4, b + 1.4e-4]}
           for b in (0.2, 0.5, 1.0)]
    return calibration_app(CalibrationDraft(pts, {"resolution_t": 1e-5, "tolerance_t": 1e-3}), monte_carlo=False)


def test_value_change_updates_results_and_budget(app):
    form, view = app.form, app.view
    before = form.results.value
    form._rows[0].texts["u_reference_t"].box.value = "2e-5"
    assert form.results.value != before and "accepted" in form.results.value
    assert "fb-uc" in view.table.value


def test_bad_reading_message_beside_the_box(app):
    form = app.form
    good = app.draft.calibration
    bt = form._rows[2].texts["readings_t"]
    bt.box.value = "1.00015 x"
    assert "not a number" in bt.msg.value and app.draft.calibration is good
    assert "last calibration" in form.status.value


def test_setting_dropdown_and_select_button(app):
    form = app.form
    form.settings["decision_rule"][0].value = "guarded acceptance"
    assert app.draft.conformity[0].decision_rule == "guarded acceptance"
    form._rows[2].show.click()
    assert app.draft.result.measurand.symbol == "E_3" and 'fb-cal-selected' in form.results.value


def test_add_and_remove_point_buttons(app):
    form = app.form
    form._rows[1].remove.click()
    assert len(form._rows) == 2 and len(app.draft.calibration.points) == 2
    form.add_button.click()
    assert len(form._rows) == 3
    assert "must be at least one reading" in form._rows[2].texts["readings_t"].msg.value  # a new point needs readings


def test_curve_shown(app):
    assert "calibration curve" in app.form.curve.value and "a1 = " in app.form.curve.value


def test_no_exception_escapes_a_callback(app, monkeypatch):
    def boom(*a, **k):
        raise KeyError("lost")

    monkeypatch.setattr(app.draft, "set", boom)
    app.form._rows[0].texts["name"].box.value = "first"
    assert "internal error (KeyError" in app.form.status.value
