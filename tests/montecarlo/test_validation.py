"""Validation of the GUM result by Monte Carlo (JCGM 101:2008 clause 8) and the second-order option."""

from __future__ import annotations

import json
import math

import pytest

from fieldbudget.engine import (
    Budget,
    InputQuantity,
    Measurand,
    evaluate,
    montecarlo,
    second_order,
    validation,
)
from fieldbudget.errors import InputError

Q = InputQuantity


def test_linear_model_with_normal_inputs_validates():
    # A linear model of normal inputs has a normal output: the GUM interval is exact (JCGM 101 5.7, 8),
    # so d_low and d_high are Monte Carlo noise, far below delta with M = 10^6.
    b = Budget(model="a + 2*b - c", inputs=(Q.normal("a", 1.0, 0.1), Q.normal("b", 1.0, 0.2), Q.normal("c", 0.5, 0.3)),
               measurand=Measurand("y", "V"), coverage_probability=0.95)
    g = evaluate(b)
    # delta = 0.005 is 1 % of u = 0.51: the adaptive run goes on until the ends are known well enough
    mc, v = validation.validate_adaptive(g, b, seed=11, significant_digits=2)
    assert v.passed and v.validated and v.d_low <= v.delta and v.d_high <= v.delta
    assert v.verdict == "validated" and v.trials == mc.trials and mc.adaptive
    assert v.delta == montecarlo.numerical_tolerance(g.standard_uncertainty, 2)
    assert "reported as it stands" in v.advice
    assert v.to_dict()["validated"] is True and json.dumps(v.to_dict())
    assert "passed" in repr(v) and "\n" not in repr(v) and "<table" in v._repr_html_()


def test_zero_first_order_sensitivity_fails_and_says_why():
    # y = 1 - cos(theta), theta = 0 +- u: dy/dtheta = sin(0) = 0, so the law of propagation gives u = 0
    # (JCGM 101 9.4 makes the same point with a sum of squares).
    b = Budget(model="1 - cos(theta)", inputs=(Q.normal("theta", 0.0, 0.05),), coverage_probability=0.95)
    g = evaluate(b)
    assert g.standard_uncertainty == 0.0
    v = validation.validate(g, montecarlo.run(b, 200_000, seed=2))
    assert not v.passed and v.d_high > v.delta
    assert "u = 0" in v.advice and "sensitivity" in v.advice
    assert v.to_dict()["validated"] is False


def test_skewed_output_fails_with_skew_advice():
    # y = exp(x) with u(x) = 0.3: lognormal output; the GUM interval exp(0) +- 1.96 * 0.3 is too low at both ends
    b = Budget(model="exp(x)", inputs=(Q.normal("x", 0.0, 0.3),), coverage_probability=0.95)
    v = validation.validate(evaluate(b), montecarlo.run(b, 200_000, seed=2))
    assert not v.passed and "not centred" in v.advice


def test_coverage_probabilities_must_match():
    b = Budget(model="x", inputs=(Q.normal("x", 0.0, 1.0),), coverage_probability=0.95)
    mc = montecarlo.run(b, 20_000, seed=1, coverage_probability=0.99)
    with pytest.raises(InputError, match="coverage_probability"):
        validation.validate(evaluate(b), mc)


def test_shortest_interval_can_be_compared():
    b = Budget(model="x", inputs=(Q.normal("x", 0.0, 1.0),), coverage_probability=0.95)
    v = validation.validate(evaluate(b), montecarlo.run(b, 20_000, seed=1), interval="shortest")
    assert v.interval_kind == "shortest"


# --- second-order terms (JCGM 100:2008 5.1.2, note) -----------------------------------------------------
def test_second_order_equals_exact_variance_of_a_product():
    # y = a b with independent normal inputs: Var = a^2 u_b^2 + b^2 u_a^2 + u_a^2 u_b^2 exactly
    # (Goodman 1960, the variance of a product); the 5.1.2 note gives the same, since d2f/da db = 1.
    a, ua, bb, ub = 2.0, 0.3, -1.5, 0.4
    b = Budget(model="a * b", inputs=(Q.normal("a", a, ua), Q.normal("b", bb, ub)))
    exact = math.sqrt(a * a * ub * ub + bb * bb * ua * ua + ua * ua * ub * ub)
    assert second_order.combined_uncertainty(b) == pytest.approx(exact, rel=1e-6)


def test_second_order_of_a_cubic():
    # y = x^3, x = x0 +- u: the recalled terms are c^2 u^2 + (1/2)(6 x0)^2 u^4 + (3 x0^2)(6) u^4
    x0, u = 0.7, 0.2
    b = Budget(model="x**3", inputs=(Q.normal("x", x0, u),))
    expect = math.sqrt((3 * x0**2) ** 2 * u**2 + 0.5 * (6 * x0) ** 2 * u**4 + (3 * x0**2) * 6 * u**4)
    assert second_order.combined_uncertainty(b) == pytest.approx(expect, rel=1e-6)


def test_second_order_refuses_correlations_and_needs_an_output():
    b = Budget(model="a + b", inputs=(Q.normal("a", 1.0, 0.1), Q.normal("b", 1.0, 0.1)), correlations=(("a", "b", 0.3),))
    with pytest.raises(InputError, match="uncorrelated"):
        second_order.combined_uncertainty(b)
    from fieldbudget.engine import Model
    v = Budget(model=Model.from_expressions({"p": "a*b", "s": "a+b"}), inputs=(Q.normal("a", 1.0, 0.1),
                                                                             Q.normal("b", 1.0, 0.1)))
    with pytest.raises(InputError, match="output"):
        second_order.combined_uncertainty(v)
    assert second_order.combined_uncertainty(v, output="s") == pytest.approx(math.sqrt(0.02), rel=1e-9)


def test_each_output_of_a_vector_model_is_validated():
    from fieldbudget.engine import Model
    b = Budget(model=Model.from_expressions({"s": "a + b", "p": "a * b"}),
               inputs=(Q.normal("a", 1.0, 0.01), Q.normal("b", 0.0, 0.02)), coverage_probability=0.95)
    vs = validation.validate_outputs(evaluate(b), montecarlo.run(b, 1_000_000, seed=3))
    assert [v.output for v in vs] == ["s", "p"]
    # s is linear and normal: passes.  p = a b at b = 0: the term u_a u_b that first order leaves out changes
    # u by 1e-6 of itself, and the standard error of an interval end, sqrt(p (1 - p) / M) / f(y_p) u = 5.3e-5
    # at M = 1e6, is a tenth of delta = 0.0005 (u = 0.020 to two digits): both are decided and pass.
    assert vs[0].passed and vs[1].passed and vs[1].delta == pytest.approx(0.0005)
    with pytest.raises(InputError):
        validation.validate_outputs(evaluate(b), montecarlo.run(b, 20_000, seed=3)[0])
