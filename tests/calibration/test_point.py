"""Per-point calibration budgets, their correlation, and the curve over them.

Invented scenario (tests/calibration/_scenario.py).  Independent checks:
numpy least squares on the whitened system, closed forms of the normal
distribution (E[cos theta] = exp(-u^2/2) for theta ~ N(0, u^2), common
practice / standard result), and the Monte Carlo standard error s/sqrt(M).
"""

from __future__ import annotations

import dataclasses
import json
import math
import warnings

import numpy as np
import pytest

from fieldbudget.calibration import (
    CalibrationPoint,
    CalibrationRangeWarning,
    CalibrationSet,
    Tolerance,
    assess_conformity,
)
from fieldbudget.engine import Budget, InputQuantity, Normal, evaluate, montecarlo
from fieldbudget.errors import InputError

from ._scenario import nmr_budget

FIELDS = [0.2, 0.5, 1.0, 1.5, 2.0]
OFFSETS = [1.0e-5, 0.0, -1.0e-5, 0.0]


def _readings(b, gain=2e-4, offset=3e-6):
    return [b * (1 + gain) + offset + d for d in OFFSETS]


def _set(ref=nmr_budget, **kw):
    pts = [CalibrationPoint(ref(b), readings_t=_readings(b)) for b in FIELDS]
    return CalibrationSet(pts, resolution_t=1e-5, instrument="teslameter HX-400 s/n HX4-0193",
                          shared=("d_fs", "d_pert"), **kw)


# -- the tilt term ----------------------------------------------------------------------------------
def test_cos_theta_mean_below_one_by_half_u_squared():
    # theta = 0 +- u: E[cos theta] = exp(-u^2/2) = 1 - u^2/2 + O(u^4) (normal moments, common practice).
    u, m = 0.02, 200_000
    b = Budget(model="cos(theta)", inputs=(InputQuantity("theta", 0.0, Normal(u=u)),))
    gum = evaluate(b)
    assert gum.estimate == 1.0 and gum.standard_uncertainty == 0.0
    assert any("underestimates" in w for w in gum.warnings)
    mc = montecarlo.run(b, m, seed=11)
    se = mc.standard_uncertainty / math.sqrt(m)  # Monte Carlo standard error of the mean
    assert abs(mc.estimate - (1 - u**2 / 2)) < 5 * se + u**4 / 8
    assert 1 - mc.estimate > 0.9 * u**2 / 2


def test_calibration_point_tilt_goes_through_monte_carlo_and_says_so():
    u, m = 0.02, 200_000
    pts = [CalibrationPoint(nmr_budget(1.0), readings_t=_readings(1.0))]
    cs = CalibrationSet(pts, resolution_t=1e-5, tilt_u_rad=u, tilt_model="one-angle")
    gum = cs.evaluate("gum")
    res = cs.evaluate(seed=5, trials=m)  # "auto" picks Monte Carlo for the zero-sensitivity tilt
    assert res.propagation.startswith("Monte Carlo")
    assert any("first-order law of propagation underestimates" in w for w in res.warnings)
    assert any("u^2/2" in w for w in res.warnings)
    assert any("theta_1" in w and "underestimates" in w for w in gum.points[0].warnings)
    # the probe sees B cos(theta): E rises by B (1 - exp(-u^2/2)) ~ B u^2/2
    e_gum, e_mc = gum.points[0].error, res.points[0].error
    se = res.points[0].u_error / math.sqrt(m)
    assert abs((e_mc - e_gum) - 1.0 * (1 - math.exp(-u**2 / 2))) < 5 * se
    # and u gains the second-order term: var(cos theta) = (1 - exp(-u^2))^2 / 2 for theta ~ N(0, u^2)
    u_tilt = 1.0 * (1 - math.exp(-u**2)) / math.sqrt(2)
    expect = math.hypot(gum.points[0].u_error, u_tilt)
    assert res.points[0].u_error == pytest.approx(expect, rel=0.02)
    assert res.points[0].u_error > gum.points[0].u_error * 1.5
    # JCGM 101:2008 clause 8: the first-order GUM interval is not validated by Monte Carlo here
    assert res.points[0].validation is not None and not res.points[0].validation.passed
    assert gum.points[0].validation is None
    # the second-order terms of JCGM 100:2008 5.1.2 (note) give the same u; the result says so
    assert res.points[0].u_second_order == pytest.approx(expect, rel=0.02)
    assert any("second-order terms" in w for w in res.points[0].warnings)


