"""NMRMeasurement -> Budget: the model, the inputs, the end-to-end value, warnings and errors.

The end-to-end checks recompute B0 and u_c without fieldbudget: reference
values from scipy.constants (CODATA 2022), the water coefficient from Petley &
Donaldson 1984 (abstract), sensitivities by hand (JCGM 100:2008 5.1.3, eq. 10).
"""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc

from fieldbudget.engine import evaluate, rebase
from fieldbudget.errors import BudgetFileError
from fieldbudget.nmr import NMRMeasurement, NMRResult, physics

DATA = Path(__file__).parent / "data"

READINGS = [63871224.31, 63871224.35, 63871224.28, 63871224.33, 63871224.30]

# An invented measurement (Brackwater Field Standards Laboratory, invented for tests).
BASE = {
    "nucleus": "shielded-proton",
    "codata": 2022,
    "frequency": {"readings_Hz": READINGS, "counter_resolution_Hz": 0.01},
    "timebase": {"offset": 1.2e-10, "u": 0.5e-10, "ageing_per_day": 5e-11, "days_since_calibration": 40},
    "sample": {"temperature_C": 27.0, "u_temperature_C": 0.2, "shape": "long-cylinder", "axis": "parallel",
               "u_demagnetizing_factor": 0.002, "diameter_m": 0.004, "length_m": 0.04},
    # the line noise added to the readings' scatter on purpose, so the end-to-end check covers d_line
    "line": {"fwhm_Hz": 2.5, "snr": 150, "points_per_fwhm": 12, "noise_in_readings": False},
    "gradient_T_per_m": [1e-6, 0.0, 2e-6],
    "u_gradient_T_per_m": [0.2e-6, 0.0, 0.5e-6],
    "offset_m": [0.1e-3, 0.0, 0.3e-3],
    "u_offset_m": [0.1e-3, 0.1e-3, 0.2e-3],
    "probe_perturbation": {"value": 3e-9, "u": 1.5e-8},
    "drift": {"stability": 5e-9, "distribution": "rectangular"},
}


def meas(**changes) -> NMRMeasurement:
    d = copy.deepcopy(BASE)
    for k, v in changes.items():
        if v is None:
            d.pop(k, None)
        else:
            d[k] = v
    return NMRMeasurement.from_dict(d)


def test_model_lists_every_correction():
    b = meas().to_budget()
    text = b.model.text()
    assert text.startswith("B0 = (f_read + d_res + d_line) * (1 + y_tb + y_age) * (1 + y_drift) / (gamma_p_sh * 1e6")
    for part in ("(1 - alpha_T * (t_s - t_ref))", "(1 + chi * (1 + c_chi * (t_s - t_chi)) * (1/3 - N_d))",
                 "(1 + d_probe)",
                 "(G_x * x_off + G_z * z_off)"):
        assert part in text
    # y has no gradient: its offset cannot matter and is left out
    assert "G_y" not in b.symbols
    for q in b.inputs:
        assert q.source, q.symbol
        assert q.description, q.symbol
    assert b.input("gamma_p_sh").reference == "shielded proton gyromag. ratio in MHz/T"
    assert b.metadata["codata"] == 2022
    assert b.measurand.symbol == "B0" and b.measurand.unit == "T"


