"""JCGM 106:2012, The role of measurement uncertainty in conformity assessment.

The full text of JCGM 106 could not be consulted for this test; the relations
and numbers below are given *from memory* with the clause they come from, and
each one is also computed independently here with ``scipy.stats.norm`` and
``scipy.integrate.quad`` (integrating the normal PDF over the tolerance
interval, JCGM 106:2012 7.1, eq. for p_c), so a wrong recollection cannot pass
silently: the test checks the kit against scipy and the number against both.
"""

from __future__ import annotations

import math

import pytest
import scipy.integrate
import scipy.stats

from fieldbudget.calibration import Tolerance, assess_conformity, probability_of_conformity


def _quad_pc(lo, hi, y, u):
    """p_c by integrating the normal PDF over [lo, hi] (JCGM 106:2012 7.1; scipy.integrate.quad)."""
    pdf = scipy.stats.norm(y, u).pdf
    lo = y - 40 * u if lo is None else lo
    hi = y + 40 * u if hi is None else hi
    return scipy.integrate.quad(pdf, lo, hi, points=[y], epsabs=1e-13, epsrel=1e-12)[0]


def test_measured_value_at_a_tolerance_limit_has_even_odds():
    # JCGM 106:2012 7.2 (from memory): with a normal PDF and y at a single limit, p_c = 50 %.
    tol = Tolerance(None, 10.0, "mT")
    assert probability_of_conformity(tol, 10.0, 0.2) == pytest.approx(0.5, abs=1e-15)
    assert _quad_pc(None, 10.0, 10.0, 0.2) == pytest.approx(0.5, abs=1e-9)


def test_guarded_acceptance_with_w_equal_U():
    # JCGM 106:2012 8.3.2 (from memory): for a single upper limit and guard band w = U = 2u, an item
    # accepted at the acceptance limit A_U = T_U - U has p_c = Phi(2) ~ 97.7 %.
    u, t_u = 0.5e-4, 1.0e-3
    tol = Tolerance(None, t_u, "T")
    res = assess_conformity(tol, estimate=t_u - 2 * u, standard_uncertainty=u, coverage_factor=2.0,
                            rule="guarded acceptance")
    assert res.accepted and res.guard_band == pytest.approx(2 * u)
    assert res.acceptance_upper == pytest.approx(t_u - 2 * u)
    assert round(res.probability_of_conformity, 3) == 0.977           # from memory: "97.7 %"
    assert res.probability_of_conformity == pytest.approx(scipy.stats.norm.cdf(2.0), rel=1e-14)
    assert res.probability_of_conformity == pytest.approx(_quad_pc(None, t_u, t_u - 2 * u, u), abs=1e-10)
    # a hair beyond the acceptance limit is rejected even though p_c is still about 97.7 %
    res2 = assess_conformity(tol, estimate=t_u - 2 * u + 1e-9, standard_uncertainty=u, rule="guarded acceptance")
    assert not res2.accepted and res2.decision == "reject"


def test_two_sided_interval_and_capability_index():
    # JCGM 106:2012 7.3 and 7.6 (from memory): two-sided p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u);
    # C_m = (T_U - T_L) / (4u); at the centre p_c = 2 Phi(2 C_m) - 1, e.g. C_m = 1 gives 95.45 %.
    u = 0.5
    tol = Tolerance(-1.0, 1.0)
    res = assess_conformity(tol, estimate=0.0, standard_uncertainty=u)
    assert res.capability_index == pytest.approx(2.0 / (4 * u))
    assert res.probability_of_conformity == pytest.approx(2 * scipy.stats.norm.cdf(2.0) - 1, rel=1e-13)
    assert round(res.probability_of_conformity, 4) == 0.9545
    for y in (-0.9, -0.3, 0.42, 0.95, 1.3):
        pc = probability_of_conformity(tol, y, u)
        assert pc == pytest.approx(_quad_pc(-1.0, 1.0, y, u), abs=1e-10)


def test_simple_acceptance_can_accept_at_low_probability():
    # JCGM 106:2012 8.2 (from memory): simple acceptance (w = 0) accepts any y inside the tolerance
    # interval; just inside a limit p_c is barely above 50 %, and the result says so.
    tol = Tolerance.symmetric(0.0, 1e-3, "T")
    res = assess_conformity(tol, estimate=0.99e-3, standard_uncertainty=0.2e-3)
    assert res.accepted and res.guard_band == 0.0
    expected = scipy.stats.norm.cdf(1e-3, 0.99e-3, 0.2e-3) - scipy.stats.norm.cdf(-1e-3, 0.99e-3, 0.2e-3)
    assert res.probability_of_conformity == pytest.approx(expected, rel=1e-12)
    assert any("only" in w for w in res.warnings)
    assert "JCGM 106:2012" in res.statement


def test_t_distribution_from_effective_dof():
    # JCGM 101:2008 6.4.9: a Type A input with nu dof is a scaled and shifted t; scipy.stats.t checks it.
    tol = Tolerance(None, 1.0)
    pc = probability_of_conformity(tol, 0.8, 0.1, dof=4)
    assert pc == pytest.approx(scipy.stats.t.cdf(2.0, 4), rel=1e-12)
    assert pc < scipy.stats.norm.cdf(2.0)
    assert math.isclose(probability_of_conformity(tol, 0.8, 0.1, dof=math.inf), scipy.stats.norm.cdf(2.0))
