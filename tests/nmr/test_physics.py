"""Unit tests of fieldbudget.nmr.physics: argument checks, algebraic identities, property tests."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.errors import InputError
from fieldbudget.nmr import physics

GAMMA = 42.57638543e6  # Hz/T; CODATA 2022 gamma'_p/2pi (only a convenient number here)


@settings(max_examples=80, deadline=None)
@given(st.floats(1e3, 1e11), st.floats(1e5, 3e10), st.floats(0, 1e-6))
def test_frequency_field_round_trip(f, gamma, u_r):
    # invariant: f -> B -> f returns f; the relative uncertainty from gamma alone is u_r(gamma) both ways
    b, ub = physics.field_from_frequency(f, gamma, u_r * gamma)
    f2, uf = physics.frequency_from_field(b, gamma, u_r * gamma)
    assert f2 == pytest.approx(f, rel=1e-14)
    assert ub == pytest.approx(u_r * b, rel=1e-9, abs=1e-300)
    assert uf == pytest.approx(u_r * f, rel=1e-9, abs=1e-300)


def test_field_uncertainty_adds_in_quadrature():
    # JCGM 100:2008 5.1.6: quotient, relative uncertainties in quadrature
    b, u = physics.field_from_frequency(100e6, GAMMA, GAMMA * 3e-9, 100e6 * 4e-9)
    assert u / b == pytest.approx(5e-9, rel=1e-12)


def test_negative_ratio_uses_magnitude():
    assert physics.field_from_frequency(1e6, -GAMMA)[0] > 0


@pytest.mark.parametrize("call", [
    lambda: physics.field_from_frequency(1e6, 0.0),
    lambda: physics.field_from_frequency(float("nan"), GAMMA),
    lambda: physics.field_from_frequency(1e6, GAMMA, -1.0),
    lambda: physics.resolution_ppm(1.0, 0.0, GAMMA),
    lambda: physics.max_usable_gradient_t_per_m(0.0, 0.01, GAMMA),
    lambda: physics.demag_cylinder(0.0),
    lambda: physics.demag_long_cylinder("sideways"),
    lambda: physics.demag_spheroid(-1.0),
    lambda: physics.bulk_susceptibility_shift(-9e-6, 1.2),
    lambda: physics.curvature_mean_square_m2("cube", 0.01),
    lambda: physics.curvature_mean_square_m2("cylinder", 0.01),
    lambda: physics.lorentzian_centre_uncertainty_hz(1.0, 0.0, 10),
    lambda: physics.fid_frequency_crb_hz(10, math.inf, 1e-5),
    lambda: physics.fid_frequency_crb_hz(10, 1e-3, 1e-5, 2e-5),
])
def test_bad_arguments_raise_input_error(call):
    with pytest.raises(InputError):
        call()


def test_input_error_names_the_argument():
    with pytest.raises(InputError) as info:
        physics.gradient_broadening_hz(1e-5, -0.01, GAMMA)
    assert info.value.field == "extent_m"


def test_broadening_and_max_gradient_are_inverse():
    g = physics.max_usable_gradient_t_per_m(2.0, 0.005, GAMMA, broadening_ratio=3.0)
    assert physics.gradient_broadening_hz(g, 0.005, GAMMA) == pytest.approx(6.0, rel=1e-14)


def test_linewidth_from_t2():
    # Lorentzian FWHM = 1/(pi T2*)
    assert physics.linewidth_from_t2_hz(1 / math.pi) == pytest.approx(1.0)


def test_lorentzian_centre_scales():
    base = physics.lorentzian_centre_uncertainty_hz(2.0, 100.0, 10.0)
    assert physics.lorentzian_centre_uncertainty_hz(4.0, 100.0, 10.0) == pytest.approx(2 * base)
    assert physics.lorentzian_centre_uncertainty_hz(2.0, 200.0, 10.0) == pytest.approx(base / 2)
    assert physics.lorentzian_centre_uncertainty_hz(2.0, 100.0, 40.0) == pytest.approx(base / 2)


def test_spheroid_near_one_is_continuous():
    for m in (1 - 1e-9, 1 + 1e-9, 1 - 1e-7, 1 + 1e-7):
        assert physics.demag_spheroid(m)[0] == pytest.approx(1 / 3, abs=1e-7)
