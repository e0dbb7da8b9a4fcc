"""Calibration curves: least squares checked against numpy's own least squares.

The data are invented (teslameter HX-400 of the invented demo lab).  The
independent answer is computed with ``numpy.linalg.lstsq`` on the whitened
system ``L^-1 X a = L^-1 y`` (L the Cholesky factor of V(y), from
``numpy.linalg.cholesky``), with ``V(a) = (X^T V^-1 X)^-1`` from
``numpy.linalg.inv`` (Aitken's generalised least squares; common practice).
"""

from __future__ import annotations

import dataclasses
import json
import math
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.calibration import CalibrationRangeWarning, fit_polynomial
from fieldbudget.errors import InputError


def _numpy_gls(x, y, degree, v, x0=0.0):
    """Independent GLS with numpy only."""
    X = np.vander(np.asarray(x) - x0, degree + 1, increasing=True)
    L = np.linalg.cholesky(np.asarray(v))
    Xw = np.linalg.solve(L, X)
    yw = np.linalg.solve(L, np.asarray(y))
    a, *_ = np.linalg.lstsq(Xw, yw, rcond=None)
    cov = np.linalg.inv(X.T @ np.linalg.inv(v) @ X)
    return a, cov


# invented five-point calibration: indication (T) and error E (T), correlated through a shared term
X5 = [0.1, 0.5, 1.0, 1.5, 2.0]
Y5 = [1.2e-5, 6.1e-5, 1.19e-4, 1.83e-4, 2.38e-4]
U5 = np.array([3e-6, 4e-6, 6e-6, 8e-6, 1.1e-5])
R_SHARED = 0.6
V5 = np.diag(U5**2) * (1 - R_SHARED) + R_SHARED * np.outer(U5, U5)


def test_two_point_line_through_both_points():
    # invented two-point calibration; exact line through the points, and lstsq gives the same
    x, y, u = [0.5, 1.5], [6.0e-5, 1.9e-4], [4e-6, 8e-6]
    fit = fit_polynomial(x, y, 1, u_y=u)
    a, cov = _numpy_gls(x, y, 1, np.diag(np.square(u)))
    np.testing.assert_allclose(fit.coefficients, a, rtol=1e-12)
    np.testing.assert_allclose(fit.covariance_matrix, cov, rtol=1e-10)
    assert fit.dof == 0 and fit.chi_square is None and fit.birge_ratio is None
    assert max(abs(r) for r in fit.residuals) < 1e-18
    assert any("passes through every point" in w for w in fit.warnings)
    # slope by hand: (1.9e-4 - 6.0e-5) / (1.5 - 0.5)
    assert fit.coefficients[1] == pytest.approx(1.3e-4, rel=1e-12)


@pytest.mark.parametrize("degree", [1, 2])
def test_five_point_generalised_least_squares(degree):
    fit = fit_polynomial(X5, Y5, degree, covariance=V5)
    a, cov = _numpy_gls(X5, Y5, degree, V5)
    np.testing.assert_allclose(fit.coefficients, a, rtol=1e-10)
    np.testing.assert_allclose(fit.covariance_matrix, cov, rtol=1e-9)
    assert fit.method == "generalised" and fit.dof == 5 - (degree + 1)
    r = np.asarray(Y5) - np.vander(X5, degree + 1, increasing=True) @ a
    chi2 = float(r @ np.linalg.solve(V5, r))
    assert fit.chi_square == pytest.approx(chi2, rel=1e-9)
    assert fit.birge_ratio == pytest.approx(math.sqrt(chi2 / fit.dof), rel=1e-9)


def test_correlation_changes_the_fit():
    # the covariance is used, not just the variances: a fit with only u_y differs
    gls = fit_polynomial(X5, Y5, 1, covariance=V5)
    wls = fit_polynomial(X5, Y5, 1, u_y=U5)
    a, _ = _numpy_gls(X5, Y5, 1, np.diag(U5**2))
    np.testing.assert_allclose(wls.coefficients, a, rtol=1e-10)
    assert abs(gls.standard_uncertainties[0] - wls.standard_uncertainties[0]) > 1e-7


def test_prediction_inside_and_outside_range():
    fit = fit_polynomial(X5, Y5, 1, covariance=V5)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        p = fit.predict(1.2)
    g = np.array([1.0, 1.2])
    assert p.value == pytest.approx(g @ fit.coefficient_array, rel=1e-12)
    assert p.standard_uncertainty == pytest.approx(math.sqrt(g @ fit.covariance_matrix @ g), rel=1e-12)
    assert p.inside_range
    with pytest.warns(CalibrationRangeWarning, match="outside the calibrated range"):
        q = fit.predict(2.5, u_extra=1e-6)
    assert not q.inside_range and q.warnings
    assert q.standard_uncertainty == pytest.approx(math.hypot(q.uncertainty_from_curve, 1e-6))


def test_scaling_by_birge_ratio():
    v = np.diag((U5 / 10) ** 2)  # uncertainties far too small: R_B >> 1
    plain = fit_polynomial(X5, Y5, 1, covariance=v)
    scaled = fit_polynomial(X5, Y5, 1, covariance=v, scale="birge")
    assert plain.birge_ratio > 1 and any("scatter more" in w for w in plain.warnings)
    np.testing.assert_allclose(scaled.covariance_matrix, plain.covariance_matrix * plain.birge_ratio**2, rtol=1e-12)
    assert scaled.scaled and not plain.scaled


