"""ProcedureView driven from Python, without a browser: set widget values, check the run and the page."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

pytest.importorskip("ipywidgets")

from fieldbudget.widgets.procedure_view import ProcedureView, procedure_app

NMR_TEMPLATE = Path(__file__).resolve().parents[2] / "templates" / "nmr-reference-field.toml"
READINGS = "42576412.31\n42576412.18\n42576412.27\n42576412.22\n42576412.35"


def _tesla(text: str) -> float:
    number, unit = text.replace("\u2009", "").split()
    return float(number) * {"T": 1.0, "mT": 1e-3, "\u00b5T": 1e-6, "nT": 1e-9, "pT": 1e-12}[unit]


def _uc_cell(view: ProcedureView) -> str:
    m = re.search(r'<td class="fb-uc"[^>]*>([^<]*)</td>', view.budget.table.value)
    return m.group(1) if m else ""


@pytest.fixture
def view():
    v = procedure_app(NMR_TEMPLATE)
    yield v
    v.close()


def test_builds_on_the_first_step(view):
    assert view.run.step.id == "prepare"
    assert "Step 1 of 5: Prepare the magnet area" in view.step_title.value
    assert view.back_button.disabled and not view.next_button.disabled
    assert set(view.rows) == {"operator", "measurement_id", "magnet_current"}
    assert "pacemakers" in view.safety.value and "local regulations" in view.safety.value
    assert "Implanted medical devices" in view.step_cautions.value
    assert "still to enter: Locked resonance frequency" in view.status.value
    assert _uc_cell(view) == ""                     # no budget before the readings


def test_next_back_and_the_fields_of_each_step(view):
    view.next_button.click()
    assert view.run.step.id == "place-probe" and "sample_temperature" in view.rows
    assert not view.back_button.disabled
    # a lab-fixed component is shown read-only, with its source
    fixed = view.rows["offset_u"]
    assert "fb-proc-fixed-value" in fixed.input._dom_classes
    assert any("LMCL-PC-2025-032" in c.value for c in fixed.widget.children[0].children[2].children)
    view.back_button.click()
    assert view.run.step.id == "prepare"


def test_entering_values_builds_and_updates_the_budget(view):
    view.run.go("lock")
    view.rows["frequency_readings"].input.value = READINGS
    assert view.run.current
    u1 = _uc_cell(view)
    assert u1.endswith("T") and _tesla(u1) > 0
    assert "U = " in view.budget.headline.value          # the result stands on top of its budget
    view.run.go("place-probe")
    view.rows["gradient"].input.value = "2e-3"           # ten times the gradient
    u2 = _uc_cell(view)
    assert u2 != u1 and _tesla(u2) > _tesla(u1)
    assert view.run.result.standard_uncertainty == pytest.approx(_tesla(u2), rel=5e-2)  # two digits shown
    assert "Accepted:" in view.acceptance.value or "Rejected:" in view.acceptance.value


def test_bad_text_shows_a_message_and_keeps_the_last_good_budget(view):
    view.run.go("lock")
    view.rows["frequency_readings"].input.value = READINGS
    good = view.run.result
    table = view.budget.table.value
    box = view.rows["line_fwhm"].input
    box.value = "eight"
    assert box.value == "eight"                                  # what was typed stays
    assert "must be a finite number" in view.rows["line_fwhm"].msg.value
    assert "fb-bad" in box._dom_classes
    assert view.run.result is good and view.budget.table.value == table
    box.value = "12"
    assert view.rows["line_fwhm"].msg.value == "" and "fb-bad" not in box._dom_classes


def test_value_refused_by_the_nmr_layer_is_shown_beside_its_field(view):
    view.run.go("lock")
    view.rows["frequency_readings"].input.value = READINGS
    good = view.run.result
    view.rows["line_fwhm"].input.value = "0"
    msg = view.rows["line_fwhm"].msg.value
    # in the user's words: no JSON pointer, the field's label in the status line, and the last good budget named
    assert "must be a number &gt; 0" in msg and "#/" not in msg and "last good one" in msg
    assert "#/" not in view.status.value and view.run.procedure.component("line_fwhm").label in view.status.value
    assert view.run.result is good and "(last good budget)" in view.budget.headline.value
    assert "last budget" in view.budget.note.value


def test_training_mode_shows_the_training_panels(view):
    view.next_button.click()
    panel = view.rows["sample_temperature"].training
    assert panel.layout.display == "none"
    view.training_toggle.value = True
    assert view.run.training and panel.layout.display is None
    assert "25 degC" in panel.value and "What it is" in panel.value
    view.run.set_training(False)
    assert view.training_toggle.value is False and panel.layout.display == "none"


def test_css_classes_for_the_browser_test(view):
    classes = set(view.widget._dom_classes)
    assert "fb-proc" in classes
    assert "fb-proc-budget" in view.budget._dom_classes
    view.next_button.click()
    assert {"fb-proc-field", "fb-proc-field-gradient"} <= set(view.rows["gradient"].input._dom_classes)
    assert "fb-proc-next" in view.next_button._dom_classes


def test_html_is_escaped():
    import tomllib

    from fieldbudget.procedure import ProcedureRun, procedure_from_dict

    data = tomllib.loads(NMR_TEMPLATE.read_text("utf-8"))
    data["steps"][0]["instruction"] = "<script>x</script> & more"
    data["components"]["operator"]["label"] = "<b>who</b>"
    v = ProcedureView(ProcedureRun(procedure_from_dict(data, "x.toml")))
    try:
        assert "<script>" not in v.instruction.value and "&lt;script&gt;" in v.instruction.value
        assert "<b>who</b>" not in v.rows["operator"].label.value
    finally:
        v.close()


def test_repr_is_short(view):
    assert repr(view).startswith("<ProcedureView over <ProcedureRun 'nmr-reference-field'")


def test_a_bad_procedure_file_gives_a_message_not_a_traceback(tmp_path):
    bad = tmp_path / "lab.toml"
    bad.write_text('format = "fieldbudget-procedure/1"\n', encoding="utf-8")
    shown = procedure_app(bad)
    assert "fb-proc-error" in shown._dom_classes
    assert f"{bad}, at (top level): missing required key &#x27;procedure&#x27;" in shown.value


def test_export_bar_saves_the_runs_budget_and_measurement(view, tmp_path):
    import json

    bar = view.export
    bar.folder = tmp_path
    bar.save_button.click()
    assert "nothing to save yet" in bar.status.value          # no readings yet
    view.run.set("frequency_readings", READINGS)
    bar.save_button.click()
    saved = json.loads((tmp_path / "nmr-reference-field.json").read_text())
    assert saved == view.run.last_budget.to_dict()
    bar.measurement_button.click()
    assert json.loads((tmp_path / "nmr-reference-field.measurement.json").read_text()) == view.run.measurement_dict()


def test_export_bar_record_names_operator_procedure_and_acceptance(tmp_path):
    """Regression: a record saved from the guided procedure had an empty operator and no procedure."""
    import json

    from fieldbudget.procedure.demo import DEMO_ENTRIES, demo_run

    run = demo_run()
    run.evaluate()
    view = ProcedureView(run)
    try:
        view.export.folder = tmp_path
        view.export.record_button.click()
        assert "saved" in view.export.status.value, view.export.status.value
        saved = next(tmp_path.glob("*.record.json"))
        rec = json.loads(saved.read_text(encoding="utf-8"))
    finally:
        view.close() if hasattr(view, "close") else None
    assert rec["operator"] == DEMO_ENTRIES["operator"]
    assert rec["procedure"] == {"name": run.procedure.name, "id": run.procedure.id, "version": run.procedure.version}
    assert rec["identification"]["operator"] == DEMO_ENTRIES["operator"]
    assert rec["identification"]["id"] == DEMO_ENTRIES["measurement_id"]
    assert rec["identification"]["probe"] and rec["identification"]["instrument"]
    assert rec["acceptance"]["accepted"] is True and len(rec["acceptance"]["verdicts"]) == len(run.procedure.acceptance)
    assert rec["measurement"]["description"] == run.measurement_dict()
