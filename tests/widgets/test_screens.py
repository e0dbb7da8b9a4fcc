"""The guided screens as a user reads them, driven without a browser: safety once, training for every
step, the Monte Carlo panel, one U per calibration point, the CMC table, one wording per decision."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

pytest.importorskip("ipywidgets")

from fieldbudget.widgets.procedure_view import procedure_app  # noqa: E402
from fieldbudget.widgets.screens import WORDS  # noqa: E402

TEMPLATES = Path(__file__).resolve().parents[2] / "templates"


@pytest.fixture(scope="module")
def nmr():
    v = procedure_app(TEMPLATES / "nmr-reference-field.toml")
    yield v
    v.close()


@pytest.fixture(scope="module")
def tesla():
    v = procedure_app(TEMPLATES / "teslameter-calibration.toml")
    yield v
    v.close()


def _all_html(view) -> str:
    out = []

    def walk(wd):
        if hasattr(wd, "value") and isinstance(wd.value, str):
            out.append(wd.value)
        for c in getattr(wd, "children", ()):
            walk(c)

    walk(view.widget)
    return "\n".join(out)


def test_safety_text_once_at_the_top_and_foldable(nmr):
    page = _all_html(nmr)
    assert page.count("pacemakers") == 1 and "<details open>" in nmr.safety.value
    assert nmr.widget.children.index(nmr.safety) < nmr.widget.children.index(nmr.steps_list)
    assert "see Safety at the top" in nmr.step_cautions.value


@pytest.mark.parametrize("which", ["nmr", "tesla"])
def test_every_step_has_training_text_shown_in_training_mode(which, request):
    view = request.getfixturevalue(which)
    assert all(s.training for s in view.run.steps)
    view.run.set_training(True)
    try:
        for i in range(len(view.run.steps)):
            view.run.go(i)
            assert "Training." in view.step_training.value
        view.run.go("review")
        assert "budget" in view.step_training.value.lower()
    finally:
        view.run.set_training(False)
        view.run.go(0)
    assert view.step_training.value == ""


def test_nmr_procedure_has_the_monte_carlo_panel(nmr, tesla):
    assert nmr.monte_carlo is not None and nmr.export.job is nmr.monte_carlo.job
    assert tesla.monte_carlo is None


def test_teslameter_shows_one_table_and_the_u_reported(tesla):
    from fieldbudget.widgets.budget_view import format_u

    o = tesla.run.outcome
    html = tesla.outcome.value
    assert html.count("<table") == 1 and html.count("<tr>") == 1 + len(o.calibration.points)
    for p in o.calibration.points:  # the U(E) reported (the propagated one), once per point
        assert f"<td class=\"fb-num\">{format_u(p.expanded_uncertainty, 'T')}</td>" in html
    assert "Conformity (JCGM 106" not in _all_html(tesla)              # no per-point blocks
    assert tesla.budget.summary.layout.display == "none"               # no second, first-order U
    assert "img" in tesla.curve.value and "fb-curve-img" in tesla.curve.value
    assert "Calibration and measurement capability" in tesla.curve.value


def test_acceptance_shows_no_code_and_one_unit(nmr, tesla):
    for view in (nmr, tesla):
        html = view.acceptance.value
        assert "&lt;=" not in html and "<=" not in html and "warning_count" not in html
        assert "5e-07" not in html
        words = set(re.findall(r'fb-verdict-(?:pass|fail|open)">(\w+)<', html))
        assert words and words <= set(WORDS.values())
    assert "at most 0.5 ppm" in nmr.acceptance.value                    # the limit's own unit (ppm)


def test_conformity_and_acceptance_share_their_words(tesla):
    page = _all_html(tesla)
    for other in ("conforms", "does not conform", "NOT met", "is not shown to conform"):
        assert other not in page
