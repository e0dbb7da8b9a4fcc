"""The teslameter procedure saves a verified calibration record and its certificate (invented demo lab).

Checks: the record re-evaluates to the last digit (fieldbudget verify), the certificate's checklist
(ISO/IEC 17025:2017 7.8.2.1, 7.8.4.1, 7.8.6; clause letters from memory) is complete with the template's
certificate details and becomes a DRAFT without them, and the export bar's buttons do the same from the form.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.files.record import load_record, save_record, verify_record
from fieldbudget.procedure import ProcedureRun, load_procedure
from fieldbudget.report.certificate import certificate_content, missing, write_certificate

TEMPLATE = Path(__file__).resolve().parents[2] / "templates" / "teslameter-calibration.toml"


@pytest.fixture(scope="module")
def run() -> ProcedureRun:
    return ProcedureRun(load_procedure(TEMPLATE))


def test_run_saves_a_verified_calibration_record_and_a_certificate(run, tmp_path):
    rec = run.make_record()
    d = rec.to_dict()
    assert d["kind"] == "fieldbudget calibration record"
    assert d["procedure"] == {"name": run.procedure.name, "version": run.procedure.version}
    assert "every acceptance limit met" in d["remarks"]
    path = save_record(rec, tmp_path / "cal.record.json")
    v = verify_record(path)
    assert v.passed, v.report()
    again = load_record(path)
    assert not missing(certificate_content(again))
    out = write_certificate(again, tmp_path / "cal.md")
    text = out.read_text(encoding="utf-8")
    assert "LMCL-C-2026-0420" in text and "DRAFT" not in text and "DEMO-77812" in text


def test_without_certificate_details_the_certificate_is_a_draft(tmp_path):
    r = ProcedureRun(load_procedure(TEMPLATE))
    r.set("cert_customer", "")
    r.set("cert_item_serial", "")
    c = certificate_content(r.make_record())
    gone = missing(c)
    assert any("name of the customer" in m for m in gone) and any("identification of the item" in m for m in gone)


def test_the_export_bar_buttons_save_the_record_and_write_the_certificate(tmp_path):
    pytest.importorskip("ipywidgets")
    from fieldbudget.widgets.procedure_view import procedure_app

    view = procedure_app(TEMPLATE)
    try:
        bar = view.export
        bar.folder = tmp_path
        bar.record_button.click()
        assert "saved" in bar.status.value, bar.status.value
        rec_path = tmp_path / "teslameter-calibration.record.json"
        assert json.loads(rec_path.read_text())["kind"] == "fieldbudget calibration record"
        assert verify_record(rec_path).passed
        bar.report_format.value = "html"
        bar.report_button.click()
        assert "saved" in bar.status.value, bar.status.value
        html = (tmp_path / "teslameter-calibration.html").read_text(encoding="utf-8")
        assert "Calibration certificate" in html and "LMCL-C-2026-0420" in html
        bar.report_format.value = "csv"
        bar.report_button.click()
        assert "html, pdf, md" in bar.status.value  # a calibration's report is its certificate
    finally:
        view.close()
