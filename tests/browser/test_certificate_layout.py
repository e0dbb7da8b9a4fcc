"""The calibration certificate as a browser lays it out for print (A4, 210 mm wide): no table runs past the
margins.  Regression: the results table's headings did not wrap and its last column ran off the page."""

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
