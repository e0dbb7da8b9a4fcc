"""JCGM 100:2008 (GUM), Annex H.2: simultaneous measurement of resistance and reactance.

Table H.2 data and Table H.3 results (recalled from memory
there and reproduced by an independent calculation): the correlations of the means come from the
simultaneous readings (GUM 5.2.3, eq. 17).
"""

from __future__ import annotations

import numpy as np
import pytest

from fieldbudget.engine import Budget, InputQuantity, Measurand, Model, evaluate

V = [5.007, 4.994, 5.005, 4.990, 4.999]
I = [19.663e-3, 19.639e-3, 19.640e-3, 19.685e-3, 19.678e-3]
PHI = [1.0456, 1.0438, 1.0468, 1.0428, 1.0433]


def _budget(readings_evaluation: str = "per_set") -> Budget:
    return Budget(readings_evaluation=readings_evaluation,
        model=Model.from_expressions({"R": "V/I*cos(phi)", "X": "V/I*sin(phi)", "Z": "V/I"}),
        measurands=(Measurand("R", "ohm"), Measurand("X", "ohm"), Measurand("Z", "ohm")),
        inputs=(InputQuantity.from_readings("V", V, unit="V"), InputQuantity.from_readings("I", I, unit="A"),
                InputQuantity.from_readings("phi", PHI, unit="rad")),
        simultaneous=(("V", "I", "phi"),),
    )


def test_input_correlations_from_simultaneous_readings():
    r = _budget().correlation_matrix()
    # GUM H.2.2: r(V,I) = -0.36, r(V,phi) = 0.86, r(I,phi) = -0.65
    assert round(r[0, 1], 2) == -0.36
    assert round(r[0, 2], 2) == 0.86
    assert round(r[1, 2], 2) == -0.65


def test_table_h3_values_and_uncertainties():
    res = evaluate(_budget())
    R, X, Z = res["R"], res["X"], res["Z"]
    # Table H.3: 127.732(71), 219.847(295), 254.260(236) ohm.  u(X) recomputes as 0.29558 ohm
    # (recomputed here), one unit of the last printed digit from 0.295: checked to that unit.
    assert round(R.estimate, 3) == 127.732 and round(R.standard_uncertainty, 3) == 0.071
    assert round(X.estimate, 3) == 219.847 and abs(X.standard_uncertainty - 0.295) <= 0.001
    assert round(Z.estimate, 3) == 254.260 and round(Z.standard_uncertainty, 3) == 0.236


def test_table_h3_output_correlations():
    c = evaluate(_budget()).correlation
    # Table H.3: r(R,X) = -0.588, r(R,Z) = -0.485, r(X,Z) = 0.993
    assert round(c[0, 1], 3) == -0.588
    assert round(c[0, 2], 3) == -0.485
    assert round(c[1, 2], 3) == 0.993


def test_ignoring_the_correlations_gives_a_different_answer():
    # the near miss: without eq. (17) u(R) is not 0.071 ohm
    b = _budget().replace(simultaneous=())
    assert round(evaluate(b)["R"].standard_uncertainty, 3) != 0.071


def test_first_approach_agrees_with_numpy_covariance_of_the_means():
    # H.2.3, first approach: numpy's covariance of the readings divided by n, propagated with hand derivatives
    data = np.array([V, I, PHI])
    cov = np.cov(data) / data.shape[1]
    v, i, p = data.mean(axis=1)
    J = np.array([[np.cos(p) / i, -v * np.cos(p) / i**2, -v * np.sin(p) / i]])
    r = evaluate(_budget("propagation"))["R"]
    assert r.standard_uncertainty == pytest.approx(float(np.sqrt((J @ cov @ J.T)[0, 0])), rel=1e-10)
    # one set of simultaneous readings: the generalised Welch-Satterthwaite gives exactly n - 1
    assert r.dof_method == "welch_satterthwaite_correlated" and r.effective_dof == pytest.approx(4.0, rel=1e-9)


def test_second_approach_is_the_default_and_agrees_with_numpy():
    # H.2.4, second approach: R computed for each of the 5 sets, then mean and s/sqrt(5) with 4 degrees of freedom
    Rk = np.array(V) / np.array(I) * np.cos(PHI)
    res = evaluate(_budget())
    r = res["R"]
    assert r.dof_method == "type_a_per_set" and r.readings_sets == 5 and r.effective_dof == 4
    assert r.estimate == pytest.approx(Rk.mean(), rel=1e-12)
    assert r.standard_uncertainty == pytest.approx(Rk.std(ddof=1) / np.sqrt(5), rel=1e-10)
    assert "second approach" in r.statement() and r.to_dict()["dof_method"] == "type_a_per_set"
    # the outputs' covariance is that of the per-set values divided by n
    Y = np.array([Rk, np.array(V) / np.array(I) * np.sin(PHI), np.array(V) / np.array(I)])
    assert np.allclose(res.covariance, np.cov(Y) / 5, rtol=1e-10, atol=0)
