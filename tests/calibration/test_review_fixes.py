"""Fixes after a review of the calibration code: the two-angle tilt, the "auto" route, conformity on
Monte Carlo points, the coverage interval and the degrees of freedom of a prediction.

Independent checks: moments of the normal distribution (for theta ~ N(0, u^2): E[cos theta] =
exp(-u^2/2), E[cos^2 theta] = (1 + exp(-2u^2))/2; common practice / standard result), the Monte
Carlo standard error s/sqrt(M) of a mean and s^2 sqrt(2/(M-1)) of a variance (normal theory, common
practice; used with a margin of 5 standard errors), scipy.stats, and Welch-Satterthwaite
(JCGM 100:2008 G.4.1, eq. (G.2b)).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fieldbudget.calibration import CalibrationPoint, CalibrationSet, Tolerance, assess_conformity
from fieldbudget.engine import Budget, InputQuantity, Normal, montecarlo
from fieldbudget.errors import InputError

from ._scenario import nmr_budget

OFFSETS = [1.0e-5, 0.0, -1.0e-5, 0.0]


def _readings(b, gain=2e-4, offset=3e-6):
    return [b * (1 + gain) + offset + d for d in OFFSETS]


def _one(u, **kw):
    pts = [CalibrationPoint(nmr_budget(1.0), readings_t=_readings(1.0))]
    return CalibrationSet(pts, resolution_t=1e-5, tilt_u_rad=u, **kw)


def _two_angle_moments(u):
    mean = math.exp(-u * u)  # E[cos tx] E[cos ty], independent
    second = ((1 + math.exp(-2 * u * u)) / 2) ** 2  # E[cos^2 tx] E[cos^2 ty]
    return mean, second - mean * mean


def test_two_angle_tilt_against_its_analytic_mean_and_variance():
    u, m = 0.03, 400_000
    b = Budget(model="cos(tx) * cos(ty)", inputs=(InputQuantity("tx", 0.0, Normal(u=u)),
                                                   InputQuantity("ty", 0.0, Normal(u=u))))
    mc = montecarlo.run(b, m, seed=17)
    mean, var = _two_angle_moments(u)
    se_mean = math.sqrt(var / m)
    se_var = var * math.sqrt(2 / (m - 1)) * 3  # the distribution is far from normal: a wider margin
    assert abs(mc.estimate - mean) < 5 * se_mean
    assert abs(mc.standard_uncertainty ** 2 - var) < 5 * se_var
    # bias and spread are both about u^2 (not u^2/2 and u^2/sqrt 2 as with one angle)
    assert 1 - mean == pytest.approx(u * u, rel=0.01)
    assert math.sqrt(var) == pytest.approx(u * u, rel=0.01)


def test_two_angle_is_the_default_and_one_angle_is_kept():
    two, one = _one(0.02), _one(0.02, tilt_model="one-angle")
    assert {"theta_x_1", "theta_y_1"} <= set(two.budget.symbols) and "theta_1" not in two.budget.symbols
    assert "theta_1" in one.budget.symbols
    with pytest.raises(InputError, match="tilt_model"):
        _one(0.02, tilt_model="three-angle")


def test_two_angle_calibration_point_shift_and_spread():
    u, m = 0.02, 200_000
    cs = _one(u)
    gum, res = cs.evaluate("gum"), cs.evaluate(seed=5, trials=m)
    assert res.points[0].propagation == "monte carlo" and gum.points[0].propagation == "gum"
    mean, var = _two_angle_moments(u)
    b = res.points[0].reference
    se = res.points[0].u_error / math.sqrt(m)
    assert abs((res.points[0].error - gum.points[0].error) - b * (1 - mean)) < 5 * se
    assert res.points[0].u_error == pytest.approx(math.hypot(gum.points[0].u_error, b * math.sqrt(var)), rel=0.02)
    assert any("exp(-u^2)" in w for w in res.warnings)


def test_auto_keeps_gum_for_a_negligible_tilt_and_says_why():
    # 1e-9 rad: its second-order effect is ~ (1e-18 T)^2, nothing against u_c ~ 1e-5 T
    cs = _one(1e-9)
    auto, gum = cs.evaluate(seed=1, trials=20_000), cs.evaluate("gum")
    assert auto.monte_carlo is None and auto.points[0].propagation == "gum"
    assert auto.points[0].u_error == gum.points[0].u_error
    assert "negligible" in auto.propagation_reason and "theta_x_1" in auto.propagation_reason
    assert not any("underestimates" in w for w in auto.warnings)


def test_auto_goes_to_monte_carlo_when_the_tilt_matters_and_says_why():
    res = _one(0.02).evaluate(seed=1, trials=20_000)
    assert res.monte_carlo is not None
    assert "matter" in res.propagation_reason and "%" in res.propagation_reason
    assert "Monte Carlo" in res.to_dict()["propagation_reason"]
    assert _one(0.02).evaluate("gum").propagation_reason.startswith("first-order GUM was asked for")


def test_threshold_sits_at_one_percent_of_uc_squared():
    # Find u where the second-order effect is 1 % of u_c^2: c2 = B u^2 per angle, effect per angle
    # c2^2/2 + c2^2/4 = 3/4 B^2 u^4, two angles: 3/2 B^2 u^4 = 0.01 u_c^2.
    gum = _one(1e-6).evaluate("gum")
    uc, b = gum.points[0].u_error, gum.points[0].reference
    u_star = (0.01 * uc * uc / (1.5 * b * b)) ** 0.25
    assert _one(u_star * 0.95).evaluate(seed=1, trials=20_000).monte_carlo is None
    assert _one(u_star * 1.05).evaluate(seed=1, trials=20_000).monte_carlo is not None


def test_conformity_t_on_a_monte_carlo_point_is_refused_and_auto_uses_the_histogram():
    res = _one(0.01, tilt_model="one-angle").evaluate(seed=3, trials=100_000)
    pt = res.points[0]
    tol = Tolerance.symmetric(0.0, 5e-4 + 2e-5, "T")
    with pytest.raises(InputError, match="Monte Carlo point"):
        assess_conformity(tol, pt, distribution="t")
    auto = assess_conformity(tol, pt, distribution="auto")
    hist = assess_conformity(tol, pt, distribution="histogram")
    assert auto.probability_of_conformity == hist.probability_of_conformity
    gum_pt = _one(0.01).evaluate("gum").points[0]
    t = assess_conformity(tol, gum_pt, distribution="t")
    assert assess_conformity(tol, gum_pt, distribution="auto").probability_of_conformity == \
        t.probability_of_conformity


def test_monte_carlo_point_reports_its_coverage_interval():
    res = _one(0.02).evaluate(seed=4, trials=50_000)
    pt = res.points[0]
    lo, hi = pt.coverage_interval
    assert (lo, hi) == tuple(pt.monte_carlo.interval)
    assert pt.expanded_uncertainty == pytest.approx((hi - lo) / 2)
    # one-sided tilt: the interval is off-centre about the error (more room below: cos <= 1 lowers B seen,
    # so E = R - B cos rises; the tail is on the high side)
    assert hi - pt.error > pt.error - lo
    assert pt.to_dict()["coverage_interval"] == [lo, hi]
    g = _one(0.02).evaluate("gum").points[0]
    assert g.coverage_interval == (g.error - g.expanded_uncertainty, g.error + g.expanded_uncertainty)


def test_prediction_gives_its_degrees_of_freedom():
    fields = [0.5, 1.0, 1.5]
    pts = [CalibrationPoint(nmr_budget(b), readings_t=_readings(b)) for b in fields]
    res = CalibrationSet(pts, resolution_t=1e-5, shared=("d_fs", "d_pert")).evaluate("gum")
    curve = res.fit(1)
    pred = curve.predict(1.2)
    assert 0 < pred.dof < math.inf
    # Welch-Satterthwaite by hand: w = g^T (X^T V^-1 X)^-1 X^T V^-1, nu_c = u_c^4 / sum (w_k u_k)^4 / nu_k
    x = np.array(res.indications)
    v = res.covariance
    xm = np.vander(x, 2, increasing=True)
    vi = np.linalg.inv(v)
    g = np.array([1.0, 1.2])
    w = g @ np.linalg.inv(xm.T @ vi @ xm) @ xm.T @ vi
    u_c2 = float(g @ np.linalg.inv(xm.T @ vi @ xm) @ g)
    nus = np.array([p.effective_dof for p in res.points])
    nu_c = u_c2 ** 2 / float(np.sum((w * np.sqrt(np.diag(v))) ** 4 / nus))
    u_r = 1e-5 / (2 * math.sqrt(3))
    expect = nu_c * ((u_c2 + u_r ** 2) / u_c2) ** 2
    assert pred.dof == pytest.approx(expect, rel=1e-6)
    assert pred.to_dict()["dof"] == pytest.approx(expect, rel=1e-6)
