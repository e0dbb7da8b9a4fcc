"""Line fits and field-map fits against sources outside the project.

- Regular solid harmonics r^l P_l^m(cos theta) {cos, sin}(m phi) against
  scipy.special.lpmv (the associated Legendre function of a general-purpose
  library; the definition of the regular solid harmonics: Jackson, Classical
  Electrodynamics, 3rd ed., 3.6, from memory).
- Volume means of monomials over a ball and a cylinder against numerical
  integration with scipy.integrate.tplquad.
- f -> B for an f_Hz map with the CODATA shielded-proton ratio from
  scipy.constants.
- The Lorentzian centre bound against the handbook integral
  int x^2/(1+x^2)^4 dx = pi/16 over the real line (Gradshteyn & Ryzhik 3.241,
  from memory), evaluated with scipy.integrate.quad.
- The frequency bound of an undamped complex sinusoid: Rife & Boorstyn, IEEE
  Trans. Inf. Theory 20, 591 (1974), var(omega) >= 12 s^2/(A^2 N (N^2 - 1))
  per sample^2 with s^2 the noise variance of each of I and Q (from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants, integrate, special

from fieldbudget.nmr.fieldmap import _monomial_mean, harmonic_terms, read_map
from fieldbudget.nmr.linefit import Trace, fit_trace


@pytest.mark.parametrize("basis", ["cartesian", "cylindrical"])
def test_solid_harmonics_are_r_l_times_associated_legendre(basis):
    rng = np.random.default_rng(0)
    pts = rng.normal(size=(12, 3))
    x, y, z = pts.T
    r = np.linalg.norm(pts, axis=1)
    theta, phi = np.arccos(z / r), np.arctan2(y, x)
    for t in harmonic_terms(5, basis):
        ang = np.cos(t.m * phi) if t.part == "cos" else np.sin(t.m * phi)
        ref = r ** t.l * special.lpmv(t.m, t.l, np.cos(theta)) * ang     # scipy.special.lpmv
        ratio = t.evaluate(x, y, z) / ref
        assert np.allclose(ratio, ratio[0], rtol=1e-9), t.label          # the same function up to a constant
        if t.m == 0:
            assert ratio[0] == pytest.approx(1.0, rel=1e-12)               # m = 0: exactly r^l P_l


@pytest.mark.parametrize("mono", [(0, 0, 2), (2, 0, 0), (2, 2, 0), (0, 0, 4), (2, 2, 2), (4, 0, 2)])
def test_monomial_means_over_ball_and_cylinder(mono):
    a, b, c = mono
    rad, length = 0.7, 1.3

    def f_ball(rr, th, ph):
        x, y, z = rr * math.sin(th) * math.cos(ph), rr * math.sin(th) * math.sin(ph), rr * math.cos(th)
        return x ** a * y ** b * z ** c * rr * rr * math.sin(th)

    ball = integrate.tplquad(f_ball, 0, 2 * math.pi, 0, math.pi, 0, rad)[0] / (4 / 3 * math.pi * rad ** 3)
    assert _monomial_mean(a, b, c, "sphere", (rad,), "z") == pytest.approx(ball, rel=1e-7)

    def f_cyl(z, rr, ph):
        x, y = rr * math.cos(ph), rr * math.sin(ph)
        return x ** a * y ** b * z ** c * rr

    cyl = integrate.tplquad(f_cyl, 0, 2 * math.pi, 0, rad, -length / 2, length / 2)[0] / (math.pi * rad ** 2 * length)
    assert _monomial_mean(a, b, c, "cylinder", (rad, length), "z") == pytest.approx(cyl, rel=1e-7)
    # the same cylinder along x: exponents permuted
    assert _monomial_mean(c, a, b, "cylinder", (rad, length), "x") == pytest.approx(cyl, rel=1e-7)


def test_f_map_uses_the_codata_shielded_proton_ratio(tmp_path):
    gamma = constants.physical_constants["shielded proton gyromag. ratio in MHz/T"][0] * 1e6   # scipy CODATA
    p = tmp_path / "m.csv"
    p.write_text("x_m,y_m,z_m,f_Hz,u_f_Hz\n0,0,0,42576412.2,0.05\n0,0,0.01,42576500.0,0.05\n")
    fm = read_map(p)
    assert fm.field_t[0] == pytest.approx(42576412.2 / gamma, rel=1e-15)
    assert fm.u_field_t[1] == pytest.approx(0.05 / gamma, rel=1e-15)


def test_lorentzian_bound_and_the_handbook_integral():
    integral = integrate.quad(lambda x: x * x / (1 + x * x) ** 4, -np.inf, np.inf)[0]
    assert integral == pytest.approx(math.pi / 16, rel=1e-9)          # Gradshteyn & Ryzhik 3.241 (from memory)
    # Fisher information of the centre: (4H/Gamma)^2 / sigma^2 * (points per unit q = n_fwhm/2) * integral
    rng = np.random.default_rng(5)
    fwhm, h, n, span = 4.0, 50.0, 20001, 400.0
    f = np.linspace(-span * fwhm / 2, span * fwhm / 2, n) + 1e6
    q = (f - 1e6) / (fwhm / 2)
    fit = fit_trace(Trace(f, h / (1 + q * q) + rng.normal(0, 1.0, n)))
    n_fwhm = fit.fwhm_hz / (f[1] - f[0])
    info = (4 * fit.snr / fit.fwhm_hz) ** 2 * (n_fwhm / 2) * integral
    assert fit.crb_hz == pytest.approx(1 / math.sqrt(info), rel=1e-3)


def test_undamped_sinusoid_bound_is_rife_boorstyn():
    rng = np.random.default_rng(8)
    n, dt, amp, s_each = 4000, 1e-4, 2.0, 0.5
    t = dt * np.arange(n)
    sig = amp * np.exp(1j * (2 * np.pi * 123.4 * t + 0.3))
    w = rng.normal(0, s_each, n) + 1j * rng.normal(0, s_each, n)
    fit = fit_trace(Trace(t, (sig + w).real, (sig + w).imag, axis="t_s"))
    a_fit = fit.snr * fit.noise_rms                                   # fitted amplitude at the first sample
    s2 = fit.noise_rms ** 2 / 2                                       # per component
    var_omega = 12 * s2 / (a_fit ** 2 * n * (n * n - 1))              # rad^2 per sample^2
    rb = math.sqrt(var_omega) / (2 * math.pi * dt)
    assert fit.crb_hz == pytest.approx(rb, rel=0.01)                  # the fitted decay rate is ~0, not exactly
