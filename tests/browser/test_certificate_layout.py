"""The calibration certificate and the measurement report as a browser lays them out for print (A4, 210 mm
wide): no table runs past the page body.  Regressions: the certificate's results table (headings that did not
wrap) and the report's ten-column budget table ran past the right margin."""

from __future__ import annotations

from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[2]


def test_every_table_of_the_certificate_keeps_to_the_printed_page(browser_context, tmp_path, artifact_dir):
    from fieldbudget.procedure import ProcedureRun, load_procedure
    from fieldbudget.report.certificate import write_certificate

    run = ProcedureRun(load_procedure(ROOT / "templates" / "teslameter-calibration.toml"))
    page_file = write_certificate(run.make_record(), tmp_path / "certificate.html")
    page = browser_context.new_page()
    try:
        page.goto(page_file.as_uri())
        page.emulate_media(media="print")
        page.set_viewport_size({"width": 794, "height": 1123})  # A4 at 96 px per inch
        body = page.evaluate("() => document.body.getBoundingClientRect().right")
        rights = page.evaluate("() => [...document.querySelectorAll('table')].map(t => "
                               "[t.className, t.getBoundingClientRect().right])")
        assert rights, "the certificate has no tables"
        over = [(cls, right) for cls, right in rights if right > body + 0.5]
        page.screenshot(path=str(artifact_dir / "certificate-print.png"), full_page=True)
        assert not over, f"tables wider than the page body ({body:.0f} px): {over}"
    finally:
        page.close()


def test_every_table_of_the_measurement_report_keeps_to_the_printed_page(browser_context, tmp_path, artifact_dir):
    from fieldbudget.files.measurement_record import record_file
    from fieldbudget.report import render

    rec = record_file(ROOT / "examples" / "data" / "nmr-measurement-2026-11-18.json",
                      created_utc="2026-11-18T10:00:00Z")
    path = tmp_path / "report.html"
    path.write_bytes(render(rec, "html"))
    page = browser_context.new_page()
    try:
        page.goto(path.as_uri())
        page.emulate_media(media="print")
        page.set_viewport_size({"width": 794, "height": 1123})  # A4 at 96 px per inch
        body = page.evaluate("() => document.body.getBoundingClientRect().right")
        rights = page.evaluate("() => [...document.querySelectorAll('table')].map(t => "
                               "[t.id || t.className, t.getBoundingClientRect().right])")
        page.screenshot(path=str(artifact_dir / "report-print.png"), full_page=True)
        over = [(cls, right) for cls, right in rights if right > body + 0.5]
        assert rights and not over, f"tables wider than the page body ({body:.0f} px): {over}"
    finally:
        page.close()
