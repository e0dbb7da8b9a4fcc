"""Models of any length: a flat sum of 10 000 terms is checked, unit-checked and evaluated (GUM and Monte Carlo).

Checks are against closed forms: for y = sum x_i with independent x_i, u_c^2 = sum u_i^2
(JCGM 100:2008 eq. 10, all sensitivity coefficients 1); a Monte Carlo u within 5 standard errors
of u_c, the standard error of a standard deviation of M normal draws being u / sqrt(2 (M - 1))
(common practice).
"""

from __future__ import annotations

import math
import sys

import pytest

from fieldbudget.engine import Budget, InputQuantity, Measurand, evaluate, montecarlo
from fieldbudget.errors import ExpressionError

N = 10_000


def _sum_budget(unit: str = "", n: int = N) -> Budget:
    expr = " + ".join(f"x{i}" for i in range(n))
    inputs = tuple(InputQuantity.normal(f"x{i}", 1.0, 0.01 * (1 + i % 3), unit=unit) for i in range(n))
    return Budget(model=expr, inputs=inputs, measurand=Measurand("y", unit))


def _expected_u(n: int = N) -> float:
    return math.sqrt(sum((0.01 * (1 + i % 3)) ** 2 for i in range(n)))


@pytest.mark.parametrize("unit", ["", "V"])  # without units, and through the dimensional check
def test_ten_thousand_term_sum_evaluates(unit):
    assert N >= 10 * sys.getrecursionlimit()  # deep enough that any recursive walk would fail
    r = evaluate(_sum_budget(unit))
    assert r.estimate == pytest.approx(N, rel=1e-12)
    assert r.standard_uncertainty == pytest.approx(_expected_u(), rel=1e-12)
    assert all(c.sensitivity == 1.0 for c in r.contributions)


def test_ten_thousand_term_sum_runs_by_monte_carlo():
    m = 10_000
    mc = montecarlo.run(_sum_budget(), trials=m, seed=4)
    u = _expected_u()
    assert abs(mc.standard_uncertainty - u) < 5 * u / math.sqrt(2 * (m - 1))
    assert mc.evaluation == "vectorised"


def test_a_bad_term_deep_in_a_long_sum_is_named():
    expr = " + ".join(f"x{i}" for i in range(N - 1)) + " + x0.real"
    with pytest.raises(ExpressionError, match="attribute access"):
        Budget(model=expr, inputs=tuple(InputQuantity.normal(f"x{i}", 1.0, 0.1) for i in range(N - 1)))


def test_unit_mismatch_deep_in_a_long_sum_is_named():
    inputs = [InputQuantity.normal(f"x{i}", 1.0, 0.1, unit="V") for i in range(N - 1)]
    inputs.append(InputQuantity.normal("t", 20.0, 0.1, unit="degC"))
    expr = " + ".join(f"x{i}" for i in range(N - 1)) + " + t"
    with pytest.raises(ExpressionError, match=r"adds terms of different dimensions: .* and 't' is in degC"):
        evaluate(Budget(model=expr, inputs=tuple(inputs), measurand=Measurand("y", "V")))
