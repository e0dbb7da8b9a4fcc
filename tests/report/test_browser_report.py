"""The HTML report in a real headless chromium, and the PDF chromium prints from it.

Needs Debian's chromium (``apt-get install chromium``).  Without it the tests
are skipped, unless ``FIELDBUDGET_REQUIRE_BROWSER=1`` (CI), which turns the
missing browser into a failure.
"""

from __future__ import annotations

import io
import os
import re
import unicodedata

import pytest

from fieldbudget.files.record import make_record
from fieldbudget.report import render, write_report
from fieldbudget.report.pdf import CHROMIUM_ARGS, find_chromium
from fieldbudget.report.tables import build_report_data
from tests.report._budgets import mixed_budget, nmr_budget

pytestmark = pytest.mark.browser

STAMP = "2026-11-30T09:15:00Z"
CHROMIUM = find_chromium()


def _need_browser():
    if CHROMIUM is None:
        reason = "chromium is not installed (apt-get install chromium)"
        if os.environ.get("FIELDBUDGET_REQUIRE_BROWSER") == "1":
            pytest.fail(f"{reason}, and FIELDBUDGET_REQUIRE_BROWSER=1")
        pytest.skip(reason)


@pytest.fixture(scope="module")
def record():
    return make_record(nmr_budget(), monte_carlo=2000, seed=5, operator="R. Okafor", created_utc=STAMP)


def _plain(text: str) -> str:
    # NFKC undoes the 'ff'/'fi' ligatures some PDF fonts carry; whitespace as one space.
    return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text)).strip()


def test_html_report_opens_in_chromium_without_console_errors(tmp_path, record):
    _need_browser()
    playwright = pytest.importorskip("playwright.sync_api")
    path = write_report(record, tmp_path / "report.html")
    errors: list[str] = []
    with playwright.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True,
                                    args=[a for a in CHROMIUM_ARGS if a != "--no-pdf-header-footer"])
        try:
            page = browser.new_page()
            page.on("console", lambda m: errors.append(f"console {m.type}: {m.text}") if m.type == "error" else None)
            page.on("pageerror", lambda e: errors.append(f"page error: {e}"))
            page.on("requestfailed", lambda r: errors.append(f"request failed: {r.url}"))
            page.goto(path.as_uri())
            page.wait_for_load_state("load")
            statement = page.locator("#fb-statement")
            assert _plain(statement.inner_text()) == _plain(build_report_data(record).headline_text)
            assert page.locator("#fb-digest").inner_text().strip() == record.digest
            charts = page.locator("svg.fb-chart")
            assert charts.count() == 2
            for i in range(2):
                box = charts.nth(i).bounding_box()
                assert box and box["width"] > 100 and box["height"] > 20
            rows = page.locator("table.fb-budget tbody tr")
            assert rows.count() == 3 + 3  # the inputs, then the correlation, second-order and total rows
        finally:
            browser.close()
    assert errors == []


# mixed_budget correlates a rectangular input, which Monte Carlo refuses (JCGM 101 6.4.8): GUM only.
@pytest.mark.parametrize("budget, trials, expected_pages", [(nmr_budget, 1000, 3), (mixed_budget, None, 3)])
def test_pdf_has_the_expected_pages_and_the_statement(tmp_path, budget, trials, expected_pages):
    """The print CSS puts the identification, the result with its warnings and the GUM result on page 1,
    the model and the budget next, and the traceability chain, record details, software and digest from a
    new page (docs/records-and-reports.md)."""
    _need_browser()
    pypdf = pytest.importorskip("pypdf")
    rec = make_record(budget(), monte_carlo=trials, seed=3, created_utc=STAMP)
    data = render(rec, "pdf")
    assert data[:5] == b"%PDF-"
    reader = pypdf.PdfReader(io.BytesIO(data))
    assert len(reader.pages) == expected_pages
    pages = [_plain(p.extract_text()) for p in reader.pages]
    first, last = pages[0], pages[-1]
    headline = _plain(build_report_data(rec).headline_text)
    assert headline in first
    assert f"page 1 of {expected_pages}" in first and rec.digest[:16] in first  # the page margins
    assert any("Uncertainty budget" in p for p in pages[:2])
    chain = next(i for i, p in enumerate(pages) if "Traceability chain" in p)
    assert chain >= 2 and rec.digest in last.replace(" ", "")


def test_pdf_page_count_in_the_docs_is_what_is_produced():
    """docs/records-and-reports.md states the page count of the README example's PDF; it must be true."""
    _need_browser()
    pypdf = pytest.importorskip("pypdf")
    from pathlib import Path

    from fieldbudget.files.measurement_record import record_file

    root = Path(__file__).resolve().parents[2]
    docs = (root / "docs" / "records-and-reports.md").read_text(encoding="utf-8")
    stated = re.search(r"README's NMR example gives a (\d+)-page PDF", docs)
    assert stated, "the docs state the page count of the README example's PDF"
    rec = record_file(root / "tests" / "nmr" / "data" / "water_cylinder_1p5T.json", created_utc=STAMP)
    assert len(pypdf.PdfReader(io.BytesIO(render(rec, "pdf"))).pages) == int(stated.group(1))


def test_missing_browser_skips_or_fails_as_the_environment_asks(monkeypatch):
    import tests.report.test_browser_report as me

    monkeypatch.setattr(me, "CHROMIUM", None)
    monkeypatch.setenv("FIELDBUDGET_REQUIRE_BROWSER", "1")
    with pytest.raises(pytest.fail.Exception, match="FIELDBUDGET_REQUIRE_BROWSER=1"):
        me._need_browser()
    monkeypatch.delenv("FIELDBUDGET_REQUIRE_BROWSER")
    with pytest.raises(pytest.skip.Exception, match="chromium is not installed"):
        me._need_browser()
