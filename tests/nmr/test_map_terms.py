"""A fitted map feeding budgets: the NMR sample's gradient and volume terms, and a Hall sensor's offset.

The independent computation in each test integrates the known field over the
sample's (or sensor's) volume by Monte Carlo with numpy (uniform points in the
volume; standard error = sd/sqrt(n), stated beside the tolerance) and
evaluates the known field at the reference point directly.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fieldbudget.calibration import CalibrationPoint, CalibrationSet
from fieldbudget.engine import Budget, InputQuantity, Measurand, Normal, evaluate
from fieldbudget.nmr.fieldmap import FieldMap, calibration_offset, fit_map, sample_terms


def true_field(x, y, z):
    rho2 = x * x + y * y
    return (1.0 + 1.5e-5 * x - 2e-5 * y + 3e-4 * z + 0.45 * (z * z - rho2 / 2) + 0.05 * x * z
            - 260.0 * (z ** 4 - 3 * rho2 * z * z + 3 / 8 * rho2 * rho2))


def fitted(seed=0):
    rng = np.random.default_rng(seed)
    xyz = rng.uniform(-0.02, 0.02, (1500, 3))
    b = true_field(*xyz.T) + rng.normal(0, 1e-9, len(xyz))
    return fit_map(FieldMap(xyz, b, np.full(len(xyz), 1e-9)), 4)


def cylinder_points(centre, diameter, length, axis, n=2_000_000, seed=1):
    rng = np.random.default_rng(seed)
    r = diameter / 2 * np.sqrt(rng.uniform(size=n))
    phi = rng.uniform(0, 2 * np.pi, n)
    t = rng.uniform(-length / 2, length / 2, n)
    a, b = r * np.cos(phi), r * np.sin(phi)
    pts = {"z": (a, b, t), "x": (t, a, b), "y": (b, t, a)}[axis]
    return [c + p for c, p in zip(centre, pts)]


def mc_mean(values):
    return float(np.mean(values)), float(np.std(values) / math.sqrt(values.size))


@pytest.mark.parametrize("axis", ["z", "x"])
def test_nmr_sample_terms_give_the_field_at_the_reference_point(axis):
    fit = fitted()
    s, r = (0.0004, -0.0003, 0.0012), (0.0, 0.0, 0.0)
    sample = {"shape": "cylinder", "diameter_m": 0.004, "length_m": 0.008, "axis": axis}
    terms = sample_terms(fit, s, reference_point_m=r, u_sample_position_m=(1e-4, 1e-4, 1e-4), sample=sample)
    # what the NMR probe reads: the field averaged over the sample volume (independent: Monte Carlo)
    b_nmr, se = mc_mean(true_field(*cylinder_points(s, 0.004, 0.008, axis)))
    budget = Budget(model=f"B_s - {terms.expression}",
                    inputs=(InputQuantity("B_s", b_nmr, Normal(u=se), unit="T"), *terms.inputs),
                    correlations=terms.correlations, measurand=Measurand("B0", "T"))
    res = evaluate(budget)
    assert res.estimate == pytest.approx(true_field(*r), abs=5 * se + 5 * res.standard_uncertainty)
    # the terms are what they say: G at the midpoint, offsets s - r, d_vol = <B> - B(s)
    by = {q.symbol: q for q in terms.inputs}
    assert by["z_off"].estimate == pytest.approx(0.0012) and by["z_off"].standard_uncertainty == 1e-4
    assert by["G_z"].estimate == pytest.approx(3e-4 + 0.9 * 0.0006 + 0.05 * 0.0002, rel=1e-3)
    assert by["d_vol"].estimate == pytest.approx(b_nmr - true_field(*s), abs=5 * se + 1e-10)
    assert by["G_z"].role == "lab_characterisation" and by["G_z"].source.startswith("field map")
    assert terms.second_order


def test_sphere_sample_average_term_is_zero_with_its_u():
    terms = sample_terms(fitted(), (0.001, 0.0, 0.0), sample={"shape": "sphere", "diameter_m": 0.005})
    d_vol = {q.symbol: q for q in terms.inputs}["d_vol"]
    assert abs(d_vol.estimate) < 1e-15 and d_vol.standard_uncertainty < 1e-10   # mean-value theorem


def test_correlations_come_from_the_coefficients_covariance():
    fit = fitted()
    terms = sample_terms(fit, (0.0, 0.0, 0.002), sample={"shape": "cylinder", "diameter_m": 0.004,
                                                          "length_m": 0.008, "axis": "z"})
    by = {(a, b): r for a, b, r in terms.correlations}
    w1, w2 = fit.weights("dz", (0, 0, 0.001)), fit.weights("average", (0, 0, 0.002), shape="cylinder",
                                                            diameter_m=0.004, length_m=0.008) - \
        fit.weights("value", (0, 0, 0.002))
    c = np.asarray(fit.covariance)
    r = w1 @ c @ w2 / math.sqrt((w1 @ c @ w1) * (w2 @ c @ w2))
    assert by[("G_z", "d_vol")] == pytest.approx(r, rel=1e-9)
    assert all(-1 <= rr <= 1 for rr in by.values())


def test_hall_sensor_offset_for_a_calibration_point():
    fit = fitted()
    nmr, hall = (0.0, 0.0, 0.0), (0.0, 0.0, 0.006)
    hall_volume = {"shape": "cylinder", "diameter_m": 0.001, "length_m": 0.0002, "axis": "z"}
    nmr_sample = {"shape": "sphere", "diameter_m": 0.005}
    kw = calibration_offset(fit, nmr, hall, nmr_sample=nmr_sample, hall_volume=hall_volume)
    b_hall, se = mc_mean(true_field(*cylinder_points(hall, 0.001, 0.0002, "z")))
    assert kw["position_offset_m"] == pytest.approx(0.006)
    # the NMR sphere's average is the field at its centre (mean-value theorem)
    assert kw["gradient_t_per_m"] * kw["position_offset_m"] == pytest.approx(b_hall - true_field(*nmr),
                                                                            abs=5 * se + 1e-10)
    # end to end: a calibration point whose Hall reading equals the field at the sensor has error ~ 0
    p = CalibrationPoint(reference=Budget(model="B", inputs=(InputQuantity("B", 1.0, Normal(u=1e-7), unit="T"),)),
                         readings_t=(b_hall, b_hall, b_hall + 1e-9, b_hall - 1e-9), gradient_t_per_m=kw["gradient_t_per_m"],
                         u_gradient_t_per_m=kw["u_gradient_t_per_m"])
    cal = CalibrationSet(points=(p,), resolution_t=1e-9, position_offset_m=kw["position_offset_m"])
    res = cal.evaluate(propagation="gum")
    assert res.points[0].estimate == pytest.approx(0.0, abs=1e-8)


def test_bad_positions_are_refused():
    fit = fitted()
    with pytest.raises(Exception, match="sample_position_m"):
        sample_terms(fit, (0.0, 0.0))
    with pytest.raises(Exception, match="hall_position_m"):
        calibration_offset(fit, (0, 0, 0), (0, 0, 0))
