"""End to end in a real browser, as a lab would serve the form to staff: Voila.

A notebook built here calls ``fieldbudget.widgets.app(nmr=...)`` on a copy of
the demo lab's measurement file (examples/data, invented data).  Voila runs
it; the test changes the sample temperature's standard uncertainty in the
NMR form and checks that the budget table on the page shows the new
combined standard uncertainty, computed here by NMRDraft with the same
change.  A screenshot is saved under tests/browser/artifacts/.
"""

from __future__ import annotations

import pytest

pytestmark = pytest.mark.browser

MEASUREMENT = "examples/data/nmr-measurement-2026-11-18.json"
CHANGE = ("sample.u_temperature_C", "3")


def test_nmr_form_in_voila(voila, served, browser_context, artifact_dir):
    import nbformat
    from playwright.sync_api import expect

    from fieldbudget.drafts.nmr_draft import NMRDraft
    from fieldbudget.widgets.budget_view import format_u

    measurement = served / MEASUREMENT
    if not measurement.is_file():
        pytest.skip(f"{MEASUREMENT} is not in this checkout")
    draft = NMRDraft.from_file(measurement)
    before = format_u(draft.result.standard_uncertainty, "T")
    draft.set(*CHANGE)
    after = format_u(draft.result.standard_uncertainty, "T")
    assert draft.current and before != after

    nb = nbformat.v4.new_notebook()
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    nb.cells = [nbformat.v4.new_markdown_cell("# NMR field measurement (demo data, invented lab)"),
                nbformat.v4.new_code_cell(f"from fieldbudget.widgets import app\napp(nmr={measurement.name!r}, "
                                          "trials=100_000)")]
    path = measurement.parent / "voila-nmr-form.ipynb"
    nbformat.write(nb, path)

    page = browser_context.new_page()
    page.route("**/cdn.jsdelivr.net/**", lambda route: route.abort())  # the template's icon font
    shot = artifact_dir / "voila-nmr-form.png"
    try:
        page.goto(voila(path))
        uc = page.locator(".fb-budget-table td.fb-uc").first
        # the first render waits for Voila's kernel to start and import the kit: long on a loaded machine
        expect(uc).to_have_text(before, timeout=180_000)
        box = page.locator(".fb-field-sample-u-temperature-C input").first
        box.fill(CHANGE[1])
        box.press("Enter")
        expect(uc).to_have_text(after, timeout=30_000)
        box.fill("-1")  # bad input: message beside the field, last good budget stays
        box.press("Enter")
        expect(page.locator(".fb-field-sample-u-temperature-C + .fb-msg, "
                            ".fb-cell:has(.fb-field-sample-u-temperature-C) .fb-msg").first).to_contain_text(
            "must be a number >= 0", timeout=30_000)
        expect(uc).to_have_text(after)
        expect(page.locator(".fb-stale-note").first).to_contain_text("last budget that could be evaluated")
        page.screenshot(path=str(artifact_dir / "voila-nmr-form-top.png"))
        page.locator(".fb-app-budget").first.scroll_into_view_if_needed()
    finally:
        page.screenshot(path=str(shot))
        print(f"screenshot: {shot}")
        page.close()