def test_end_to_end_value_and_uncertainty_independent():
    r = meas().evaluate()
    assert isinstance(r, NMRResult)
    # independent value: scipy.constants CODATA 2022, Petley & Donaldson 1984 alpha = 10.36e-9 /K,
    # water chi = -9.05e-6 (Magn. Reson. Imaging 33, 829 (2015), Table 5), N = 0 (long cylinder along B0)
    gamma = sc.value("shielded proton gyromag. ratio in MHz/T") * 1e6
    f = float(np.mean(READINGS))
    y_tb, alpha, t, chi, n, dp = 1.2e-10, 10.36e-9, 27.0, -9.05e-6, 0.0, 3e-9
    temp = 1 - alpha * (t - 25.0)
    bulk = 1 + chi * (1 / 3 - n)
    bs = f * (1 + y_tb) / (gamma * temp * bulk * (1 + dp))
    g = np.array([1e-6, 2e-6])
    x = np.array([0.1e-3, 0.3e-3])
    b0 = bs - float(g @ x)
    assert r.estimate == pytest.approx(b0, rel=1e-14)

    # independent root-sum-square of the listed components with sensitivities by hand (GUM 5.1.3)
    budget = r.budget
    u = {q.symbol: q.standard_uncertainty for q in budget.inputs}
    s = np.std(READINGS, ddof=1) / math.sqrt(len(READINGS))
    assert u["f_read"] == pytest.approx(s, rel=1e-12)  # GUM 4.2.3
    assert u["d_res"] == pytest.approx(0.005 / math.sqrt(3), rel=1e-12)  # GUM 4.3.7
    assert u["d_line"] == pytest.approx(2.5 / 150 * math.sqrt(2 / (math.pi * 12)), rel=1e-12)
    assert u["y_age"] == pytest.approx(5e-11 * 40 / math.sqrt(3), rel=1e-12)
    assert u["y_drift"] == pytest.approx(5e-9 / math.sqrt(3), rel=1e-12)
    c = {
        "f_read": bs / f, "d_res": bs / f, "d_line": bs / f,
        "y_tb": bs / (1 + y_tb), "y_age": bs / (1 + y_tb), "y_drift": bs,
        "gamma_p_sh": -bs / (gamma / 1e6),
        "alpha_T": bs * (t - 25.0) / temp, "t_s": bs * alpha / temp,
        "chi": -bs * (1 / 3 - n) / bulk, "N_d": bs * chi / bulk,
        # water susceptibility's temperature coefficient (estimate 0), chi given at 20 degC (Auer 1933)
        "c_chi": -bs * chi * (t - 20.0) * (1 / 3 - n) / bulk,
        "d_probe": -bs / (1 + dp),
        "G_x": -x[0], "x_off": -g[0], "G_z": -x[1], "z_off": -g[1],
    }
    # plus the second-order term of each gradient x offset product, u(G) u(x) (JCGM 100:2008 5.1.2 note:
    # (1/2)(d2f/dG dx)^2 u_G^2 u_x^2 counted for (G, x) and (x, G)); the model's other second-order terms
    # are below 1e-12 relative here
    second = (u["G_x"] * u["x_off"]) ** 2 + (u["G_z"] * u["z_off"]) ** 2
    assert budget.second_order
    rss = math.sqrt(sum((c[k] * u[k]) ** 2 for k in c) + second)
    assert set(c) | {"t_ref", "t_chi"} == set(budget.symbols)
    assert u["t_ref"] == 0.0 and u["t_chi"] == 0.0
    assert r.standard_uncertainty == pytest.approx(rss, rel=1e-6)
    # k from the t-distribution at 95.45 % with nu_eff from Welch-Satterthwaite (GUM G.4): here ~2
    assert r.coverage_factor == pytest.approx(2.0, abs=0.01)


def test_edition_switch_through_rebase():
    # CODATA 2018 vs 2022 for the same frequency: +16.2e-9 relative (computed here)
    b22 = meas().to_budget()
    r22 = evaluate(b22).estimate
    r18 = evaluate(rebase(b22, 2018)).estimate
    built18 = meas(codata=2018).evaluate().estimate
    assert r18 / r22 - 1 == pytest.approx(16.2e-9, abs=0.1e-9)
    assert built18 == pytest.approx(r18, rel=1e-15)


def test_temperature_term_sign():
    # Petley & Donaldson 1984: the frequency falls as the water warms, so a warmer sample means the same
    # frequency comes from a higher field: B(30 degC)/B(25 degC) - 1 = +51.8e-9 for a fixed frequency
    def b(t):
        return meas(sample={"temperature_C": t, "u_temperature_C": 0.1}, drift=None, probe_perturbation=None,
                    gradient_T_per_m=None, u_gradient_T_per_m=None, offset_m=None, u_offset_m=None).evaluate()

    ratio = b(30.0).estimate / b(25.0).estimate - 1
    assert ratio == pytest.approx(51.8e-9 / (1 - 51.8e-9), rel=1e-6)


