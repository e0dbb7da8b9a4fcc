"""End to end in a real browser: the NMR procedure notebook in JupyterLab, driven in chromium.

Opens a copy of templates/nmr-reference-field.ipynb, runs all cells, changes
the field gradient in the guided form, and checks that the budget table on
the page shows the new combined standard uncertainty, computed here in
Python from the same procedure file by ProcedureRun (the plain-Python state
behind the form).  A screenshot is saved under tests/browser/artifacts/.
"""

from __future__ import annotations

import re

import pytest

pytestmark = pytest.mark.browser

NOTEBOOK = "templates/nmr-reference-field.ipynb"
PROCEDURE = "templates/nmr-reference-field.toml"
COUNTER_CSV = "examples/data/counter-readings-2026-11-18.csv"
CHANGE = ("gradient", "0.002")  # component id, new text: 10x the template's gradient


def readings(served) -> str:
    from fieldbudget.drafts.readings import readings_from_csv

    return "\n".join(repr(x) for x in readings_from_csv((served / COUNTER_CSV).read_bytes()))


def expected_uc(served, *changes) -> str:
    from fieldbudget.procedure import ProcedureRun, load_procedure
    from fieldbudget.widgets.budget_view import format_u

    run = ProcedureRun(load_procedure(served / PROCEDURE))
    for change in changes:
        run.set(*change)
    assert run.current, run.errors
    return format_u(run.result.standard_uncertainty, run.result.measurand.unit)


def show(page, component: str):
    """Walk the guided steps (Next, then Back) until the component's entry box is on screen."""
    box = page.locator(f".fb-proc-field-{component} input, .fb-proc-field-{component} textarea, "
                       f"input.fb-proc-field-{component}, textarea.fb-proc-field-{component}").first
    direction = ".fb-proc-next"
    for _ in range(12):
        if box.is_visible():
            return box
        button = page.locator(direction).first
        if button.is_disabled():  # at the last step: walk back
            direction = ".fb-proc-back"
            button = page.locator(direction).first
        button.click()
        page.wait_for_timeout(300)
    raise AssertionError(f"no entry box for {component!r} on any step")


def test_nmr_procedure_notebook_in_jupyterlab(jupyter_lab, browser_context, artifact_dir):
    from playwright.sync_api import expect

    served = jupyter_lab["dir"]
    entered = ("frequency_readings", readings(served))
    before, after = expected_uc(served, entered), expected_uc(served, entered, CHANGE)
    assert before != after  # the change must show on the page
    page = browser_context.new_page()
    shot = artifact_dir / "lab-nmr-procedure.png"
    try:
        page.goto(f"{jupyter_lab['base']}/lab/tree/{NOTEBOOK}?token={jupyter_lab['token']}")
        # the status-bar kernel item, not the toolbar indicator (which reads idle before a kernel exists)
        expect(page.get_by_role("button", name=re.compile(r"^Python 3 \(ipykernel\) \| Idle$"))).to_be_visible(
            timeout=90_000)
        page.locator(".lm-MenuBar-itemLabel", has_text=re.compile(r"^Run$")).click()
        page.locator(".lm-Menu-item[data-command='runmenu:run-all']").click()
        expect(page.locator(".fb-proc-next").first).to_be_visible(timeout=60_000)
        box = show(page, entered[0])
        box.fill(entered[1])
        box.press("Tab")  # a text area commits when it loses focus (continuous_update=False)
        uc = page.locator(".fb-budget-table td.fb-uc").first
        expect(uc).to_have_text(before, timeout=30_000)
        box = show(page, CHANGE[0])
        box.fill(CHANGE[1])
        box.press("Enter")  # a Text box commits on Enter
        expect(uc).to_have_text(after, timeout=30_000)
        uc.evaluate("e => e.scrollIntoView({block: 'center'})")
    finally:
        page.screenshot(path=str(shot), full_page=False)
        print(f"screenshot: {shot}")
        page.close()
