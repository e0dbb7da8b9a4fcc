"""Conformity decisions: bad input, decision rules, Monte Carlo samples (JCGM 106:2012; common practice)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.stats

from fieldbudget.calibration import Tolerance, assess_conformity, probability_of_conformity
from fieldbudget.errors import InputError


@pytest.mark.parametrize("lo, hi", [(1.0, 1.0), (1.0, 0.5)])
def test_tolerance_of_zero_or_negative_width(lo, hi):
    with pytest.raises(InputError) as e:
        Tolerance(lo, hi, "T")
    assert e.value.field == "width"
    assert str(e.value).startswith("tolerance: width must be > 0")


@pytest.mark.parametrize("hw", [0.0, -1e-4, float("nan")])
def test_symmetric_tolerance_needs_positive_half_width(hw):
    with pytest.raises(InputError) as e:
        Tolerance.symmetric(1.0, hw)
    assert e.value.field == "half_width"


def test_tolerance_needs_a_limit_and_finite_numbers():
    with pytest.raises(InputError, match="at least one tolerance limit"):
        Tolerance(None, None)
    with pytest.raises(InputError) as e:
        Tolerance(float("inf"), None)
    assert e.value.field == "lower"


def test_guard_band_too_wide_for_the_tolerance():
    tol = Tolerance.symmetric(0.0, 1e-3, "T")
    with pytest.raises(InputError) as e:
        assess_conformity(tol, estimate=0.0, standard_uncertainty=0.6e-3, rule="guarded acceptance")
    assert e.value.field == "guard_band" and "acceptance interval is empty" in str(e.value)


@pytest.mark.parametrize("kw, field", [
    ({"rule": "lenient"}, "rule"),
    ({"rule": "simple acceptance", "guard_band": 1e-4}, "guard_band"),
    ({"rule": "guarded acceptance", "guard_band": -1e-4}, "guard_band"),
    ({"standard_uncertainty": 0.0}, "standard_uncertainty"),
    ({"distribution": "uniform"}, "distribution"),
    ({"distribution": "samples"}, "samples"),
])
def test_bad_arguments(kw, field):
    args = {"estimate": 0.0, "standard_uncertainty": 1e-4} | kw
    with pytest.raises(InputError) as e:
        assess_conformity(Tolerance.symmetric(0.0, 1e-3), **args)
    assert e.value.field == field


def test_guarded_rejects_what_simple_accepts():
    tol = Tolerance.symmetric(0.0, 1e-3, "T")
    simple = assess_conformity(tol, estimate=0.9e-3, standard_uncertainty=0.1e-3)
    guarded = assess_conformity(tol, estimate=0.9e-3, standard_uncertainty=0.1e-3, rule="guarded acceptance")
    assert simple.accepted and not guarded.accepted
    assert guarded.acceptance_upper == pytest.approx(0.8e-3)
    assert simple.probability_of_conformity == guarded.probability_of_conformity


def test_monte_carlo_samples_agree_with_normal():
    # the fraction of samples inside the interval estimates p_c; tolerance 5 standard errors sqrt(p(1-p)/M)
    rng = np.random.default_rng(20261202)
    m = 200_000
    samples = rng.normal(0.3, 0.4, m)
    tol = Tolerance(-0.5, 0.5)
    pc_mc = probability_of_conformity(tol, samples=samples)
    pc = scipy.stats.norm.cdf(0.5, 0.3, 0.4) - scipy.stats.norm.cdf(-0.5, 0.3, 0.4)
    assert abs(pc_mc - pc) < 5 * math.sqrt(pc * (1 - pc) / m)
    res = assess_conformity(tol, estimate=0.3, standard_uncertainty=0.4, distribution="samples", samples=samples)
    assert "Monte Carlo, 200000 samples" in res.distribution


def test_from_engine_result_and_forms():
    from fieldbudget.engine import Budget, InputQuantity, Measurand, Normal, evaluate

    b = Budget(model="R - Bref", inputs=(InputQuantity("R", 1.0002, Normal(u=2e-5)),
                                         InputQuantity("Bref", 1.0, Normal(u=1e-6))),
               measurand=Measurand("E", "T"))
    r = evaluate(b)
    res = assess_conformity(Tolerance.symmetric(0.0, 5e-4, "T", source="HX-400 data sheet <b>"), r,
                            rule="guarded acceptance", measurand="error at 1 T")
    assert res.coverage_factor == r.coverage_factor
    assert res.guard_band == pytest.approx(r.expanded_uncertainty)
    assert res.accepted
    assert "\n" not in repr(res) and "accept" in repr(res)
    assert json.loads(json.dumps(res.to_dict()))["decision"] == "accept"
    html = Tolerance.symmetric(0.0, 5e-4, "T", source="<b>")._repr_html_()
    assert "&lt;b&gt;" in html and "<b>" not in html
    assert "conformity" in res._repr_html_().lower()


def test_monte_carlo_result_gives_its_interval_as_U():
    # JCGM 101:2008 7.7: U is taken as half the probabilistically symmetric interval of the MC result
    from fieldbudget.engine import Budget, InputQuantity, Normal, montecarlo

    mc = montecarlo.run(Budget(model="x", inputs=(InputQuantity("x", 0.3, Normal(u=0.4)),)), 100_000, seed=3)
    res = assess_conformity(Tolerance(-2.0, 2.0), mc, rule="guarded acceptance")
    assert res.guard_band == pytest.approx(0.5 * (mc.interval[1] - mc.interval[0]), rel=1e-12)
    assert res.coverage_factor == pytest.approx(2.0, abs=0.03)  # normal: k = 2 at p = 95.45 %
