"""JCGM 100:2008 (GUM), Annex H.1: calibration of an end gauge.

Inputs and results (recalled from memory and reproduced by an independent calculation):
Table H.1 rows, u_c = 32 nm (H.1.4), nu_eff = 16.7 taken as 16 (H.1.6),
k = t_99(16) = 2.92 and U_99 = 93 nm (H.1.6).
"""

from __future__ import annotations

import math

import pytest

from fieldbudget.engine import Budget, InputQuantity, Measurand, evaluate
from fieldbudget.engine.distributions import dof_from_reliability


def _h1_budget(**kw) -> Budget:
    # u(d) combines d-bar, d1, d2 (H.1.3.2): sqrt(5.8^2 + 3.9^2 + 6.7^2) with W-S dof 25.6, computed here
    # from the unrounded components 13/sqrt(5), 10/2.57, 20/3 (H.1.3.2).
    u_dbar, u_d1, u_d2 = 13 / math.sqrt(5), 10 / 2.57, 20 / 3
    u_d = math.sqrt(u_dbar**2 + u_d1**2 + u_d2**2)
    nu_d = u_d**4 / (u_dbar**4 / 24 + u_d1**4 / 5 + u_d2**4 / dof_from_reliability(0.25))
    u_theta = math.sqrt(0.2**2 + (0.5 / math.sqrt(2)) ** 2)  # H.1.3.4: mean and cyclic (arcsine) terms
    return Budget(
        model="l_S + d - l_S*(d_alpha*theta + alpha_S*d_theta)",  # H.1.2, eq. (H.3), first order
        measurand=Measurand("l", "nm"),
        coverage_probability=0.99,
        inputs=(
            InputQuantity.expanded("l_S", 50_000_623.0, 75, 3, dof=18, unit="nm", source="H.1.3.1"),
            InputQuantity.normal("d", 215.0, u_d, dof=nu_d, unit="nm", source="H.1.3.2"),
            InputQuantity.rectangular("alpha_S", 11.5e-6, 2e-6, unit="1/degC", source="H.1.3.3"),
            InputQuantity.normal("theta", -0.1, u_theta, unit="degC", source="H.1.3.4"),
            InputQuantity.normal("d_alpha", 0.0, 1e-6 / math.sqrt(3), dof=dof_from_reliability(0.10),
                                 unit="1/degC", source="H.1.3.5"),
            InputQuantity.normal("d_theta", 0.0, 0.05 / math.sqrt(3), dof=dof_from_reliability(0.50),
                                 unit="degC", source="H.1.3.6"),
        ),
        **kw,
    )


def test_table_h1_rows():
    r = evaluate(_h1_budget())
    # Table H.1: |c_i| u(x_i) in nm, printed to 2-3 significant digits
    assert round(r.contribution("l_S").u_contribution, 0) == 25
    assert round(r.contribution("d").u_contribution, 1) == 9.7
    assert r.contribution("alpha_S").u_contribution == 0  # c = -l_S * d_theta = 0
    assert r.contribution("theta").u_contribution == 0  # c = -l_S * d_alpha = 0
    assert round(r.contribution("d_alpha").u_contribution, 1) == 2.9
    assert round(r.contribution("d_theta").u_contribution, 1) == 16.6
    # sensitivity coefficients of Table H.1: -l_S theta = +5 mm degC; -l_S alpha_S = -575 nm/degC
    assert r.contribution("d_alpha").sensitivity == pytest.approx(5.0e6, rel=1e-4)
    assert round(r.contribution("d_theta").sensitivity) == -575


def test_combined_dof_coverage_and_expanded():
    r = evaluate(_h1_budget())
    assert r.estimate == pytest.approx(50_000_838, abs=0.5)  # H.1.5: 50.000 838 mm
    assert round(r.standard_uncertainty) == 32  # H.1.4: u_c = 32 nm
    assert round(r.standard_uncertainty**2) == 1002  # H.1.4: u_c^2 = 1 002 nm^2
    assert round(r.effective_dof, 1) == 16.7  # H.1.6, from unrounded inputs
    assert round(r.coverage_factor, 2) == 2.92  # H.1.6: t_99(16), nu_eff truncated
    # H.1.6: U_99 = k u_c = 2.92 x 32 nm = 93 nm, from the rounded u_c; unrounded it is 92.5 nm
    # (recomputed here), which rounds to 92 nm to nearest and to 93 nm rounding up
    assert round(round(r.coverage_factor, 2) * round(r.standard_uncertainty)) == 93
    assert round(r.expanded_uncertainty, 1) == 92.5
    s = r.statement(rule="up")  # GUM 7.2.6 allows rounding up a final uncertainty
    assert "± 93) nm" in s and "k = 2.92" in s and "16 degrees of freedom" in s


def test_interpolated_dof_gives_smaller_k():
    # GUM G.4.1 allows interpolating: t_99(16.7) lies between t_99(17) = 2.90 and t_99(16) = 2.92 (Table G.2)
    r = evaluate(_h1_budget(dof_rounding="interpolate"))
    assert 2.898 < r.coverage_factor < 2.921
