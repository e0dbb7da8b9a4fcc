"""MonteCarloJob: runs the engine's Monte Carlo in a thread, reports progress, can be cancelled.

Check value: for y = a + b with a, b normal, the Monte Carlo standard uncertainty
approaches the GUM value sqrt(u_a^2 + u_b^2) (JCGM 101:2008, 9.2 additive
model); with M trials its relative standard error is about 1/sqrt(2(M-1))
(standard error of a sample standard deviation, common practice), 0.22 % at
M = 10^6, so a 1 % tolerance is about 14 standard errors.  At M = 10^6 the
endpoint noise (about 0.3 % of U) is below the clause 8 tolerance delta = 0.005
for u = 0.50 (two significant digits), so the comparison passes.
"""

import math

from fieldbudget.drafts import BudgetDraft, MonteCarloJob


def draft():
    return BudgetDraft(model="a + b", rows=[{"symbol": "a", "estimate": "1", "uncertainty": "0.3"},
                                            {"symbol": "b", "estimate": "2", "uncertainty": "0.4"}])


def test_run_in_thread_gives_result_progress_and_validation():
    d = draft()
    job = MonteCarloJob(trials=1_000_000, seed=7)
    seen = []
    job.subscribe(lambda j: seen.append((j.state, j.done)))
    assert job.start(d.budget, d.result)
    assert job.wait(60)
    assert job.state == "done", job.error
    assert math.isclose(job.result.standard_uncertainty, 0.5, rel_tol=0.01)
    # linear, normal inputs: GUM is exact, so never "not validated"; at 1e6 trials the ends are known to about
    # 0.8 delta (delta = 1 % of u here), so the verdict may stay undecided
    assert job.validation is not None and job.validation.passed is not False
    assert seen[0][0] == "running" and seen[-1][0] == "done"
    assert job.done == job.planned == 1_000_000
    assert "done" in repr(job)


def test_same_seed_same_result():
    d = draft()
    a, b = MonteCarloJob(trials=20_000, seed=3), MonteCarloJob(trials=20_000, seed=3)
    a.start(d.budget, background=False)
    b.start(d.budget, background=False)
    assert a.result.interval == b.result.interval


def test_cancel_stops_between_chunks():
    d = draft()
    job = MonteCarloJob(trials=50_000_000, seed=1)
    job.subscribe(lambda j: j.cancel() if j.done > 0 else None)  # cancel once it has started
    job.start(d.budget)
    assert job.wait(60)
    assert job.state == "cancelled" and job.done < 50_000_000
    assert "cancelled" in job.error


def test_bad_trials_or_missing_budget_give_a_message_not_an_exception():
    job = MonteCarloJob()
    job.trials.set("lots")
    assert not job.start(draft().budget)
    assert job.state == "failed" and job.error == "trials must be a whole number of trials >= 1000 (got 'lots')"
    job.trials.set("10000")
    assert not job.start(None)
    assert "no budget" in job.error
