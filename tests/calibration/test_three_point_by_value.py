"""A three-point calibration by value references (invented data), recomputed independently with numpy/scipy.

Independent checks:
* the error of each point and its standard uncertainty by the law of propagation for a linear model
  (JCGM 100:2008 5.1.2, eq. (10)), with the shared zero offset as the only covariance between points
  (JCGM 100:2008 5.2.2, eq. (13) / F.1.2.3);
* Type A: mean and s/sqrt(n) with n - 1 degrees of freedom (JCGM 100:2008 4.2.2-4.2.3); resolution:
  rectangular of half-width half a digit, u = d / (2 sqrt 3) (JCGM 100:2008 F.2.2.1);
* Welch-Satterthwaite (JCGM 100:2008 G.4.1, eq. (G.2b)) and k = t_p(nu_eff) with nu_eff truncated
  (G.4.1 note, G.6.4), scipy.stats.t;
* the straight line by generalised least squares, a = (X^T V^-1 X)^-1 X^T V^-1 y (common practice,
  e.g. JCGM 100:2008 H.3 for the unweighted case), numpy.linalg;
* p_c = F_t(T_U) - F_t(T_L) with the scaled and shifted t (JCGM 106:2012 7.3, from memory), scipy.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.stats

from fieldbudget.files.calibration_file import CalibrationFile

REFS = [(0.2000004, 6e-7, 40), (0.8000013, 1.2e-6, 25), (1.4000021, 1.9e-6, 60)]  # value_T, u_T, dof
READINGS = [[0.20012, 0.20014, 0.20013, 0.20015, 0.20012],
            [0.80041, 0.80044, 0.80042, 0.80040, 0.80043],
            [1.40073, 1.40069, 1.40072, 1.40074, 1.40071]]
RES, Z0, UZ = 1e-5, 2e-6, 3e-6
TOL_REL, TOL_ABS = 5e-4, 2e-5


def _file(**extra):
    d = {
        "format": "fieldbudget-calibration/1",
        "certificate_id": "TEST-3P",
        "points": [{"id": f"Q{i + 1}", "reference": {"value_T": v, "u_T": u, "dof": nu}, "readings_T": r}
                   for i, ((v, u, nu), r) in enumerate(zip(REFS, READINGS))],
        "resolution_T": RES,
        "zero_offset": {"value_T": Z0, "u_T": UZ},
        "curve": {"form": "error", "degree": 1},
        "tolerance": {"relative": TOL_REL, "absolute_T": TOL_ABS, "source": "invented specification"},
        "decision_rule": {"rule": "simple acceptance"},
    }
    d.update(extra)
    return CalibrationFile.from_dict(d, where="three-point test")


def _independent():
    n = len(READINGS[0])
    r = np.array(READINGS)
    mean, s = r.mean(axis=1), r.std(axis=1, ddof=1)
    u_a = s / math.sqrt(n)
    u_res = RES / (2 * math.sqrt(3))
    b = np.array([v for v, _, _ in REFS])
    u_b = np.array([u for _, u, _ in REFS])
    nu_b = np.array([nu for _, _, nu in REFS])
    err = mean - Z0 - b
    var = u_a**2 + u_res**2 + UZ**2 + u_b**2
    cov = np.full((3, 3), UZ**2)
    np.fill_diagonal(cov, var)
    nu = var**2 / (u_a**4 / (n - 1) + u_b**4 / nu_b)
    # p = 0.9545 is the conventional "k = 2" probability erf(2/sqrt 2) (JCGM 100:2008 Table G.2)
    p = math.erf(2 / math.sqrt(2))
    k = scipy.stats.t.ppf((1 + p) / 2, np.floor(nu))
    return mean, err, np.sqrt(var), cov, nu, k


def test_errors_uncertainties_and_covariance():
    out = _file().evaluate()
    mean, err, u, cov, nu, k = _independent()
    pts = out.to_dict()["points"]
    assert [p["propagation"] for p in pts] == ["gum"] * 3
    for i, p in enumerate(pts):
        assert p["indication_T"] == pytest.approx(mean[i], rel=1e-15)
        assert p["error_T"] == pytest.approx(err[i], rel=1e-9, abs=1e-15)
        assert p["u_T"] == pytest.approx(u[i], rel=1e-12)
        assert p["dof"] == pytest.approx(nu[i], rel=1e-9)
        assert p["k"] == pytest.approx(k[i], rel=1e-9)
        assert p["U_T"] == pytest.approx(k[i] * u[i], rel=1e-9)
        assert p["validated"] is None
    assert np.allclose(out.calibration.covariance, cov, rtol=1e-12, atol=0)
    r = np.array(out.to_dict()["correlation"])
    assert np.allclose(r, cov / np.outer(u, u), rtol=1e-12)


def test_straight_line_by_generalised_least_squares():
    out = _file().evaluate()
    mean, err, _, cov, _, _ = _independent()
    x0 = mean.mean()
    x = np.column_stack([np.ones(3), mean - x0])
    vi = np.linalg.inv(cov)
    va = np.linalg.inv(x.T @ vi @ x)
    a = va @ x.T @ vi @ err
    res = err - x @ a
    chi2 = float(res @ vi @ res)
    c = out.to_dict()["curve"]
    assert c["form"] == "error" and c["degree"] == 1 and c["x0"] == pytest.approx(x0, rel=1e-15)
    assert np.allclose(c["coefficients"], a, rtol=1e-8, atol=1e-15)
    assert np.allclose(c["covariance"], va, rtol=1e-8, atol=0)
    assert c["chi2"] == pytest.approx(chi2, rel=1e-6)
    assert c["birge_ratio"] == pytest.approx(math.sqrt(chi2 / 1), rel=1e-6)


def test_conformity_by_simple_acceptance_with_t():
    out = _file().evaluate()
    _, err, u, _, nu, _ = _independent()
    for i, c in enumerate(out.to_dict()["conformity"]):
        half = TOL_REL * REFS[i][0] + TOL_ABS
        d = scipy.stats.t(df=nu[i], loc=err[i], scale=u[i])
        assert c["p_c"] == pytest.approx(d.cdf(half) - d.cdf(-half), rel=1e-9)
        assert c["rule"] == "simple acceptance"
        assert c["decision"] == ("accept" if abs(err[i]) <= half else "reject")


def test_json_keys_are_the_documented_ones():
    d = _file().evaluate().to_dict()
    assert set(d) >= {"points", "correlation", "curve", "conformity", "warnings"}
    assert set(d["points"][0]) >= {"id", "reference_T", "indication_T", "error_T", "u_T", "dof", "U_T", "k",
                                   "coverage_probability", "propagation", "validated"}
    assert set(d["curve"]) >= {"form", "degree", "coefficients", "covariance", "chi2", "birge_ratio"}
    assert set(d["conformity"][0]) >= {"point", "rule", "decision", "p_c"}