# -- budget contents -------------------------------------------------------------------------------
def test_shared_inputs_appear_once_and_the_model_is_visible():
    cs = _set()
    syms = cs.budget.symbols
    for s in ("gp", "d_fs", "d_pert"):
        assert syms.count(s) == 1
    assert {"f_r1", "f_r5", "d_loc_r3", "R_2", "dres_4"} <= set(syms)
    text = cs.budget.model.text()
    assert "E_1 = " in text and "f_r1 / gp" in text
    assert cs.budget.input("gp").reference == "shielded proton gyromag. ratio in MHz/T"


def test_budget_and_result_references_give_the_same_covariance():
    # the reference carried in as a BudgetResult rebuilds the covariance from the shared contributions
    a = _set().evaluate("gum")
    b = _set(lambda x: evaluate(nmr_budget(x))).evaluate("gum")
    np.testing.assert_allclose(b.covariance, a.covariance, rtol=1e-6, atol=1e-20)
    np.testing.assert_allclose(b.errors, a.errors, rtol=1e-12)


def test_shared_reference_inputs_correlate_the_points():
    # with an exact instrument side (huge pooled dof, tiny sd) the points are dominated by the shared
    # NMR inputs and nearly fully correlated; the independent GUM sum gives the same covariance
    pts = [CalibrationPoint(nmr_budget(b), readings_t=[b, b], pooled_sd_t=1e-12) for b in FIELDS]
    cs = CalibrationSet(pts, resolution_t=1e-12, shared=("d_fs", "d_pert"))
    res = cs.evaluate("gum")
    assert res.correlation[0, 4] > 0.9
    # by hand: cov(E_i, E_j) = B_i B_j (u_gp^2/gp^2 + u_fs^2 + u_pert^2) for i != j (first order)
    q = nmr_budget(1.0)
    gp = q.input("gp")
    rel2 = (gp.standard_uncertainty / gp.estimate) ** 2 + 5e-8**2 + (2e-7 / math.sqrt(3)) ** 2
    assert res.covariance[0, 4] == pytest.approx(0.2 * 2.0 * rel2, rel=1e-6)


def test_reversal_cancels_the_zero_offset():
    b, z = 1.0, 4e-5
    p = CalibrationPoint(nmr_budget(b), readings_t=[b + z + 1e-6, b + z - 1e-6],
                         reversed_readings_t=[-b + z + 1e-6, -b + z - 1e-6], u_reversal_t=2e-6)
    cs = CalibrationSet([p], resolution_t=1e-6, zero_offset_t=z, u_zero_offset_t=1e-6)
    assert p.indication == pytest.approx(b)
    assert "R_zero" not in cs.budget.symbols and {"Rp_1", "Rn_1", "drev_1"} <= set(cs.budget.symbols)
    r = cs.evaluate("gum")
    assert r.points[0].error == pytest.approx(0.0, abs=1e-12)


def test_temperature_and_gradient_terms():
    b = 1.0
    p = CalibrationPoint(nmr_budget(b), readings_t=[1.001, 1.001], pooled_sd_t=1e-6, temperature_difference_k=2.0,
                         u_temperature_difference_k=0.1, gradient_t_per_m=0.5, u_gradient_t_per_m=0.05)
    cs = CalibrationSet([p], resolution_t=1e-6, temperature_coefficient_per_k=1e-4,
                        u_temperature_coefficient_per_k=1e-5, position_offset_m=2e-3, u_position_offset_m=1e-4,
                        correction_factor=True)
    r = cs.evaluate("gum")
    ind = 1.001 / (1 + 1e-4 * 2.0)
    seen = b + 0.5 * 2e-3
    assert r.points[0].error == pytest.approx(ind - seen, rel=1e-9)
    assert r.points[0].correction_factor == pytest.approx(seen / ind, rel=1e-12)
    # u from the temperature term by hand: |dE/da| u(a) = ind * dT / (1 + a dT) * u(a)
    c = next(c for c in r.points[0].gum.contributions if c.symbol == "a_temp")
    assert c.u_contribution == pytest.approx(1.001 * 2.0 / (1 + 2e-4) ** 2 * 1e-5, rel=1e-9)


# -- bad input ---------------------------------------------------------------------------------------
def test_duplicate_reference_points():
    pts = [CalibrationPoint(nmr_budget(1.0), readings_t=_readings(1.0)) for _ in range(2)]
    with pytest.raises(InputError) as e:
        CalibrationSet(pts, resolution_t=1e-5)
    assert e.value.field == "points" and "distinct reference fields" in str(e.value)


