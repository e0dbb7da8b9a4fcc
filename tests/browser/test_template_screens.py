"""What a user sees of each template at 1280 x 800, in JupyterLab and in Voila, in a real chromium.

For the NMR procedure and the teslameter calibration procedure, in both
front ends, the test

- keeps screenshots as artifacts (tests/browser/artifacts/, git-ignored);
- walks every step and finds no label, input, button or header cut off
  (scrollWidth <= clientWidth);
- enters a bad value and sees a message under the field, marked as refused,
  saying the budget shown is the last good one, while the budget's u_c stays;
- sees the figures drawn: the variance-share chart, and the Monte Carlo
  histogram (NMR, after a run) or the calibration curve (teslameter) as images.

The expected u_c comes from ProcedureRun, the plain-Python state behind the
form, on the same procedure file.
"""

from __future__ import annotations

import re

import pytest

pytestmark = pytest.mark.browser

COUNTER_CSV = "examples/data/counter-readings-2026-11-18.csv"
TEMPLATES = {
    # template: (component to refuse, bad text, what the message says)
    "nmr-reference-field": ("line_fwhm", "eight", "must be a finite number"),
    "teslameter-calibration": ("temperature_coefficient_u", "-1", "must be"),
}

CLIPPED_JS = """root => {
  const bad = [];
  const sel = 'label, .widget-label, input, textarea, select, button, th, .fb-proc-label, .fb-nmr-label';
  for (const el of root.querySelectorAll(sel)) {
    if (!el.getClientRects().length || getComputedStyle(el).visibility === 'hidden') continue;
    if (el.closest('.fb-budget-scroll')) continue;   // the budget table scrolls sideways on purpose
    if (el.scrollWidth > el.clientWidth + 1)
      bad.push(`${el.tagName}.${el.className}: '${(el.value || el.textContent || '').trim().slice(0, 50)}' `
               + `(${el.scrollWidth} > ${el.clientWidth})`);
  }
  return bad;
}"""


def _readings(served) -> str:
    from fieldbudget.drafts.readings import readings_from_csv

    return "\n".join(repr(x) for x in readings_from_csv((served / COUNTER_CSV).read_bytes()))


def _expected_uc(served, name: str, *changes) -> str:
    from fieldbudget.procedure import ProcedureRun, load_procedure
    from fieldbudget.widgets.budget_view import format_u

    run = ProcedureRun(load_procedure(served / "templates" / f"{name}.toml"))
    for change in changes:
        run.set(*change)
    assert run.current, run.errors
    return format_u(run.result.standard_uncertainty, run.result.measurand.unit)


def _box(page, component: str):
    return page.locator(f".fb-proc-field-{component} input, .fb-proc-field-{component} textarea, "
                        f"input.fb-proc-field-{component}, textarea.fb-proc-field-{component}").first


def _go_to_step(page, index: int) -> None:
    """Back to the first step, then Next ``index`` times."""
    back = page.locator(".fb-proc-back").first
    while not back.is_disabled():
        back.click()
        page.wait_for_timeout(150)
    for _ in range(index):
        page.locator(".fb-proc-next").first.click()
        page.wait_for_timeout(150)


def _step_of(served, name: str, component: str) -> int:
    from fieldbudget.procedure import load_procedure

    proc = load_procedure(served / "templates" / f"{name}.toml")
    return next(i for i, s in enumerate(proc.steps) if component in s.components)


def _shot(page, path, locator=None) -> None:
    if locator is not None:
        locator.evaluate("e => e.scrollIntoView({block: 'start'})")
        page.wait_for_timeout(300)
    page.screenshot(path=str(path))


def _expect_seen(locator, timeout: int = 30_000) -> None:
    """Visible once scrolled to: JupyterLab skips rendering cells outside the viewport
    (content-visibility), so a form below a long introduction counts as hidden until then."""
    from playwright.sync_api import expect

    locator.wait_for(state="attached", timeout=timeout)
    locator.scroll_into_view_if_needed(timeout=30_000)
    expect(locator).to_be_visible(timeout=30_000)