def test_water_sphere_default_has_no_bulk_term():
    m = meas(sample={"temperature_C": 25.0, "u_temperature_C": 0.1})
    assert "N_d" not in m.to_budget().symbols
    m2 = meas(sample={"temperature_C": 25.0, "u_temperature_C": 0.1, "shape": "sphere"})
    b = m2.to_budget()
    assert b.input("N_d").estimate == pytest.approx(1 / 3)
    assert evaluate(b).estimate == pytest.approx(evaluate(m.to_budget()).estimate, rel=1e-15)


def test_finite_cylinder_demag_uncertainty_from_aspect_ratio():
    m = meas(sample={"temperature_C": 25.0, "shape": "cylinder", "length_over_diameter": 1.0,
                     "u_length_over_diameter": 0.02, "axis": "parallel"})
    q = m.to_budget().input("N_d")
    assert q.estimate == pytest.approx(0.311577, abs=1e-6)  # computed here
    slope = (physics.demag_cylinder_axial(1.001) - physics.demag_cylinder_axial(0.999)) / 0.002
    assert q.standard_uncertainty == pytest.approx(abs(slope) * 0.02, rel=1e-4)


def test_spheroid_and_explicit_factor():
    m = meas(sample={"shape": "spheroid", "axis_ratio": 2.0, "axis": "parallel", "susceptibility": -9.0e-6})
    assert m.to_budget().input("N_d").estimate == pytest.approx(0.17356, abs=1e-5)  # Osborn 1945
    m = meas(sample={"demagnetizing_factor": 0.2, "u_demagnetizing_factor": 0.01})
    assert m.to_budget().input("N_d").standard_uncertainty == 0.01


def test_curvature_term_cylinder_harmonic_and_one_axis():
    sample = {"temperature_C": 25.0, "shape": "cylinder", "axis": "parallel", "diameter_m": 0.004, "length_m": 0.01}
    h = meas(sample=sample, curvature={"d2B_dz2_T_per_m2": 0.05, "u_d2B_dz2_T_per_m2": 0.01})
    o = meas(sample=sample, curvature={"d2B_dz2_T_per_m2": 0.05, "model": "one-axis"})
    qh, qo = h.to_budget().input("q_curv").estimate, o.to_budget().input("q_curv").estimate
    assert qh == pytest.approx(0.01**2 / 12 - 0.002**2 / 4, rel=1e-12)
    assert qo == pytest.approx(0.01**2 / 12, rel=1e-12)
    dh = evaluate(h.to_budget()).estimate - evaluate(meas(sample=sample).to_budget()).estimate
    assert dh == pytest.approx(-0.5 * 0.05 * qh, rel=1e-6)
    assert "harmonic" in h.to_budget().input("q_curv").source


def test_electron_with_sample_g_factor_against_scipy():
    # ESR: f = g mu_B B / h, so B = f h / (g mu_B) (CODATA 2022 h and mu_B via scipy.constants)
    m = NMRMeasurement.from_dict({"nucleus": "electron", "frequency": {"value_Hz": 9.5e9, "u_Hz": 1e3},
                                  "g_factor": {"value": 2.0036, "u": 0.0002}})
    r = m.evaluate()
    expected = 9.5e9 * sc.h / (2.0036 * sc.value("Bohr magneton"))
    assert r.estimate == pytest.approx(expected, rel=1e-9)
    assert "g_s / (-g_e)" in r.budget.model.text()
    assert r.standard_uncertainty == pytest.approx(expected * math.hypot(1e3 / 9.5e9, 0.0002 / 2.0036), rel=1e-3)


def test_iupac_nucleus_notes_and_no_codata_reference():
    m = NMRMeasurement.from_dict({"nucleus": "19F", "frequency": {"value_Hz": 60e6, "u_Hz": 0.1},
                                  "shielding": {"value": 1e-4, "u": 2e-6, "source": "calibration vs water sphere"}})
    b = m.to_budget()
    q = b.input("gamma_19F")
    assert q.reference is None
    assert "not a CODATA value" in q.note and "water sphere" in q.note
    assert "(1 - sigma_s)" in b.model.text()


