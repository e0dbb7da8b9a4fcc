"""JCGM 106:2012 global and specific risks and guard bands (fieldbudget.calibration.risk).

Every risk is checked against an independent numerical integration written
here: scipy's dblquad over the joint normal density of the measurand and the
measured value (JCGM 106 9.5.2, 9.5.3 define R_C and R_P as these double
integrals; from memory), and Monte Carlo where a sanity check is enough.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from fieldbudget.calibration.conformity import Tolerance
from fieldbudget.calibration.risk import (
    global_risks,
    guard_band_for_global_risk,
    guard_band_for_specific_risk,
    specific_risk,
)
from fieldbudget.errors import InputError

# an invented process: Hall probes whose error at 1 T is N(0.1 mT, 0.4 mT), tolerance +-1 mT, u = 0.15 mT
TOL = Tolerance(-1.0, 1.0, unit="mT", source="invented specification")
Y0, U0, U = 0.1, 0.4, 0.15


def _double(tl, tu, al, au, y0, u0, u, conforming: bool, accepted: bool) -> float:
    """P(eta in/out of T and y_m in/out of A): dblquad of g0(eta) * g(y_m | eta) written out here."""
    def density(ym, eta):
        return stats.norm.pdf(eta, y0, u0) * stats.norm.pdf(ym, eta, u)

    lo_e, hi_e = y0 - 12 * u0, y0 + 12 * u0
    eta_ranges = [(max(tl, lo_e), min(tu, hi_e))] if conforming else [(lo_e, tl), (tu, hi_e)]
    total = 0.0
    for e0, e1 in eta_ranges:
        if e1 <= e0:
            continue
        if accepted:
            total += integrate.dblquad(density, e0, e1, al, au, epsabs=1e-12, epsrel=1e-8)[0]
        else:
            span = 12 * u
            total += integrate.dblquad(density, e0, e1, lambda e, span=span: e - span, al, epsabs=1e-12, epsrel=1e-8)[0]
            total += integrate.dblquad(density, e0, e1, au, lambda e, span=span: e + span, epsabs=1e-12, epsrel=1e-8)[0]
    return total


def _rectangles(w: float) -> tuple[float, float]:
    """R_C, R_P as rectangle probabilities of the bivariate normal (eta, y_m) (scipy's Genz integration)."""
    mvn = stats.multivariate_normal([Y0, Y0], [[U0**2, U0**2], [U0**2, U0**2 + U**2]], abseps=1e-12, releps=1e-10)
    big = Y0 + 20 * math.hypot(U0, U)

    def box(e0, e1, m0, m1):
        return float(mvn.cdf([e1, m1], lower_limit=[e0, m0]))

    a0, a1 = -1 + w, 1 - w
    rc = box(-big, -1, a0, a1) + box(1, big, a0, a1)
    rp = box(-1, 1, -big, a0) + box(-1, 1, a1, big)
    return rc, rp


def test_global_risks_against_a_double_integral():
    r = global_risks(TOL, Y0, U0, U)
    rc = _double(-1, 1, -1, 1, Y0, U0, U, conforming=False, accepted=True)
    rp = _double(-1, 1, -1, 1, Y0, U0, U, conforming=True, accepted=False)
    assert r.consumer == pytest.approx(rc, rel=1e-6, abs=1e-12)
    assert r.producer == pytest.approx(rp, rel=1e-6, abs=1e-12)


@pytest.mark.parametrize("w", [0.0, 0.15, 0.3, -0.1])
def test_global_risks_against_bivariate_normal_rectangles(w):
    r = global_risks(TOL, Y0, U0, U, guard_band=w)
    rc, rp = _rectangles(w)
    assert r.consumer == pytest.approx(rc, rel=1e-6, abs=1e-12)
    assert r.producer == pytest.approx(rp, rel=1e-6, abs=1e-12)
    assert r.acceptance == (pytest.approx(-1 + w), pytest.approx(1 - w))
    assert r.conforming_fraction == pytest.approx(stats.norm.cdf(1, Y0, U0) - stats.norm.cdf(-1, Y0, U0))


def test_global_risks_agree_with_monte_carlo():
    rng = np.random.default_rng(106)
    eta = rng.normal(Y0, U0, 2_000_000)
    ym = eta + rng.normal(0, U, eta.size)
    rc_mc = np.mean((np.abs(eta) > 1) & (np.abs(ym) <= 1))
    r = global_risks(TOL, Y0, U0, U)
    # binomial standard error sqrt(p (1 - p) / M): within 4 of them
    assert abs(r.consumer - rc_mc) < 4 * math.sqrt(rc_mc * (1 - rc_mc) / eta.size)


def test_risks_fall_with_the_measurement_uncertainty():
    small = global_risks(TOL, Y0, U0, 1e-4)
    assert small.consumer < 1e-4 and small.producer < 1e-4


def test_specific_risk_and_its_guard_band():
    # one accepted result at 0.9 mT +- 0.15 mT: risk = 1 - [Phi((1 - 0.9)/0.15) - Phi((-1 - 0.9)/0.15)]
    expect = 1 - (stats.norm.cdf(0.1 / 0.15) - stats.norm.cdf(-1.9 / 0.15))
    assert specific_risk(TOL, 0.9, U) == pytest.approx(expect, rel=1e-12)
    g = guard_band_for_specific_risk(TOL, U, 0.025)
    assert specific_risk(TOL, g.acceptance[1], U) == pytest.approx(0.025, rel=1e-9)
    assert specific_risk(TOL, g.acceptance[0], U) == pytest.approx(0.025, rel=1e-9)
    # far from the other limit the two-sided risk is the one-sided one: w = z_0.975 u = 1.96 u (common practice)
    assert g.guard_band == pytest.approx(stats.norm.ppf(0.975) * U, rel=1e-6)
    one = guard_band_for_specific_risk(Tolerance(None, 1.0), U, 0.05)
    assert one.guard_band == pytest.approx(1.6448536269514722 * U, rel=1e-12)  # z_0.95 from memory
    assert one.acceptance[1] == pytest.approx(1.0 - one.guard_band)


def test_specific_risk_with_a_prior_uses_the_posterior():
    y, u, y0, u0 = 0.9, 0.15, 0.1, 0.4
    prec = 1 / u**2 + 1 / u0**2
    m, s = (y / u**2 + y0 / u0**2) / prec, math.sqrt(1 / prec)
    # the posterior written as an integral over the tolerance interval of the normalised product of the two PDFs
    num = integrate.quad(lambda e: stats.norm.pdf(y, e, u) * stats.norm.pdf(e, y0, u0), -1, 1)[0]
    den = integrate.quad(lambda e: stats.norm.pdf(y, e, u) * stats.norm.pdf(e, y0, u0), -10, 10)[0]
    assert specific_risk(TOL, y, u, prior_mean=y0, prior_sd=u0) == pytest.approx(1 - num / den, rel=1e-8)
    assert 1 - num / den == pytest.approx(1 - (stats.norm.cdf((1 - m) / s) - stats.norm.cdf((-1 - m) / s)), rel=1e-8)


def test_guard_band_for_a_target_global_risk():
    g = guard_band_for_global_risk(TOL, Y0, U0, U, 0.001)
    assert _rectangles(g.guard_band)[0] == pytest.approx(0.001, rel=1e-5)
    assert g.kind == "global" and g.risks.consumer == pytest.approx(0.001, rel=1e-8) and g.guard_band > 0
    # a lenient target is met by widening the acceptance interval (negative guard band)
    assert guard_band_for_global_risk(TOL, Y0, U0, U, 0.008).guard_band < 0
    d = g.to_dict()
    assert d["kind"] == "global" and d["risks"]["consumer_risk"] == pytest.approx(0.001, rel=1e-8)
    assert "Guard band" in g._repr_html_() and "\n" not in repr(g)


def test_impossible_targets_and_bad_inputs_are_refused():
    with pytest.raises(InputError, match="middle of the tolerance"):
        guard_band_for_specific_risk(TOL, 2.0, 0.01)     # u = 2 mT against +-1 mT: never below ~62 %
    with pytest.raises(InputError, match="prior_sd"):
        global_risks(TOL, Y0, 0.0, U)
    with pytest.raises(InputError, match="target"):
        guard_band_for_global_risk(TOL, Y0, U0, U, 1.5)