def _open_lab(page, jupyter_lab, name: str) -> None:
    from playwright.sync_api import expect

    # a workspace of its own: the shared server would otherwise restore the previous test's notebook,
    # whose kernel reads idle and which the Run menu may then act on
    page.goto(f"{jupyter_lab['base']}/lab/workspaces/{name}/tree/templates/{name}.ipynb"
              f"?token={jupyter_lab['token']}")
    # the status-bar kernel item, not the toolbar indicator (which reads idle before a kernel exists)
    expect(page.get_by_role("button", name=re.compile(r"^Python 3 \(ipykernel\) \| Idle$"))).to_be_visible(
        timeout=90_000)
    # Run All, and again if no cell has started within 30 s: on a loaded machine the first click can land
    # before the notebook panel takes commands (the CI log then shows prompts still "[ ]")
    started = page.locator(".jp-InputArea-prompt", has_text=re.compile(r"\[(\*|\d+)\]"))
    for attempt in range(2):
        page.locator(".lm-MenuBar-itemLabel", has_text=re.compile(r"^Run$")).click()
        page.locator(".lm-Menu-item[data-command='runmenu:run-all']").click()
        try:
            started.first.wait_for(state="attached", timeout=30_000)
            return
        except Exception:  # noqa: BLE001 - playwright's TimeoutError; the second attempt decides
            if attempt:
                raise


def _open_voila(page, voila, served, name: str) -> None:
    page.route("**/cdn.jsdelivr.net/**", lambda route: route.abort())  # the template's icon font
    page.goto(voila(served / "templates" / f"{name}.ipynb"))


@pytest.mark.parametrize("name", sorted(TEMPLATES))
@pytest.mark.parametrize("front", ["lab", "voila"])
def test_template_screen(front, name, request, served, browser_context, artifact_dir):
    from playwright.sync_api import expect

    page = browser_context.new_page()
    stem = artifact_dir / f"{front}-{name}"
    try:
        if front == "lab":
            _open_lab(page, request.getfixturevalue("jupyter_lab"), name)
        else:
            _open_voila(page, request.getfixturevalue("voila"), served, name)
        proc = page.locator(".fb-proc").first
        _expect_seen(page.locator(".fb-proc-next").first, timeout=120_000)
        _shot(page, f"{stem}-top.png", proc)

        # the safety cautions: once, at the top, foldable
        expect(page.locator(".fb-proc-safety details")).to_have_count(1)
        assert page.locator(".fb-proc-cautions .fb-proc-caution").count() == 0  # steps point to them only

        changes = []
        if name == "nmr-reference-field":  # the budget needs the counter readings first
            entered = ("frequency_readings", _readings(served))
            _go_to_step(page, _step_of(served, name, entered[0]))
            box = _box(page, entered[0])
            box.fill(entered[1])
            box.press("Tab")  # a text area commits when it loses focus
            changes.append(entered)
        uc = page.locator(".fb-budget-table td.fb-uc").first
        expected = _expected_uc(served, name, *changes)
        expect(uc).to_have_text(expected, timeout=120_000)
        _shot(page, f"{stem}-result.png", page.locator(".fb-proc-result").first)

        # nothing cut off on any step
        steps = page.locator(".fb-proc-steps li").count()
        _go_to_step(page, 0)
        for i in range(steps):
            clipped = proc.evaluate(CLIPPED_JS)
            assert clipped == [], f"step {i + 1}: cut off: {clipped}"
            if i < steps - 1:
                page.locator(".fb-proc-next").first.click()
                page.wait_for_timeout(150)

        # a bad value: a visible, marked message under the field; the last good budget stays
        component, bad, says = TEMPLATES[name]
        _go_to_step(page, _step_of(served, name, component))
        box = _box(page, component)
        box.fill(bad)
        box.press("Tab")
        msg = page.locator(f".fb-proc-msg-{component} .fb-msg-text").first
        expect(msg).to_be_visible(timeout=30_000)
        expect(msg).to_contain_text(says)
        expect(msg).to_contain_text("The budget shown is the last good one.")
        assert "refused" in msg.evaluate("e => getComputedStyle(e, '::before').content")
        assert msg.evaluate("e => getComputedStyle(e).color") != proc.evaluate("e => getComputedStyle(e).color")
        expect(uc).to_have_text(expected)
        _shot(page, f"{stem}-message.png", box)

        # the figures are drawn
        share = page.locator(".fb-share-svg").first
        _expect_seen(share)
        assert share.bounding_box()["width"] > 200
        if name == "nmr-reference-field":
            trials = page.locator(".fb-field-trials input").first
            trials.fill("20000")
            trials.press("Enter")
            page.locator(".fb-mc-run").first.click()
            image = page.locator("img.fb-mc-hist-img").first
            expect(page.locator(".fb-mc-verdict .fb-verdict").first).to_be_visible(timeout=120_000)
        else:
            image = page.locator("img.fb-curve-img").first
        _expect_seen(image, timeout=60_000)
        image.evaluate("e => e.scrollIntoView({block: 'center'})")
        page.wait_for_function("e => e.complete && e.naturalWidth > 300", arg=image.element_handle(), timeout=30_000)
        page.screenshot(path=f"{stem}-figure.png")
    finally:
        page.close()