def test_deuteron_is_derived_and_rebased_by_rederiving():
    d = {"nucleus": "deuteron", "frequency": {"value_Hz": 40e6, "u_Hz": 0.1}}
    b = NMRMeasurement.from_dict(d).to_budget()
    q = b.input("gamma_d")
    assert q.reference == "deuteron gyromag. ratio in MHz/T"
    assert "not a CODATA entry" in q.source and "mu_d/h" in q.source
    # compare under 2014 re-derives mu_d/h from that edition: equal to a direct evaluation under 2014
    r14 = evaluate(rebase(b, 2014))
    direct = NMRMeasurement.from_dict(dict(d, codata=2014)).evaluate()
    assert r14.estimate == pytest.approx(direct.estimate, rel=1e-15)
    assert r14.standard_uncertainty == pytest.approx(direct.standard_uncertainty, rel=1e-12)
    assert "not a CODATA entry" in rebase(b, 2014).input("gamma_d").source
    # independent: mu_d/h of each edition's tables (CODATA 2014: mu_d = 0.4330735040e-26 J/T,
    # h = 6.626070040e-34 J s; CODATA 2022: mu_d = 4.330735087e-27 J/T, h exact; values from memory)
    g14, g22 = 0.4330735040e-26 / 6.626070040e-34, 4.330735087e-27 / 6.62607015e-34
    assert r14.estimate / evaluate(b).estimate - 1 == pytest.approx(g22 / g14 - 1, rel=1e-6)
    assert r14.estimate / evaluate(b).estimate - 1 == pytest.approx(-5.75e-9, abs=0.01e-9)


def test_frequency_from_csv_column():
    m = NMRMeasurement.from_file(DATA / "low_field_47mT.json")
    q = m.to_budget().input("f_read")
    col = [2012345.71, 2012345.74, 2012345.69, 2012345.73, 2012345.72, 2012345.70]
    assert q.estimate == pytest.approx(np.mean(col), rel=1e-15)
    assert q.dof == 5


def test_drift_from_logged_readings():
    log = [63871224.30, 63871224.34, 63871224.31, 63871224.36, 63871224.33]
    m = meas(drift={"readings_Hz": log})
    q = m.to_budget().input("y_drift")
    assert q.standard_uncertainty == pytest.approx(np.std(log, ddof=1) / np.mean(log), rel=1e-12)
    m = meas(drift={"readings_Hz": log, "method": "allan"})
    y = np.array(log) / np.mean(log)
    assert m.to_budget().input("y_drift").standard_uncertainty == pytest.approx(
        math.sqrt(0.5 * np.mean(np.diff(y) ** 2)), rel=1e-12)


def test_description_round_trip_and_repr():
    m = meas()
    again = NMRMeasurement.from_dict(json.loads(json.dumps(m.to_dict())))
    assert again.to_budget().to_dict() == m.to_budget().to_dict()
    assert repr(m).startswith("<NMRMeasurement shielded-proton, f = 63871224.31")
    r = m.evaluate()
    assert repr(r).startswith("<NMRResult B0 = ")
    d = r.to_dict()
    assert d["value"] == r.estimate and isinstance(d["warnings"], list)
    json.dumps(d)
    assert "<table" in r._repr_html_()


def test_example_file_has_no_warnings():
    r = NMRMeasurement.from_file(DATA / "water_cylinder_1p5T.json").evaluate()
    # only the notes that the line noise is in the readings' scatter and that the detection method matters
    assert [w.code for w in r.nmr_warnings] == ["nmr.line_in_readings", "nmr.susceptibility_broadening"]
    assert r.estimate == pytest.approx(1.5001550, abs=1e-6)


# --- warnings at and only beyond their thresholds ------------------------------------------

def _simple(**kw):
    d = {"frequency": {"value_Hz": 63.87e6, "u_Hz": 0.01}}
    d.update(kw)
    # the assumed-temperature note of a water probe without a temperature is checked on its own
    return tuple(w for w in NMRMeasurement.from_dict(d).evaluate().nmr_warnings
                 if w.code != "nmr.temperature_assumed")