def test_fewer_points_than_coefficients_in_the_curve():
    cs = CalibrationSet([CalibrationPoint(nmr_budget(b), readings_t=_readings(b)) for b in (0.5, 1.0)],
                        resolution_t=1e-5)
    with pytest.raises(InputError) as e:
        cs.evaluate("gum").fit(2)
    assert e.value.field == "points"


@pytest.mark.parametrize("kw, field", [
    ({"readings_t": []}, "readings_t"),
    ({"readings_t": [1.0]}, "readings_t"),
    ({"readings_t": [1.0, float("nan")]}, "readings_t"),
    ({"reversed_readings_t": [1.0, 1.0]}, "reversed_readings_t"),
    ({"u_reversal_t": 1e-6}, "u_reversal_t"),
    ({"resolution_t": 0.0}, "resolution_t"),
    ({"u_gradient_t_per_m": -1.0}, "u_gradient_t_per_m"),
])
def test_bad_point(kw, field):
    args = {"reference": nmr_budget(1.0), "readings_t": [1.0, 1.0]} | kw
    with pytest.raises(InputError) as e:
        CalibrationPoint(**args)
    assert e.value.field == field


def test_bad_set_and_reference():
    p = CalibrationPoint(nmr_budget(1.0), readings_t=[1.0, 1.0])
    with pytest.raises(InputError, match="resolution_t"):
        CalibrationSet([p], resolution_t=-1.0)
    with pytest.raises(InputError, match="tilt_u_rad"):
        CalibrationSet([p], resolution_t=1e-5, tilt_u_rad=2.0)
    with pytest.raises(InputError) as e:
        CalibrationSet([CalibrationPoint("1.0 T", readings_t=[1.0, 1.0])], resolution_t=1e-5)
    assert e.value.field == "reference"
    with pytest.raises(InputError, match="propagation"):
        CalibrationSet([p], resolution_t=1e-5).evaluate("exact")
    # a shared input that differs between points is refused, not silently merged
    other = nmr_budget(1.5)
    other = other.with_input(other.input("d_fs").replace(distribution=Normal(u=9e-8)))
    with pytest.raises(InputError, match="shared input 'd_fs'"):
        CalibrationSet([p, CalibrationPoint(other, readings_t=[1.5, 1.5])], resolution_t=1e-5, shared=("d_fs",))


# -- the curve over the points ------------------------------------------------------------------------
def test_curve_uses_the_covariance_and_matches_numpy():
    res = _set(u_temperature_coefficient_per_k=3e-5, temperature_coefficient_per_k=0.0).evaluate("gum")
    curve = res.fit(1)
    x, y, v = np.array(res.indications), np.array(res.errors), res.covariance
    L = np.linalg.cholesky(v)
    X = np.vander(x, 2, increasing=True)
    a, *_ = np.linalg.lstsq(np.linalg.solve(L, X), np.linalg.solve(L, y), rcond=None)
    np.testing.assert_allclose(curve.fit.coefficients, a, rtol=1e-8)
    # invented data: E = 2e-4 B + 3e-6 exactly, so the slope is recovered (in terms of indication)
    assert curve.fit.coefficients[1] == pytest.approx(2e-4 / (1 + 2e-4), rel=1e-6)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        p = curve.predict(1.2002)
    assert p.corrected == pytest.approx(1.2002 - curve.fit.value_at(1.2002))
    assert p.u_reading == pytest.approx(1e-5 / (2 * math.sqrt(3)))
    with pytest.warns(CalibrationRangeWarning):
        q = curve.predict(2.5)
    assert not q.inside_range
    wls = res.fit(1, correlated=False)
    assert wls.fit.method == "weighted"


def test_forms_are_plain_and_escaped():
    pts = [CalibrationPoint(nmr_budget(b), readings_t=_readings(b)) for b in (0.5, 1.0, 1.5)]
    cs = CalibrationSet(pts, resolution_t=1e-5, instrument="HX-400 <s/n 0193> & co", correction_factor=True)
    res = cs.evaluate("gum")
    for obj in (res, res.points[0], res.fit(1)):
        assert "\n" not in repr(obj)
        json.dumps(obj.to_dict())
    assert "&lt;s/n 0193&gt; &amp; co" in res._repr_html_()
    assert "<s/n" not in res._repr_html_()
    with pytest.raises(dataclasses.FrozenInstanceError):
        res.points[0].error = 0.0


