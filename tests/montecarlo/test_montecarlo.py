"""Monte Carlo runs: reproducibility, chunks and workers, intervals, adaptive procedure, results.

Statistical checks use fixed seeds and tolerances of 4 Monte Carlo standard
errors of the quantity checked; each formula is stated beside the check.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.engine import Budget, InputQuantity, Measurand, Model, montecarlo
from fieldbudget.engine.montecarlo import (
    MonteCarloResult,
    MonteCarloVectorResult,
    coverage_intervals,
    run,
)
from fieldbudget.errors import InputError, ModelEvaluationError, MonteCarloCancelled

Q = InputQuantity


def _nonlinear_budget() -> Budget:
    """A small model with every distribution kind (invented numbers)."""
    return Budget(
        model="f * (1 + s) / cos(t) + r + tri + arc + trap",
        measurand=Measurand("B", "T"),
        coverage_probability=0.95,
        inputs=(
            Q.normal("f", 2.0, 0.01, dof=8),
            Q.from_readings("s", [1e-3, 1.2e-3, 0.9e-3, 1.1e-3]),
            Q.normal("t", 0.05, 0.02),
            Q.rectangular("r", 0.0, 0.01),
            Q.triangular("tri", 0.0, 0.01),
            Q.arcsine("arc", 0.0, 0.01),
            Q("trap", 0.0, montecarlo.sampling.CurvilinearTrapezoid(half_width=0.01, limit_uncertainty=0.002)),
        ),
    )


def test_same_seed_gives_identical_results():
    b = _nonlinear_budget()
    assert run(b, 50_000, seed=42) == run(b, 50_000, seed=42)
    assert run(b, 50_000, seed=42) != run(b, 50_000, seed=43)


def test_chunk_size_and_workers_do_not_change_the_numbers():
    b = _nonlinear_budget()
    ref = run(b, 123_457, seed=9)                 # 13 blocks, the last one partial
    for chunk in (1, 10_000, 25_000, 60_001, 10**6):
        for workers in (1, 2):
            assert run(b, 123_457, seed=9, chunk_size=chunk, workers=workers) == ref


@settings(max_examples=12, deadline=None)
@given(trials=st.integers(5_000, 60_000), chunk=st.integers(1, 70_000), workers=st.integers(1, 3))
def test_property_result_depends_on_seed_and_trials_only(trials, chunk, workers):
    b = Budget(model="x**2 + w", inputs=(Q.normal("x", 1.0, 0.1), Q.rectangular("w", 0.0, 0.5)))
    assert run(b, trials, seed=3, chunk_size=chunk, workers=workers) == run(b, trials, seed=3)


def test_seed_none_draws_and_records_a_seed_that_repeats_the_run():
    b = _nonlinear_budget()
    first = run(b, 20_000)
    assert isinstance(first.seed, int) and 0 <= first.seed < 2**63
    assert run(b, 20_000, seed=first.seed) == first


def test_blocks_are_spawned_seed_sequence_children():
    # The documented stream of block k is SeedSequence(seed).spawn(...)[k]: check against numpy directly.
    b = Budget(model="x", inputs=(Q.normal("x", 0.0, 1.0),))
    plan = montecarlo._plan(b)
    x = np.empty((1, 3 * montecarlo.BLOCK_SIZE))
    montecarlo._fill_chunk(plan, 77, 0, 3, 3 * montecarlo.BLOCK_SIZE, x)
    child = np.random.SeedSequence(77).spawn(3)[2]
    expect = np.random.Generator(np.random.PCG64(child)).standard_normal(montecarlo.BLOCK_SIZE)
    assert np.array_equal(x[0, 2 * montecarlo.BLOCK_SIZE:], expect)


def test_result_records_how_it_was_made():
    r = run(_nonlinear_budget(), 30_000, seed=5)
    assert (r.trials, r.seed, r.generator, r.numpy_version) == (30_000, 5, "PCG64", np.__version__)
    assert r.evaluation == "vectorised" and r.adaptive is False and r.block_size == montecarlo.BLOCK_SIZE
    assert r.output == "B" and r.unit == "T" and r.coverage_probability == 0.95
    counts, edges = r.histogram
    assert len(edges) == len(counts) + 1 and 0.99 * r.trials < sum(counts) <= r.trials


def test_function_models_say_how_they_were_evaluated():
    inputs = (Q.normal("a", 1.0, 0.1), Q.normal("b", 2.0, 0.1))
    vec = Budget(model=Model.from_function(lambda a, b: a * np.exp(b)), inputs=inputs)
    scalar = Budget(model=Model.from_function(lambda a, b: a * math.exp(b)), inputs=inputs)
    rv, rs = run(vec, 20_000, seed=1), run(scalar, 20_000, seed=1)
    assert rv.evaluation == "vectorised" and rs.evaluation == "trial by trial"
    assert rv.estimate == pytest.approx(rs.estimate, rel=1e-12)


def test_to_dict_is_plain_json_with_the_cli_keys():
    r = run(_nonlinear_budget(), 20_000, seed=5)
    d = json.loads(json.dumps(r.to_dict()))
    for key in ("value", "u", "interval", "shortest_interval", "trials", "seed", "generator"):
        assert key in d
    assert d["interval"] == [r.interval[0], r.interval[1]] and d["seed"] == 5
    assert "\n" not in repr(r) and "M = 20000" in repr(r)
    assert "<table" in r._repr_html_()


def test_html_escapes_user_text():
    b = Budget(model="x", inputs=(Q.normal("x", 1.0, 0.1),), measurand=Measurand("y", "<b>T</b>"))
    html = run(b, 10_000, seed=1)._repr_html_()
    assert "<b>T</b>" not in html and "&lt;b&gt;T&lt;/b&gt;" in html


def test_several_outputs_are_run_together():
    # JCGM 100 H.2-like model (invented numbers): R = V/I cos(phi), X = V/I sin(phi)
    b = Budget(model=Model.from_expressions({"R": "V/I*cos(phi)", "X": "V/I*sin(phi)"}),
               inputs=(Q.normal("V", 5.0, 0.005), Q.normal("I", 0.02, 1e-5), Q.normal("phi", 1.04, 1e-3)))
    r = run(b, 50_000, seed=2)
    assert isinstance(r, MonteCarloVectorResult) and r.outputs == ("R", "X")
    assert r["X"].estimate == pytest.approx(5.0 / 0.02 * math.sin(1.04), rel=1e-3)
    assert r.correlation[0][1] == pytest.approx(r.correlation[1][0]) and abs(r.correlation[0][1]) < 1
    json.dumps(r.to_dict())


def test_progress_and_cancellation():
    b = _nonlinear_budget()
    seen = []
    run(b, 100_000, seed=1, chunk_size=20_000, progress=lambda done, planned: seen.append((done, planned)))
    assert seen == [(20_000 * k, 100_000) for k in range(1, 6)]
    calls = []

    def stop():
        calls.append(1)
        return len(calls) > 2

    with pytest.raises(MonteCarloCancelled) as err:
        run(b, 100_000, seed=1, chunk_size=20_000, should_stop=stop)
    assert err.value.trials_done == 40_000


def test_cancellation_with_workers_reports_trials_done():
    calls = []

    def stop():
        calls.append(1)
        return len(calls) > 3          # polled before each chunk is started

    with pytest.raises(MonteCarloCancelled) as err:
        run(_nonlinear_budget(), 200_000, seed=1, chunk_size=10_000, workers=2, should_stop=stop)
    assert err.value.trials_done == 30_000
    with pytest.raises(MonteCarloCancelled) as err:
        run(_nonlinear_budget(), 200_000, seed=1, workers=2, should_stop=lambda: True)
    assert err.value.trials_done == 0


def test_non_finite_model_values_are_an_error_not_a_number():
    b = Budget(model="1 / (x - z)", inputs=(Q.normal("x", 1.0, 0.0), Q.rectangular("z", 1.0, 0.0)))
    with pytest.raises(ModelEvaluationError) as err:
        run(b, 10_000, seed=1)
    assert "non-finite" in str(err.value)
    b = Budget(model="sqrt(x)", inputs=(Q.normal("x", 0.0, 1.0),))
    with pytest.raises(ModelEvaluationError, match="of 10000 Monte Carlo trials"):
        run(b, 10_000, seed=1)


@pytest.mark.parametrize(("kw", "field"), [({"trials": 0}, "trials"), ({"seed": -1}, "seed"),
                                           ({"seed": 1.5}, "seed"), ({"workers": 0}, "workers"),
                                           ({"coverage_probability": 1.0}, "coverage_probability"),
                                           ({"chunk_size": 0}, "chunk_size")])
def test_bad_arguments_are_input_errors(kw, field):
    b = Budget(model="x", inputs=(Q.normal("x", 1.0, 0.1),))
    with pytest.raises(InputError) as err:
        run(b, **{"trials": 1000, "seed": 1, **kw})
    assert err.value.field == field


def test_too_few_trials_for_the_coverage_probability():
    b = Budget(model="x", inputs=(Q.normal("x", 1.0, 0.1),))
    with pytest.raises(InputError, match="1/\\(1 - p\\)"):
        run(b, 10, seed=1, coverage_probability=0.95)


# --- coverage intervals (JCGM 101 7.7) -------------------------------------------------------------------
def _brute_intervals(y: np.ndarray, p: float):
    """JCGM 101 7.7.1-7.7.3 written out literally on the fully sorted values."""
    s = np.sort(y)
    m = len(s)
    q = int(p * m + 0.5)
    r = int((m - q + 1) / 2)
    sym = (s[r - 1], s[r + q - 1])
    widths = [s[r_ + q - 1] - s[r_ - 1] for r_ in range(1, m - q + 1)]
    rs = int(np.argmin(widths)) + 1
    return sym, (s[rs - 1], s[rs + q - 1])


@settings(max_examples=40, deadline=None)
@given(m=st.integers(20, 400), p=st.sampled_from([0.5, 0.9, 0.95, 0.9545, 0.99]), seed=st.integers(0, 2**32))
def test_property_intervals_match_the_literal_procedure(m, p, seed):
    y = np.random.default_rng(seed).lognormal(size=m)
    if m - int(p * m + 0.5) < 1:
        return
    sym, short, _ = coverage_intervals(y, p)
    assert (sym, short) == _brute_intervals(y, p)


@settings(max_examples=15, deadline=None)
@given(u=st.floats(1e-6, 1e3), kind=st.sampled_from(["normal", "rectangular", "triangular", "t"]),
       seed=st.integers(0, 2**31))
def test_property_interval_contains_estimate_for_symmetric_unimodal_output(u, kind, seed):
    q = {"normal": Q.normal("x", 1.0, u), "rectangular": Q.rectangular("x", 1.0, u),
         "triangular": Q.triangular("x", 1.0, u), "t": Q.normal("x", 1.0, u, dof=4)}[kind]
    r = run(Budget(model="3*x", inputs=(q,)), 20_000, seed=seed, coverage_probability=0.95)
    for lo, hi in (r.interval, r.shortest_interval):
        assert lo < r.estimate < hi
    assert r.shortest_interval[1] - r.shortest_interval[0] <= r.interval[1] - r.interval[0]


def test_numerical_tolerance():
    # JCGM 101:2008 7.9.2 (from memory): u = 0.02 with one significant digit gives delta = 0.005
    assert montecarlo.numerical_tolerance(0.02, 1) == pytest.approx(0.005)
    assert montecarlo.numerical_tolerance(1.234, 2) == pytest.approx(0.05)   # 12 x 10^-1 -> 0.05
    assert montecarlo.numerical_tolerance(2.00, 3) == pytest.approx(0.005)   # 200 x 10^-2
    assert montecarlo.numerical_tolerance(0.0996, 2) == pytest.approx(0.005)  # rounds to 0.10 = 10 x 10^-2
    assert montecarlo.numerical_tolerance(0.0, 2) == 0.0


# --- adaptive procedure (JCGM 101 7.9.4) ----------------------------------------------------------------
def test_adaptive_run_stops_when_stable_and_equals_a_fixed_run_of_that_length():
    b = Budget(model="x1 + x2", inputs=(Q.normal("x1", 0.0, 1.0), Q.rectangular("x2", 0.0, 3**0.5)),
               coverage_probability=0.95)
    seen = []
    a = run(b, seed=4, adaptive=True, significant_digits=2, progress=lambda d, p: seen.append((d, p)))
    assert a.adaptive and a.stabilised and a.trials % montecarlo._adaptive_stage(0.95) == 0
    assert a.trials >= 2 * 10_000                     # h >= 2 stages of max(J, 10^4) trials
    assert seen[-1] == (a.trials, a.trials)
    fixed = run(b, a.trials, seed=4)
    assert (a.estimate, a.standard_uncertainty, a.interval) == (fixed.estimate, fixed.standard_uncertainty,
                                                                 fixed.interval)
    # the stopping rule itself: 2 s <= delta for the stage averages, checked here from a fixed run's stages
    delta = montecarlo.numerical_tolerance(a.standard_uncertainty, 2)
    assert 0 < delta and a.standard_uncertainty == pytest.approx(math.sqrt(2), abs=delta)
    # same seed, different chunk size and workers: same adaptive result
    assert run(b, seed=4, adaptive=True, chunk_size=30_000, workers=2) == a


def test_adaptive_stage_size():
    # JCGM 101 7.9.4 b): M = max(J, 10^4), J the smallest integer >= 100 / (1 - p)
    assert montecarlo._adaptive_stage(0.95) == 10_000      # J = 2000
    assert montecarlo._adaptive_stage(0.999) == 100_000    # J = 100 000
    assert montecarlo._adaptive_stage(0.9973) % montecarlo.BLOCK_SIZE == 0


def test_adaptive_run_that_cannot_stabilise_says_so():
    b = Budget(model="x", inputs=(Q.normal("x", 0.0, 1.0, dof=1.5),), coverage_probability=0.95)
    r = run(b, seed=1, adaptive=True, max_trials=40_000)
    assert r.trials == 40_000 and r.stabilised is False
    assert any("did not stabilise" in w for w in r.warnings)
    assert any("no finite variance" in w for w in r.warnings)


def test_result_is_frozen():
    r = run(Budget(model="x", inputs=(Q.normal("x", 1.0, 0.1),)), 10_000, seed=1)
    assert isinstance(r, MonteCarloResult)
    with pytest.raises(AttributeError):
        r.estimate = 0.0  # type: ignore[misc]