@pytest.mark.parametrize("t, warned", [(5.0, False), (45.0, False), (4.99, True), (45.01, True), (25.0, False)])
def test_temperature_validity_warning(t, warned):
    # Petley & Donaldson 1984: coefficient measured 5 to 45 degC
    w = _simple(sample={"temperature_C": t, "u_temperature_C": 0.1})
    assert any("outside 5 to 45 degC" in x for x in w) is warned


@pytest.mark.parametrize("f, warned", [(40e6, False), (90e6, False), (39.999999e6, True), (90.000001e6, True)])
def test_tuning_range_warning(f, warned):
    d = {"frequency": {"value_Hz": f, "u_Hz": 0.01}, "probe": {"tuning_range_Hz": [40e6, 90e6]}}
    w = NMRMeasurement.from_dict(d).evaluate().nmr_warnings
    assert any("tuning range" in x for x in w) is warned


@pytest.mark.parametrize("factor, warned", [(1.0, False), (0.5, False), (1.000001, True), (3.0, True)])
def test_gradient_broadening_warning(factor, warned):
    gamma = sc.value("shielded proton gyromag. ratio in MHz/T") * 1e6
    width, d = 2.0, 0.005
    g_max = width / (gamma * d)  # (gamma/2pi) G d = 1 x linewidth
    w = _simple(sample={"shape": "sphere", "diameter_m": d}, line={"fwhm_Hz": width},
                gradient_T_per_m=g_max * factor, offset_m=0.0, u_offset_m=1e-4)
    assert any("broadened beyond the usable limit" in x for x in w) is warned


def test_gradient_limit_uses_natural_width_and_ratio():
    gamma = sc.value("shielded proton gyromag. ratio in MHz/T") * 1e6
    g = 3.0 / (gamma * 0.005)  # spreads 3 Hz over 5 mm
    common = {"sample": {"diameter_m": 0.005}, "gradient_T_per_m": g, "offset_m": 0.0}
    assert _simple(line={"fwhm_Hz": 3.5, "natural_fwhm_Hz": 1.0}, **common)
    assert not _simple(line={"fwhm_Hz": 3.5, "natural_fwhm_Hz": 1.0, "max_broadening_ratio": 3.0}, **common)


@pytest.mark.parametrize("u_line, warned", [(0.99, False), (1.0, False), (1.01, True), (3.0, True)])
def test_low_field_limiting_warning(u_line, warned):
    # share of u_c^2 from counter resolution + line centre above 1/2; the reference value adds a tiny share,
    # so u_line = 1.0 Hz against u(f) = 1 Hz is just below the threshold
    d = {"frequency": {"value_Hz": 2e6, "u_Hz": 1.0}, "line": {"u_Hz": u_line}}
    w = NMRMeasurement.from_dict(d).evaluate().nmr_warnings
    assert any("low enough" in x for x in w) is warned


def test_warnings_reach_the_result_and_its_dict():
    r = NMRMeasurement.from_dict({"frequency": {"value_Hz": 63.87e6, "u_Hz": 0.01},
                                  "sample": {"temperature_C": 50.0}}).evaluate()
    assert r.nmr_warnings and r.nmr_warnings[0] in r.warnings
    assert r.nmr_warnings[0] in r.to_dict()["warnings"]
    assert "warning: the sample temperature 50 degC" in r.report()


# --- errors name the JSON pointer -------------------------------------------------------

@pytest.mark.parametrize("change, pointer", [
    ({"nucleus": "8Li"}, "#/nucleus"),
    ({"codata": 2010}, "#/codata"),
    ({"colour": "blue"}, "#/colour"),
    ({"frequency": None}, "#/frequency"),
    ({"frequency": {"readings_Hz": READINGS, "u_Hz": 0.1}}, "#/frequency/u_Hz"),
    ({"frequency": {"value_Hz": -5.0, "u_Hz": 0.1}}, "#/frequency/value_Hz"),
    ({"frequency": {"readings_Hz": [1.0, "x"]}}, "#/frequency/readings_Hz/1"),
    ({"sample": {"shape": "cylinder", "length_over_diameter": 2}}, "#/sample/axis"),
    ({"sample": {"shape": "cube"}}, "#/sample/shape"),
    ({"sample": {"size": 3}}, "#/sample/size"),
    ({"offset_m": [0.0, 0.0]}, "#/offset_m"),
    ({"timebase": {"ageing_per_day": 1e-10}}, "#/timebase/days_since_calibration"),
    ({"line": {"fwhm_Hz": 2.0, "snr": 10}}, "#/line/points_per_fwhm"),
    ({"g_factor": {"value": 2.0}}, "#/g_factor"),
    ({"probe": {"tuning_range_Hz": [9e7, 4e7]}}, "#/probe/tuning_range_Hz"),
])
def test_errors_carry_the_pointer(change, pointer):
    with pytest.raises(BudgetFileError) as info:
        meas(**change)
    assert info.value.pointer == pointer
    assert str(info.value).startswith(f"measurement, at {pointer}: ")


