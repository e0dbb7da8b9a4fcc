"""The practice notebooks in JupyterLab and in Voila, in a real chromium: hidden answer, decisions, submit,
comparison.

For each template's practice notebook (as shipped: its first, straightforward
case) the test runs the notebook, checks that nothing of the reference answer
is on the page, makes the decisions in their steps (the NMR ones right, one
teslameter one wrong: the zero offset left out), gives the verdict, submits,
and sees the verdict and the side-by-side table, with the differing row
marked for the planted mistake.  Screenshots go to tests/browser/artifacts/.
"""

from __future__ import annotations

import pytest
from test_template_screens import _box, _expect_seen, _go_to_step, _open_lab, _open_voila, _shot

pytestmark = pytest.mark.browser

# notebook stem -> (procedure file, case as shipped in the notebook, planted mistakes, expected verdict)
PRACTICE = {
    "nmr-reference-field": ("routine-1t", {}, "Passed"),
    "teslameter-calibration": ("routine-sequence", {"zero_offset": "0"}, "Not passed"),
}


@pytest.mark.parametrize("name", sorted(PRACTICE))
@pytest.mark.parametrize("front", ["lab", "voila"])
def test_practice_screen(front, name, request, served, browser_context, artifact_dir):
    from playwright.sync_api import expect

    from fieldbudget.procedure import load_procedure
    from fieldbudget.procedure.practice import practice_case

    case_id, mistakes, verdict = PRACTICE[name]
    proc = load_procedure(served / "templates" / f"{name}.toml")
    case = practice_case(proc, case_id)
    page = browser_context.new_page()
    stem = artifact_dir / f"practice-{front}-{name}"
    try:
        if front == "lab":
            _open_lab(page, request.getfixturevalue("jupyter_lab"), f"{name}-practice")
        else:
            _open_voila(page, request.getfixturevalue("voila"), served, f"{name}-practice")
        submit = page.locator(".fb-practice-submit").first
        _expect_seen(submit, timeout=120_000)
        view = page.locator(".fb-practice").first
        _shot(page, f"{stem}-top.png", view)
        expect(page.locator(".fb-practice-progress").first).to_contain_text("decisions made: 0 of")
        assert page.locator(".fb-practice-result").first.inner_text().strip() == ""
        assert page.locator(".fb-practice-side-by-side").count() == 0   # the reference stays hidden

        for d in case.decisions:
            step = next(i for i, s in enumerate(proc.steps) if d.component in s.components)
            _go_to_step(page, step)
            box = _box(page, d.component)
            box.fill(mistakes.get(d.component, repr(d.answer)))
            box.press("Tab")
            page.wait_for_timeout(300)
        expect(page.locator(".fb-practice-progress").first).to_contain_text(
            f"decisions made: {len(case.decisions)} of {len(case.decisions)}", timeout=30_000)
        radios = page.locator(".fb-practice-issue input[type=radio]")
        radios.nth(0 if case.answer.issue else 1).check()
        submit.scroll_into_view_if_needed()
        submit.click()
        result = page.locator(".fb-practice-result .fb-practice-verdict").first
        _expect_seen(result, timeout=120_000)
        expect(result).to_contain_text(verdict)
        table = page.locator(".fb-practice-side-by-side").first
        _expect_seen(table)
        differing = page.locator(".fb-practice-side-by-side tr.fb-practice-differs")
        if mistakes:
            expect(differing).to_have_count(1)
            assert differing.first.evaluate("e => getComputedStyle(e.cells[0]).fontWeight") in ("700", "bold")
            expect(page.locator(".fb-practice-difference").first).to_contain_text("missing correction")
        else:
            expect(differing).to_have_count(0)
        expect(page.locator(".fb-practice-save-record").first).to_be_visible()
        _shot(page, f"{stem}-result.png", page.locator(".fb-practice-result").first)
    finally:
        page.close()