# -- with the NMR layer's own measurement ---------------------------------------------------------
def _nmr_result(freq_hz):
    from fieldbudget.nmr import NMRMeasurement

    # invented proton measurement; timebase and probe perturbation are the same at every point
    d = {"nucleus": "shielded-proton", "codata": 2022,
         "frequency": {"readings_Hz": [freq_hz * (1 + k * 1e-9) for k in (-1, 0, 1, 0)]},
         "timebase": {"offset": 1e-10, "u": 5e-9},
         "sample": {"temperature_C": 22.0, "u_temperature_C": 0.1},  # else 25 degC +-5 K is assumed
         "probe_perturbation": {"value": 0.0, "u": 2e-8}}
    return NMRMeasurement.from_dict(d).evaluate()


def test_nmr_results_are_merged_through_their_budgets():
    refs = [_nmr_result(f) for f in (21.3e6, 42.6e6, 63.9e6)]
    fields = [r.estimate for r in refs]
    mk = [CalibrationPoint(r, readings_t=[b * (1 + 3e-4), b * (1 + 3e-4) + 2e-8], pooled_sd_t=1e-9)
          for r, b in zip(refs, fields)]
    carried = [CalibrationPoint(r.result, readings_t=p.readings_t, pooled_sd_t=1e-9) for r, p in zip(refs, mk)]
    merged = CalibrationSet(mk, resolution_t=1e-9, shared=("y_tb", "d_probe"))
    syms = merged.budget.symbols
    assert syms.count("y_tb") == 1 and syms.count("d_probe") == 1 and syms.count("gamma_p_sh") == 1
    assert "f_read_r2" in syms
    a = merged.evaluate("gum")
    b = CalibrationSet(carried, resolution_t=1e-9, shared=("y_tb", "d_probe")).evaluate("gum")
    np.testing.assert_allclose(a.covariance, b.covariance, rtol=1e-6)
    assert a.correlation[0, 2] > 0.5  # the shared timebase and probe terms dominate here
    assert [p.reference for p in a.points] == pytest.approx(fields, rel=1e-15)


def test_reading_form_inverts_the_curve():
    # invented data: R = (1 + 2e-4) B + 3e-6 exactly; the inverse by hand is B = (R - 3e-6) / (1 + 2e-4)
    res = _set(u_temperature_coefficient_per_k=3e-5).evaluate("gum")
    curve = res.fit(1, form="reading")
    a0, a1 = curve.fit.coefficients
    assert a1 == pytest.approx(1 + 2e-4, rel=1e-9) and a0 == pytest.approx(3e-6, rel=1e-6, abs=1e-12)
    p = curve.predict(1.2)
    b = (1.2 - a0) / a1
    assert p.corrected == pytest.approx(b, rel=1e-14)
    v = curve.fit.covariance_matrix
    u_r = 1e-5 / (2 * math.sqrt(3))
    by_hand = math.sqrt(v[0, 0] + b * b * v[1, 1] + 2 * b * v[0, 1] + u_r**2) / a1  # JCGM 100:2008 eq. (13)
    assert p.standard_uncertainty == pytest.approx(by_hand, rel=1e-9)
    # both forms agree on this exactly linear data
    q = res.fit(1).predict(1.2)
    assert q.corrected == pytest.approx(p.corrected, abs=1e-12)
    with pytest.raises(InputError, match="form"):
        res.fit(1, form="table")


def test_conformity_of_a_point_result():
    # The point result is result-like.  With the tilt dominating, E = E0 + B theta^2/2 is skewed: the normal
    # PDF overstates p_c, the Monte Carlo histogram does not.  Independent check: theta^2/u^2 is chi-square
    # with 1 dof, so p_c ~ P(chi2_1 <= 2 (T_U - E0) / (B u^2)) (scipy.stats.chi2; the small normal part of
    # E, about 5e-6 T, smears this by well under 0.003).
    import scipy.stats

    u = 0.01
    gum = _set(tilt_u_rad=u, tilt_model="one-angle").evaluate("gum")
    res = _set(tilt_u_rad=u, tilt_model="one-angle").evaluate(seed=3, trials=100_000)
    pt = res.points[2]
    b_ref, e0 = pt.reference, gum.points[2].error
    t_u = 5e-4 * 1.0 + 2e-5  # invented specification: +-(0.05 % of reading + 20 uT)
    tol = Tolerance.symmetric(0.0, t_u, "T", source="HX-400 data sheet (invented)")
    normal = assess_conformity(tol, pt, rule="guarded acceptance")
    hist = assess_conformity(tol, pt, distribution="histogram")
    assert normal.estimate == pt.error and normal.standard_uncertainty == pt.u_error
    exact = scipy.stats.chi2.cdf(2 * (t_u - e0) / (b_ref * u * u), 1)
    assert hist.probability_of_conformity == pytest.approx(exact, abs=0.003)
    assert normal.probability_of_conformity > exact + 0.005


