"""The Monte Carlo panel driven from Python: run, progress, Cancel, histogram and verdict.

The check budget is y = a + b with normal inputs, where the GUM result is
exact (JCGM 101:2008, 9.2: additive model); at M = 10^6 the clause 8
comparison passes (endpoint noise about 0.3 % of U, below delta = 0.005 for u = 0.50).
"""

import pytest

from fieldbudget.drafts import BudgetDraft, MonteCarloJob
from fieldbudget.widgets import MonteCarloPanel


@pytest.fixture
def draft():
    return BudgetDraft(model="a + b", rows=[{"symbol": "a", "estimate": "1", "uncertainty": "0.3"},
                                            {"symbol": "b", "estimate": "2", "uncertainty": "0.4"}])


def test_run_shows_histogram_intervals_and_verdict(draft):
    p = MonteCarloPanel(draft, MonteCarloJob(trials=1_000_000, seed=11))
    p.run_button.click()
    assert p.job.wait(60)
    p.render()
    assert p.job.state == "done"
    assert p.progress.value == 1.0 and p.cancel_button.disabled and not p.run_button.disabled
    assert 'class="fb-mc-hist-img" src="data:image/png;base64,' in p.histogram.value
    assert "probabilistically symmetric" in p.intervals.value and "shortest" in p.intervals.value
    assert "GUM, y \u00b1 U" in p.intervals.value
    assert "fb-mc-verdict-pass" in p.verdict.value and "d<sub>low</sub>" in p.verdict.value


def test_cancel_button(draft):
    job = MonteCarloJob(trials=50_000_000, seed=1)
    p = MonteCarloPanel(draft, job)
    job.subscribe(lambda j: p.cancel_button.click() if j.done and not p.cancel_button.disabled else None)
    p.run_button.click()
    assert job.wait(60)
    p.render()
    assert job.state == "cancelled" and "cancelled" in p.status.value
    assert p.histogram.value == ""


def test_bad_trials_message_beside_the_box(draft):
    p = MonteCarloPanel(draft)
    p.trials.box.value = "ten"
    assert "whole number of trials" in p.trials.msg.value
    p.run_button.click()
    assert p.job.state == "failed" and "whole number" in p.status.value


def test_repr(draft):
    assert repr(MonteCarloPanel(draft)) == "<MonteCarloPanel <MonteCarloJob idle, 0/1000000 trials, seed 1>>"
