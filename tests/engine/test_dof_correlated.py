"""Degrees of freedom with correlated inputs and with simultaneous readings.

Checks against calculations written here: the direct Type A evaluation of the
derived values (JCGM 100:2008 4.2 applied to y_k; H.2, second approach) and the
generalisation of Welch-Satterthwaite to correlated components (Willink,
Metrologia 44 (2007) 340; the grouped form below is from memory: nu_eff =
u_c^4 / sum_g u_g^4 / nu_g over sets g of mutually correlated components).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from fieldbudget.engine import Budget, InputQuantity, evaluate

Q = InputQuantity
# six simultaneous readings of two channels that move together (a common drift): the difference is tight
X1 = [10.012, 10.031, 9.987, 10.044, 10.003, 9.978]
X2 = [9.501, 9.522, 9.474, 9.530, 9.496, 9.469]


def _diff_budget(**kw) -> Budget:
    return Budget(model="x1 - x2", inputs=(Q.from_readings("x1", X1, unit="V"), Q.from_readings("x2", X2, unit="V")),
                  simultaneous=(("x1", "x2"),), **kw)


def _direct_type_a():
    d = np.array(X1) - np.array(X2)
    u = d.std(ddof=1) / math.sqrt(d.size)
    k = stats.t.ppf((1 + math.erf(2 / math.sqrt(2))) / 2, d.size - 1)  # p = 95.45 %, nu = n - 1 = 5
    return d.mean(), u, k


def test_simultaneous_difference_matches_the_type_a_evaluation_of_the_differences():
    mean, u, k = _direct_type_a()
    r = evaluate(_diff_budget())
    assert r.dof_method == "type_a_per_set" and r.effective_dof == 5
    assert r.estimate == pytest.approx(mean, rel=1e-12)
    assert r.standard_uncertainty == pytest.approx(u, rel=1e-10)
    assert r.coverage_factor == pytest.approx(k, rel=1e-12) and round(k, 2) == 2.65  # EA-4/02 Table E.1, nu = 5
    assert r.expanded_uncertainty == pytest.approx(k * u, rel=1e-10)
    assert "6 sets of simultaneous readings" in r.statement()


def test_propagation_of_the_means_gives_the_same_and_no_absurd_k():
    mean, u, k = _direct_type_a()
    for rounding in ("truncate", "interpolate"):
        r = evaluate(_diff_budget(readings_evaluation="propagation", dof_rounding=rounding))
        # linear model: the propagated u_c equals the Type A u of the differences (GUM 5.2.3, eq. 17)
        assert r.standard_uncertainty == pytest.approx(u, rel=1e-9)
        # one set of simultaneous readings: c^T S c is a scaled chi-square with n - 1 dof, so nu_eff = 5 exactly
        assert r.dof_method == "welch_satterthwaite_correlated"
        assert r.effective_dof == pytest.approx(5.0, rel=1e-9)
        assert r.coverage_factor == pytest.approx(k, rel=1e-6)


def test_correlated_type_b_against_the_generalised_formula():
    ua, ub, uc_, ud = 0.3, 0.5, 0.2, 0.4
    b = Budget(model="2*a - b + 3*c + d",
               inputs=(Q.normal("a", 1.0, ua, dof=8), Q.normal("b", 2.0, ub, dof=8), Q.normal("c", 0.0, uc_, dof=4),
                       Q.normal("d", 0.0, ud)),
               correlations=(("a", "b", 0.4),))
    r = evaluate(b)
    ug2 = (2 * ua) ** 2 + ub ** 2 + 2 * 2 * (-1) * ua * ub * 0.4     # the correlated set {a, b}
    uc2 = ug2 + (3 * uc_) ** 2 + ud ** 2
    nu = uc2 ** 2 / (ug2 ** 2 / 8 + (3 * uc_) ** 4 / 4)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(uc2), rel=1e-12)
    assert r.effective_dof == pytest.approx(nu, rel=1e-12)
    # the same budget without the correlation is plain G.2b
    r0 = evaluate(b.replace(correlations=()))
    nu0 = r0.standard_uncertainty ** 4 / ((2 * ua) ** 4 / 8 + ub ** 4 / 8 + (3 * uc_) ** 4 / 4)
    assert r0.dof_method == "welch_satterthwaite" and r0.effective_dof == pytest.approx(nu0, rel=1e-12)


def test_mixed_dof_in_a_correlated_set_takes_the_smallest_and_says_so():
    b = Budget(model="a + b", inputs=(Q.normal("a", 1.0, 0.3, dof=4), Q.normal("b", 2.0, 0.5)),
               correlations=(("a", "b", 0.2),))
    r = evaluate(b)
    assert r.effective_dof == pytest.approx(4.0)
    assert any("different degrees of freedom" in w for w in r.warnings)


def test_fewer_than_one_degree_of_freedom_never_gives_an_absurd_k():
    b = Budget(model="a", inputs=(Q.normal("a", 1.0, 0.3, dof=0.05),), dof_rounding="interpolate")
    r = evaluate(b)
    assert r.coverage_factor == pytest.approx(stats.t.ppf((1 + math.erf(math.sqrt(2))) / 2, 1))  # 13.97
    assert any("below 1" in w for w in r.warnings)


def test_half_width_constructors_accept_dof():
    # the budget file's 'dof' key, for the Python constructors too
    for make in (Q.rectangular, Q.triangular, Q.arcsine):
        assert make("a", 0.0, 1.0, dof=12).dof == 12
    assert Q.rectangular("a", 0.0, 1.0).dof == math.inf
