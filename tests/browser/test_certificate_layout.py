"""The calibration certificate and the measurement report as a browser lays them out for print (A4, 210 mm
wide): no table runs past the page body.  Regressions: the certificate's results table (headings that did not
wrap) and the report's ten-column budget table ran past the right margin."""

from __future__ import annotations

from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[2]


def _tables_wider_than_the_page(browser_context, page_file: Path, screenshot: Path) -> list:
    """(id or class, right edge) of every table whose right edge passes the body's, at A4 in print media."""
    page = browser_context.new_page()
    try:
        page.goto(page_file.as_uri())
        page.emulate_media(media="print")
        page.set_viewport_size({"width": 794, "height": 1123})  # A4 at 96 px per inch
        body = page.evaluate("() => document.body.getBoundingClientRect().right")
        rights = page.evaluate("() => [...document.querySelectorAll('table')].map(t => "
                               "[t.id || t.className, t.getBoundingClientRect().right])")
        page.screenshot(path=str(screenshot), full_page=True)
        assert rights, f"{page_file.name} has no tables"
        return [(name, right, body) for name, right in rights if right > body + 0.5]
    finally:
        page.close()


def test_every_table_of_the_certificate_keeps_to_the_printed_page(browser_context, tmp_path, artifact_dir):
    from fieldbudget.procedure import ProcedureRun, load_procedure
    from fieldbudget.report.certificate import write_certificate

    run = ProcedureRun(load_procedure(ROOT / "templates" / "teslameter-calibration.toml"))
    page_file = write_certificate(run.make_record(), tmp_path / "certificate.html")
    assert _tables_wider_than_the_page(browser_context, page_file, artifact_dir / "certificate-print.png") == []


def test_every_table_of_the_measurement_report_keeps_to_the_printed_page(browser_context, tmp_path, artifact_dir):
    from fieldbudget.files.measurement_record import record_file
    from fieldbudget.report import render

    rec = record_file(ROOT / "examples" / "data" / "nmr-measurement-2026-11-18.json",
                      created_utc="2026-11-18T10:00:00Z")
    page_file = tmp_path / "report.html"
    page_file.write_bytes(render(rec, "html"))
    assert _tables_wider_than_the_page(browser_context, page_file, artifact_dir / "report-print.png") == []