# -- bad input ---------------------------------------------------------------------------------------
def test_fewer_points_than_coefficients():
    with pytest.raises(InputError) as e:
        fit_polynomial([0.5, 1.0], [1e-5, 2e-5], 2, u_y=[1e-6, 1e-6])
    assert e.value.field == "points" and "at least 3" in str(e.value)


def test_ordinary_fit_needs_spare_points():
    with pytest.raises(InputError, match="more than 2 when no uncertainties"):
        fit_polynomial([0.5, 1.0], [1e-5, 2e-5], 1)


def test_duplicate_x_refused():
    with pytest.raises(InputError) as e:
        fit_polynomial([0.5, 1.0, 1.0], [1e-5, 2e-5, 2.1e-5], 1)
    assert e.value.field == "x" and "points [1, 2]" in str(e.value)
    # allowed on request, but still needs enough distinct x
    fit_polynomial([0.5, 1.0, 1.0], [1e-5, 2e-5, 2.1e-5], 1, allow_repeated_x=True)
    with pytest.raises(InputError, match="distinct x"):
        fit_polynomial([1.0, 1.0, 1.0], [1e-5, 2e-5, 2.1e-5], 1, allow_repeated_x=True)


@pytest.mark.parametrize("kw, field", [
    ({"u_y": [1e-6, 0.0, 1e-6]}, "u_y"),
    ({"u_y": [1e-6, 1e-6]}, "u_y"),
    ({"covariance": [[1, 2, 0], [2, 1, 0], [0, 0, 1]]}, "covariance"),
    ({"covariance": [[1, 0.5, 0], [0, 1, 0], [0, 0, 1]]}, "covariance"),
    ({"x0": "middle"}, "x0"),
    ({"scale": "sometimes"}, "scale"),
])
def test_bad_weights(kw, field):
    with pytest.raises(InputError) as e:
        fit_polynomial([0.5, 1.0, 1.5], [1e-5, 2e-5, 3.1e-5], 1, **kw)
    assert e.value.field == field


def test_bad_vectors_and_degree():
    with pytest.raises(InputError, match="degree"):
        fit_polynomial([0.5, 1.0, 1.5], [1, 2, 3], -1)
    with pytest.raises(InputError) as e:
        fit_polynomial([0.5, float("nan"), 1.5], [1, 2, 3], 1)
    assert e.value.field == "x"
    with pytest.raises(InputError) as e:
        fit_polynomial([0.5, 1.0, 1.5], [1, 2], 1)
    assert e.value.field == "y"


# -- forms -----------------------------------------------------------------------------------------
def test_repr_html_dict():
    fit = fit_polynomial(X5, Y5, 1, covariance=V5, x_unit="T", y_unit="<b>&")
    assert "\n" not in repr(fit) and repr(fit).startswith("<CurveFit degree 1")
    html = fit._repr_html_()
    assert "&lt;b&gt;&amp;" in html and "<b>&" not in html
    d = json.loads(json.dumps(fit.to_dict()))
    assert d["method"] == "generalised" and len(d["points"]) == 5
    with pytest.raises(dataclasses.FrozenInstanceError):
        fit.degree = 2  # frozen


# -- properties ------------------------------------------------------------------------------------
_xs = st.lists(st.floats(-10, 10, allow_nan=False), min_size=4, max_size=9, unique=True).filter(
    lambda v: min(abs(a - b) for i, a in enumerate(v) for b in v[i + 1:]) > 1e-2)


@settings(max_examples=40, deadline=None)
@given(_xs, st.integers(0, 2), st.floats(0.1, 10))
def test_gls_with_identity_covariance_equals_ols(xs, degree, sigma):
    # Invariant (common practice): GLS with V = sigma^2 I gives the OLS coefficients, and its covariance
    # sigma^2 (X^T X)^-1 equals the ordinary fit's once that is rescaled by (sigma / s)^2.
    rng = np.random.default_rng(len(xs) + degree)
    y = rng.normal(size=len(xs))
    ols = fit_polynomial(xs, y, degree)
    gls = fit_polynomial(xs, y, degree, covariance=np.eye(len(xs)) * sigma**2)
    ref, *_ = np.linalg.lstsq(np.vander(xs, degree + 1, increasing=True), y, rcond=None)
    np.testing.assert_allclose(gls.coefficients, ols.coefficients, rtol=1e-7, atol=1e-9)
    np.testing.assert_allclose(ols.coefficients, ref, rtol=1e-7, atol=1e-9)
    s = ols.residual_standard_deviation
    if s > 1e-6:
        np.testing.assert_allclose(gls.covariance_matrix, ols.covariance_matrix * (sigma / s) ** 2,
                                   rtol=1e-6, atol=1e-12)


@settings(max_examples=30, deadline=None)
@given(_xs, st.integers(1, 2), st.floats(-5, 5, allow_nan=False))
def test_recentring_keeps_the_curve(xs, degree, x0):
    rng = np.random.default_rng(7)
    y = rng.normal(size=len(xs))
    a = fit_polynomial(xs, y, degree)
    b = a.recentred(x0)
    c = fit_polynomial(xs, y, degree, x0=x0)
    np.testing.assert_allclose(b.coefficients, c.coefficients, rtol=1e-6, atol=1e-9)
    for x in (min(xs), max(xs)):
        assert b.value_at(x) == pytest.approx(a.value_at(x), rel=1e-9, abs=1e-9)
        pa, pb = a.predict(x), b.predict(x)
        assert pb.standard_uncertainty == pytest.approx(pa.standard_uncertainty, rel=1e-6, abs=1e-12)
