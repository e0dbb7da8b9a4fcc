"""Field maps fitted to solid harmonics: recovery of known coefficients, exact gradients, flags, averages, errors.

Synthetic maps are built from known harmonic coefficients.  Tolerances: each
recovered coefficient's z-score (c_fit - c_true)/u is standard normal when
the covariance is right, so over many seeds their standard deviation is 1
within about 1/sqrt(2 N) (common practice).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.errors import BudgetFileError, InputError
from fieldbudget.nmr import physics
from fieldbudget.nmr.fieldmap import FieldMap, _poly_deriv, fit_map, harmonic_terms, read_map


def grid(n=800, half=0.02, seed=0):
    return np.random.default_rng(seed).uniform(-half, half, (n, 3))


def field_from(coeffs, xyz, order, basis="cartesian"):
    terms = harmonic_terms(order, basis)
    return sum(c * t.evaluate(*xyz.T) for c, t in zip(coeffs, terms))


TRUE4 = np.zeros(25)
TRUE4[[0, 1, 2, 3, 4, 5, 7, 9, 16, 24]] = [1.2, 3e-4, 2e-5, -1e-5, 0.6, 0.03, -0.02, 4.0, -300.0, 50.0]


@pytest.mark.parametrize("order", range(0, 7))
def test_basis_is_harmonic_with_2l_plus_1_terms_per_order(order):
    terms = harmonic_terms(order)
    assert len(terms) == (order + 1) ** 2
    for l in range(order + 1):
        assert sum(t.l == l for t in terms) == 2 * l + 1
    for t in terms:  # Laplace's equation, exactly (rational coefficients)
        lap: dict = {}
        for ax in range(3):
            for mono, c in _poly_deriv(_poly_deriv(t.poly, ax), ax):
                lap[mono] = lap.get(mono, 0) + c
        assert all(v == 0 for v in lap.values()), t.label
        assert all(isinstance(c, (int, Fraction)) for _, c in t.poly)


def test_low_order_terms_are_the_usual_cartesian_harmonics():
    labels = [t.label for t in harmonic_terms(2)]
    assert labels == ["1", "z", "x", "y", "z^2 - 1/2 x^2 - 1/2 y^2", "x z", "y z", "x^2 - y^2", "x y"]
    cyl = [t.label for t in harmonic_terms(2, "cylindrical")]
    assert cyl[4] == "z^2 - 1/2 rho^2" and cyl[8] == "rho^2 sin(2 phi)"


def test_known_coefficients_with_noise_are_recovered_within_their_uncertainties():
    z = []
    for seed in range(40):
        xyz = grid(seed=seed)
        b = field_from(TRUE4, xyz, 4) + np.random.default_rng(1000 + seed).normal(0, 2e-8, len(xyz))
        fit = fit_map(FieldMap(xyz, b, np.full(len(xyz), 2e-8)), 4)
        assert fit.representable
        z.append((np.array(fit.coefficients) - TRUE4) / np.sqrt(np.diag(fit.covariance)))
    z = np.array(z)
    assert np.all(np.abs(z) < 5)
    assert float(np.std(z)) == pytest.approx(1.0, abs=3 / math.sqrt(2 * z.size))
    assert abs(float(np.mean(z))) < 3 / math.sqrt(z.size)


def test_pure_gradient_without_noise_is_recovered_exactly():
    xyz = grid(200)
    g = (1.5e-5, -2.5e-5, 3.0e-4)
    b = 0.75 + xyz @ np.array(g)
    fit = fit_map(FieldMap(xyz, b), 2)
    assert fit.b0_t == pytest.approx(0.75, rel=1e-14)
    assert fit.gradient_t_per_m == pytest.approx(g, rel=1e-9)
    assert fit.d2b_dz2_t_per_m2 == pytest.approx(0.0, abs=1e-9)
    assert fit.residual_rms_t < 1e-15


def test_derived_quantities_match_the_coefficients():
    xyz = grid()
    fit = fit_map(FieldMap(xyz, field_from(TRUE4, xyz, 4)), 4)
    assert fit.b0_t == pytest.approx(1.2, rel=1e-12)
    assert fit.gradient_t_per_m == pytest.approx((2e-5, -1e-5, 3e-4), rel=1e-6)
    # d2B/dz2 = 2 x coefficient of z^2 - rho^2/2; the Hessian is traceless (Laplace)
    assert fit.d2b_dz2_t_per_m2 == pytest.approx(1.2, rel=1e-9)
    h = np.array(fit.hessian_t_per_m2)
    assert np.trace(h) == pytest.approx(0.0, abs=1e-9)
    assert h[0, 2] == pytest.approx(0.03, rel=1e-9)


def test_non_harmonic_field_is_flagged():
    xyz = grid(seed=5)
    u = np.full(len(xyz), 1e-8)
    b = 1.0 + 2.0 * xyz[:, 2] ** 2 + np.random.default_rng(5).normal(0, 1e-8, len(xyz))  # Laplacian 4, not 0
    for order in (2, 4, 6):
        fit = fit_map(FieldMap(xyz, b, u), order)
        assert not fit.representable
        assert [w.code for w in fit.warnings] == ["map.not_representable"]
        assert fit.warnings[0].severity == "invalid"


def test_order_too_low_for_a_harmonic_field_is_flagged_and_enough_is_not():
    xyz = grid(seed=6)
    u = np.full(len(xyz), 1e-8)
    b = field_from(TRUE4, xyz, 4) + np.random.default_rng(6).normal(0, 1e-8, len(xyz))
    assert not fit_map(FieldMap(xyz, b, u), 3).representable
    assert fit_map(FieldMap(xyz, b, u), 4).representable


def test_sphere_average_is_the_centre_value_and_cylinder_matches_the_closed_form():
    xyz = grid()
    fit = fit_map(FieldMap(xyz, field_from(TRUE4[:9], xyz, 2)), 2)
    centre = (0.002, -0.001, 0.003)
    # mean-value theorem of harmonic functions (any sphere inside the region)
    assert fit.average("sphere", 0.008, centre_m=centre)[0] == pytest.approx(fit.value_at(centre)[0], rel=1e-14)
    # axisymmetric second order over a cylinder along z: b2 (L^2/12 - R^2/4) (physics.curvature_mean_square_m2)
    q = physics.curvature_mean_square_m2("cylinder", 0.004, 0.008, "parallel", "harmonic")
    mean = fit.average("cylinder", 0.004, 0.008, axis="z")[0]
    assert mean - fit.b0_t == pytest.approx(0.6 * q, rel=1e-9)


def test_homogeneity_of_a_pure_second_order_field():
    # B = B0 + b2 (z^2 - rho^2/2): on a sphere of radius a the extremes are b2 a^2 (poles) and -b2 a^2/2 (equator);
    # rms over the ball: b2 sqrt(<(z^2 - rho^2/2)^2>) = b2 a^2 sqrt(1/5 * 1/ ... ) checked numerically below
    xyz = grid(seed=2)
    b0, b2, a = 1.0, 0.5, 0.01
    fit = fit_map(FieldMap(xyz, b0 + b2 * (xyz[:, 2] ** 2 - (xyz[:, 0] ** 2 + xyz[:, 1] ** 2) / 2)), 2,
                  region={"shape": "sphere", "diameter_m": 2 * a})
    assert fit.homogeneity.peak_to_peak_ppm == pytest.approx(1.5 * b2 * a * a / b0 * 1e6, rel=1e-3)
    pts = np.random.default_rng(9).normal(size=(400_000, 3))
    pts *= (a * np.random.default_rng(10).uniform(size=400_000) ** (1 / 3) / np.linalg.norm(pts, axis=1))[:, None]
    vals = b2 * (pts[:, 2] ** 2 - (pts[:, 0] ** 2 + pts[:, 1] ** 2) / 2)
    # Monte Carlo over the ball: relative standard error of an rms from 4e5 points ~ 0.2 %
    assert fit.homogeneity.rms_ppm == pytest.approx(np.std(vals) / b0 * 1e6, rel=0.01)
    assert fit.homogeneity.to_dict()["shape"] == "sphere"


def test_planar_map_cannot_determine_the_expansion():
    xyz = grid()
    xyz[:, 2] = 0.0
    with pytest.raises(InputError, match="cannot tell"):
        fit_map(FieldMap(xyz, np.ones(len(xyz))), 2)


def test_too_few_points_for_the_order():
    xyz = grid(9)
    with pytest.raises(InputError, match="order"):
        fit_map(FieldMap(xyz, np.ones(9)), 2)


def test_without_u_the_covariance_comes_from_the_residuals():
    xyz = grid(seed=3)
    b = field_from(TRUE4[:9], xyz, 2) + np.random.default_rng(3).normal(0, 1e-7, len(xyz))
    fit = fit_map(FieldMap(xyz, b), 2)
    assert fit.chi2_reduced is None and [w.code for w in fit.warnings] == ["map.no_u"]
    assert fit.u_b0_t == pytest.approx(1e-7 / math.sqrt(len(xyz)), rel=0.3)


def test_about_point_moves_the_reference():
    xyz = grid()
    b = 0.5 + 2e-4 * xyz[:, 2] + 0.3 * (xyz[:, 2] ** 2 - (xyz[:, 0] ** 2 + xyz[:, 1] ** 2) / 2)
    fit = fit_map(FieldMap(xyz, b), 2, about_m=(0.0, 0.0, 0.01))
    assert fit.b0_t == pytest.approx(0.5 + 2e-6 + 0.3e-4, rel=1e-12)
    assert fit.gradient_t_per_m[2] == pytest.approx(2e-4 + 0.6 * 0.01, rel=1e-9)


def test_cylindrical_basis_gives_the_same_field():
    xyz = grid()
    b = field_from(TRUE4, xyz, 4)
    a, c = fit_map(FieldMap(xyz, b), 4), fit_map(FieldMap(xyz, b), 4, basis="cylindrical")
    assert c.gradient_t_per_m == pytest.approx(a.gradient_t_per_m, rel=1e-9)
    assert c.evaluate(xyz[:5]) == pytest.approx(a.evaluate(xyz[:5]), rel=1e-13)


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(-1.0, 1.0), min_size=16, max_size=16), st.integers(0, 2**31))
def test_any_harmonic_field_without_noise_is_recovered(coeffs, seed):
    xyz = grid(120, half=1.0, seed=seed)
    b = field_from(coeffs, xyz, 3)
    fit = fit_map(FieldMap(xyz, b), 3)
    assert np.allclose(fit.coefficients, coeffs, atol=1e-9)


def test_read_map_b_and_f_columns(tmp_path):
    xyz = grid(60)
    b = 1.0 + 1e-4 * xyz[:, 2]
    p = tmp_path / "m.csv"
    p.write_text("x_m,y_m,z_m,B_T,u_B_T\n" + "".join(f"{x!r},{y!r},{z!r},{v!r},1e-8\n"
                                                    for (x, y, z), v in zip(xyz.tolist(), b.tolist())))
    fm = read_map(p)
    assert fm.n_points == 60 and fm.quantity == "B_T"
    p2 = tmp_path / "bad.csv"
    p2.write_text("x_m,y_m,z_m,B_T,u_f_Hz\n0,0,0,1,1\n0,0,1,1,1\n")
    with pytest.raises(BudgetFileError, match="u_f_Hz goes with f_Hz"):
        read_map(p2)
    p3 = tmp_path / "bad3.csv"
    p3.write_text("x_m,y_m,z_m,B_T,u_B_T\n0,0,0,1,0\n0,0,1,1,1\n")
    with pytest.raises(InputError, match="standard uncertainty > 0"):
        read_map(p3)
