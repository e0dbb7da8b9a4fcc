"""Demagnetizing factors against published values, limits and independent methods.

Sources: elementary magnetostatics for the sphere and the infinite cylinder;
Chen, Brug & Goldfarb, IEEE Trans. Magn. 27, 3601 (1991), chi = 0
magnetometric table for the finite cylinder (the value 0.3116 at L/D = 1 is
from memory: their table was not read, values computed here);
Osborn, Phys. Rev. 67, 351 (1945) for spheroids; Carlson's symmetric
integral R_D (DLMF 19.16) as an independent route to ellipsoids.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, special

from fieldbudget.nmr import physics


def test_sphere():
    # elementary: N = 1/3 along every axis
    assert physics.demag_sphere() == pytest.approx(1 / 3, rel=1e-15)


def test_long_cylinder():
    # elementary: infinite cylinder, 0 along the axis and 1/2 across
    assert physics.demag_long_cylinder("parallel") == 0.0
    assert physics.demag_long_cylinder("perpendicular") == 0.5


def test_finite_cylinder_l_over_d_1():
    # Chen, Brug & Goldfarb 1991, chi = 0 magnetometric N at L/D = 1: 0.3116 (from memory)
    nz, nx = physics.demag_cylinder(1.0)
    assert round(nz, 4) == 0.3116
    assert nx == pytest.approx((1 - nz) / 2, rel=1e-15)


def test_isotropic_cylinder():
    # The cylinder with N = 1/3 along every axis has L/D = 0.9065: root of N_z = 1/3 found by quadrature in
    # computed independently; not checked against a printed table
    assert round(physics.isotropic_cylinder_aspect_ratio(), 4) == 0.9065


@pytest.mark.parametrize("g, nz", [
    # quadrature table computed here (accuracy about 1e-6) (computed here)
    (0.01, 0.965040), (0.1, 0.796676), (0.25, 0.634568), (0.5, 0.474490), (2, 0.181864),
    (5, 0.079907), (10, 0.041193), (100, 0.004232),
])
def test_finite_cylinder_table(g, nz):
    assert physics.demag_cylinder_axial(g) == pytest.approx(nz, abs=2e-6)


def test_finite_cylinder_against_direct_quadrature_of_the_same_integral():
    # Independent numerical route: scipy.integrate.quad with the oscillatory weight handled over 0..2000
    # (a different split from the module's), for the formula N_z = (1/g) int J1^2/x^2 (1 - e^{-2gx}) dx
    g = 1.7
    f = lambda x: special.j1(x) ** 2 / x**2 * -math.expm1(-2 * g * x)
    total = sum(integrate.quad(f, a, a + 10.0, limit=200)[0] for a in range(0, 2000, 10))
    total += (0.5 - special.expn(3, 2 * g * 2000)) / (math.pi * 2000**2)
    assert physics.demag_cylinder_axial(g) == pytest.approx(total / g, abs=1e-7)


def test_finite_cylinder_limits():
    # long cylinder: N_z -> (4/(3 pi))/g; flat disc: N_z -> 1 (computed here)
    assert physics.demag_cylinder_axial(1000.0) * 1000.0 == pytest.approx(4 / (3 * math.pi), rel=2e-3)
    assert physics.demag_cylinder_axial(1e-4) == pytest.approx(1.0, abs=1e-3)


@pytest.mark.parametrize("m, nz", [
    # Osborn 1945 closed forms, values computed here
    (2.0, 0.17356), (5.0, 0.055821), (10.0, 0.020286), (0.5, 0.527200), (0.1, 0.860804),
])
def test_spheroid_osborn(m, nz):
    assert physics.demag_spheroid(m)[0] == pytest.approx(nz, abs=6e-6)


def test_prolate_spheroid_ratio_2_to_five_digits():
    # issue 7 / computed here: prolate spheroid, axis ratio 2 along B0: N = 0.17356
    assert round(physics.demag_spheroid(2.0)[0], 5) == 0.17356


@pytest.mark.parametrize("m", [0.05, 0.3, 0.999, 1.0, 1.001, 1.5, 3.0, 20.0])
def test_spheroid_closed_form_equals_carlson_integral(m):
    # Two independent routes: Osborn's closed forms and N_c = (abc/3) R_D(a^2, b^2, c^2) (DLMF 19.16)
    nz, nx = physics.demag_spheroid(m)
    ea, eb, ec = physics.demag_ellipsoid(1.0, 1.0, m)
    assert ea == pytest.approx(eb, abs=1e-15)
    assert nz == pytest.approx(ec, abs=1e-12)
    assert nx == pytest.approx(ea, abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.05, 20), st.floats(0.05, 20), st.floats(0.05, 20))
def test_ellipsoid_factors_add_up_to_one(a, b, c):
    # trace of the demagnetizing tensor is 1 for any ellipsoid (Osborn 1945)
    n = physics.demag_ellipsoid(a, b, c)
    assert sum(n) == pytest.approx(1.0, abs=1e-12)
    assert all(0 < x < 1 for x in n)
    # the longest axis has the smallest factor
    assert n[max(range(3), key=lambda i: (a, b, c)[i])] == pytest.approx(min(n), abs=1e-12)


@settings(max_examples=25, deadline=None)
@given(st.floats(0.1, 50))
def test_finite_cylinder_trace_and_monotone(g):
    # N_z + 2 N_x = 1, and a longer cylinder has a smaller axial factor
    nz, nx = physics.demag_cylinder(g)
    assert nz + 2 * nx == pytest.approx(1.0, abs=1e-12)
    assert physics.demag_cylinder_axial(g * 1.1) < nz