def test_non_water_nucleus_needs_a_susceptibility_for_a_cylinder():
    with pytest.raises(BudgetFileError) as info:
        NMRMeasurement.from_dict({"nucleus": "shielded-helion", "frequency": {"value_Hz": 40e6, "u_Hz": 0.1},
                                  "sample": {"shape": "long-cylinder", "axis": "parallel"}})
    assert info.value.pointer == "#/sample/susceptibility"


def test_bad_json_file(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text('{"nucleus": "proton",', encoding="utf-8")
    with pytest.raises(BudgetFileError) as info:
        NMRMeasurement.from_file(p)
    assert "is not valid JSON" in str(info.value)
    with pytest.raises(BudgetFileError):
        NMRMeasurement.from_file(tmp_path / "missing.json")


def test_measurement_is_immutable_and_hashable():
    a = NMRMeasurement.from_file(DATA / "low_field_47mT.json")
    b = NMRMeasurement.from_file(DATA / "low_field_47mT.json")
    assert a == b and hash(a) == hash(b)
    with pytest.raises(TypeError):
        a.description["nucleus"] = "proton"


def test_monte_carlo_validates_the_example_budget():
    # JCGM 101:2008 clause 8: GUM interval validated by Monte Carlo (engine's validation, fixed seed)
    from fieldbudget.engine import validation

    budget = NMRMeasurement.from_file(DATA / "water_cylinder_1p5T.json").to_budget()
    mc, check = validation.validate_adaptive(evaluate(budget), budget, seed=20261202)
    assert check.to_dict()["validated"] is True and mc.adaptive


def test_temperature_of_a_non_water_probe_is_noted_not_applied():
    m = NMRMeasurement.from_dict({"nucleus": "shielded-helion", "frequency": {"value_Hz": 40e6, "u_Hz": 0.1},
                                  "sample": {"temperature_C": 30.0}})
    b = m.to_budget()
    assert "t_s" not in b.symbols
    assert "no temperature term" in b.input("gamma_h_sh").note


def test_measurement_and_result_pickle_and_copy():
    import pickle

    m = NMRMeasurement.from_file(DATA / "water_cylinder_1p5T.json")
    assert pickle.loads(pickle.dumps(m)) == m
    assert copy.deepcopy(m) == m
    assert pickle.loads(pickle.dumps(m)).to_budget().to_dict() == m.to_budget().to_dict()


def test_drift_allan_deviation_at_the_measurement_interval():
    # non-overlapping Allan deviation of block means (IEEE Std 1139 definition, from memory), computed here
    log = [63871224.30, 63871224.34, 63871224.31, 63871224.36, 63871224.33, 63871224.29, 63871224.35,
           63871224.32, 63871224.37]
    q = meas(drift={"readings_Hz": log, "method": "allan", "readings_per_interval": 3}).to_budget().input("y_drift")
    y = np.array(log) / np.mean(log)
    blocks = y.reshape(3, 3).mean(axis=1)
    assert q.standard_uncertainty == pytest.approx(math.sqrt(0.5 * np.mean(np.diff(blocks) ** 2)), rel=1e-12)
    with pytest.raises(BudgetFileError) as info:
        meas(drift={"readings_Hz": log, "method": "allan", "readings_per_interval": 4})
    assert info.value.pointer == "#/drift/readings_per_interval"