def test_one_mounting_correlates_the_tilt_between_points():
    # tilt_per_point=False: one angle for all points, so its (nonlinear) effect is fully shared
    shared = _set(tilt_u_rad=0.02, tilt_per_point=False)
    apart = _set(tilt_u_rad=0.02)
    assert shared.budget.symbols.count("theta_x") == 1 and "theta_x_1" in apart.budget.symbols
    assert "theta_y" in shared.budget.symbols and "theta_y_1" in apart.budget.symbols
    rs, ra = shared.evaluate(seed=8, trials=50_000), apart.evaluate(seed=8, trials=50_000)
    assert rs.correlation[1, 4] > 0.95 > ra.correlation[1, 4] + 0.5


def test_definition_forms():
    cs = _set()
    assert "\n" not in repr(cs) and "\n" not in repr(cs.points[0])
    d = json.loads(json.dumps(cs.to_dict()))
    assert d["budget"]["model"]["E_1"].startswith("(R_1 + dres_1)")
    assert "<table" in cs._repr_html_()


def test_unknown_shared_symbol_and_ignored_terms_are_reported():
    p = CalibrationPoint(nmr_budget(1.0), readings_t=[1.0, 1.0], pooled_sd_t=1e-6, gradient_t_per_m=0.1)
    with pytest.raises(InputError) as e:
        CalibrationSet([p], resolution_t=1e-5, shared=("d_freq",))
    assert e.value.field == "shared" and "d_fs" in str(e.value)
    res = CalibrationSet([p], resolution_t=1e-5).evaluate("gum")
    assert any("gradient is given but no position difference" in w for w in res.warnings)


def test_linear_point_budget_matches_root_sum_of_squares():
    # No nonlinear terms: u^2(E) = s^2(R)/n + (digit/2)^2/3 + u^2(B_ref) (JCGM 100:2008 eq. (10), by hand)
    readings = _readings(1.0)
    res = CalibrationSet([CalibrationPoint(nmr_budget(1.0), readings_t=readings)], resolution_t=1e-5).evaluate()
    assert res.propagation.startswith("GUM")
    u_ref = evaluate(nmr_budget(1.0)).standard_uncertainty
    u2 = np.var(readings, ddof=1) / len(readings) + (0.5e-5) ** 2 / 3 + u_ref**2
    assert res.points[0].u_error == pytest.approx(math.sqrt(u2), rel=1e-12)
    assert res.points[0].error == pytest.approx(np.mean(readings) - evaluate(nmr_budget(1.0)).estimate, rel=1e-12)


def test_cmc_from_point_results():
    from fieldbudget.calibration import build_cmc_table

    res = _set().evaluate("gum")
    t = build_cmc_table(res.points, [(0.2, 2.0)], measurand="B", method="teslameter vs NMR")
    (e,) = t.entries
    assert [p.value for p in e.points] == [p.reference for p in res.points]
    for p in res.points:
        assert e.uncertainty_at(p.reference) >= p.expanded_uncertainty * (1 - 1e-12)


def test_linear_points_validated_by_monte_carlo_and_certificate_rows():
    # linear model, normal inputs with large dof: JCGM 101 clause 8 validates the GUM result
    pts = [CalibrationPoint(nmr_budget(b), readings_t=[b * 1.0002, b * 1.0002], pooled_sd_t=2e-6,
                            pooled_dof=200) for b in (0.5, 1.0)]
    # 5e5 trials: enough that the interval ends' tolerance (2 s) separates d from delta at both points
    res = CalibrationSet(pts, resolution_t=1e-7).evaluate("monte carlo", seed=2, trials=500_000)
    assert all(p.validation.passed for p in res.points)
    rows = res.certificate_rows()
    assert rows[0]["point"] == "P1" and rows[0]["gum_validated"] is True
    # U to two significant digits, the error to the same decimal place (JCGM 100:2008 7.2.6)
    u_txt, e_txt = rows[1]["U_T"], rows[1]["error_T"]
    assert len(u_txt.replace("0.", "").lstrip("0")) == 2
    assert len(e_txt.split(".")[1]) == len(u_txt.split(".")[1])
    json.dumps(res.to_dict())


def test_mixed_reference_kinds_refused():
    pts = [CalibrationPoint(nmr_budget(0.5), readings_t=[0.5, 0.5]),
           CalibrationPoint(evaluate(nmr_budget(1.0)), readings_t=[1.0, 1.0])]
    with pytest.raises(InputError, match="the same kind at every point"):
        CalibrationSet(pts, resolution_t=1e-5)
