"""Export bar and the one-call app builder."""

import json

import pytest
from nmr_description import nmr_description

from fieldbudget.drafts import BudgetDraft
from fieldbudget.files.budget_file import load_budget
from fieldbudget.widgets import App, ExportBar, app


@pytest.fixture
def draft():
    return BudgetDraft(model="a + b", rows=[{"symbol": "a", "estimate": "1", "uncertainty": "0.3"},
                                            {"symbol": "b", "estimate": "2", "uncertainty": "0.4"}])


def test_save_budget_file_round_trips(draft, tmp_path):
    bar = ExportBar(draft, folder=tmp_path)
    bar.path.value = "mine.json"
    bar.save_button.click()
    assert "saved" in bar.status.value
    assert load_budget(tmp_path / "mine.json").to_dict() == draft.budget.to_dict()


def test_report_formats_that_exist(draft, tmp_path):
    bar = ExportBar(draft, folder=tmp_path)
    if not bar.writers:
        pytest.skip("no report layer in this installation")
    bar.report_format.value = "html"
    bar.report_button.click()
    assert "saved" in bar.status.value and (tmp_path / "budget.html").read_text().startswith("<!")
    bar.record_button.click()
    assert json.loads((tmp_path / "budget.record.json").read_text())


def test_nothing_to_save_gives_a_message(tmp_path):
    d = BudgetDraft(model="a", rows=[{"symbol": "a", "uncertainty": "-1"}])
    bar = ExportBar(d, folder=tmp_path)
    bar.save_button.click()
    assert "nothing to save yet" in bar.status.value and not list(tmp_path.iterdir())


def test_app_over_a_budget_file_dict_and_over_nmr(draft, tmp_path):
    a = app(draft.budget.to_dict(), trials=10_000)
    assert isinstance(a, App) and a.draft.current and a.monte_carlo.job.trials.value == 10_000
    n = app(nmr=nmr_description(), folder=tmp_path, monte_carlo=False)
    assert n.monte_carlo is None and n.draft.current and "fb-uc" in n.view.table.value
    assert hasattr(n.export, "measurement_button")
    assert repr(n).startswith("<App over <NMRDraft")


def test_rebuilding_an_app_on_the_same_draft_closes_the_old_one(draft):
    first = app(draft)
    second = app(draft)
    draft.set(0, "uncertainty", "0.9")
    assert first.view.table.value != second.view.table.value  # the first no longer listens
    assert ">0.98<" in second.view.table.value  # sqrt(0.9^2 + 0.4^2) = 0.98489 (GUM 5.1.2), two digits


def test_widgets_hold_no_numerics():
    # thin views: no numpy/scipy in the widget modules (architecture rule)
    from pathlib import Path

    import fieldbudget.widgets as wpkg

    for f in Path(wpkg.__file__).parent.glob("*.py"):
        text = f.read_text()
        assert "import numpy" not in text and "import scipy" not in text, f.name
