"""``line.trace_csv`` and ``field_map`` as components: a measurement file naming its raw data, end to end.

The independent computations are written here: a Lorentzian-plus-baseline fit by scipy.optimize.curve_fit
(covariance scaled by the residual variance, as least squares gives it; Press et al., Numerical Recipes
15.4, from memory), and the known synthetic field evaluated at the sample and the reference point.
Invented data only.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as sc
from scipy.optimize import curve_fit

from fieldbudget.errors import BudgetFileError
from fieldbudget.nmr import NMRMeasurement

GAMMA = sc.physical_constants["shielded proton gyromag. ratio in MHz/T"][0] * 1e6  # CODATA 2022 via scipy
F0 = 42576395.0


def _lorentz(f, h, f0, g, c):
    return h / (1 + ((f - f0) / (g / 2)) ** 2) + c


def test_trace_csv_gives_the_line_centre_input(tmp_path):
    rng = np.random.default_rng(11)
    f = np.linspace(F0 - 40, F0 + 40, 801)
    y = _lorentz(f, 1.0, F0 + 0.37, 8.0, 0.02) + rng.normal(0, 0.01, f.size)
    (tmp_path / "sweep.csv").write_text("# invented sweep\nf_Hz,signal\n" +
                                        "".join(f"{a:.4f},{b:.6f}\n" for a, b in zip(f, y)))
    d = {"frequency": {"value_Hz": F0, "u_Hz": 0.01}, "codata": 2022,
         "sample": {"temperature_C": 25.0, "u_temperature_C": 0.0},
         "line": {"trace_csv": "sweep.csv", "u_Hz": 0.005}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    q = r.budget.input("d_line")
    assert "sha256:" in q.source and "sweep.csv" in q.source
    # independent fit of the same numbers
    fr = np.array([float(f"{a:.4f}") for a in f]) - F0
    yr = np.array([float(f"{b:.6f}") for b in y])
    p, cov = curve_fit(_lorentz, fr, yr, p0=(1, 0, 8, 0))
    u_fit = math.sqrt(cov[1, 1])
    assert q.standard_uncertainty == pytest.approx(math.hypot(u_fit, 0.005), rel=0.02)
    # end to end: B = (f + d_line)/gamma at 25 degC (sphere implicit), u from f, line and gamma'_p
    u_g = sc.physical_constants["shielded proton gyromag. ratio in MHz/T"][2] * 1e6
    b = F0 / GAMMA
    u = b * math.sqrt((0.01 / F0) ** 2 + (math.hypot(u_fit, 0.005) / F0) ** 2 + (u_g / GAMMA) ** 2)
    assert r.estimate == pytest.approx(b, rel=1e-14)
    assert r.standard_uncertainty == pytest.approx(u, rel=0.01)
    with pytest.raises(BudgetFileError, match="trace_csv .*not both|not both"):
        NMRMeasurement.from_dict(dict(d, line={"trace_csv": "sweep.csv", "snr": 10}), base_dir=tmp_path)


def _true_b(x, y, z):
    # a source-free field: uniform, gradient and the harmonic z^2 - rho^2/2 term (invented)
    return 1.0 + 2e-4 * x - 1e-4 * y + 5e-4 * z + 0.3 * (z * z - (x * x + y * y) / 2)


def test_field_map_gives_gradient_and_volume_terms(tmp_path):
    rng = np.random.default_rng(7)
    g = np.linspace(-0.01, 0.01, 6)
    X, Y, Z = np.meshgrid(g, g, g, indexing="ij")
    x, y, z = X.ravel(), Y.ravel(), Z.ravel()
    b = _true_b(x, y, z) + rng.normal(0, 2e-9, x.size)
    (tmp_path / "map.csv").write_text("# invented map\nx_m,y_m,z_m,B_T,u_B_T\n" + "".join(
        f"{a:.6f},{bb:.6f},{c:.6f},{v:.12f},2e-9\n" for a, bb, c, v in zip(x, y, z, b)))
    s, ref = (0.001, -0.0005, 0.002), (0.0, 0.0, 0.0)
    b_s = _true_b(*s)  # a sphere's average of a harmonic field is its value at the centre (mean-value theorem)
    f = b_s * GAMMA
    d = {"frequency": {"value_Hz": f, "u_Hz": 1e-4}, "codata": 2022,
         "sample": {"temperature_C": 25.0, "shape": "sphere", "diameter_m": 0.005},
         "field_map": {"path": "map.csv", "sample_position_m": list(s), "u_sample_position_m": [1e-4, 1e-4, 1e-4],
                       "order": 2}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert "- (G_x * x_off + G_y * y_off + G_z * z_off + d_vol)" in r.budget.model.text()
    assert r.budget.input("d_vol").estimate == pytest.approx(0.0, abs=1e-9)
    # independent: the known field at the reference point
    assert r.estimate == pytest.approx(_true_b(*ref), abs=3 * r.standard_uncertainty)
    assert abs(r.estimate - _true_b(*ref)) < 1e-8
    # the u from the positions: |grad B at the midpoint| . u(s), by hand
    mid = [0.5 * (a + c) for a, c in zip(s, ref)]
    grad = np.array([2e-4 - 0.3 * mid[0], -1e-4 - 0.3 * mid[1], 5e-4 + 0.6 * mid[2]])
    u_pos = float(np.linalg.norm(grad * 1e-4))
    # plus the frequency and gamma'_p; the map's own u(G) u(offset) terms are below 1e-10 T here
    u_g = sc.physical_constants["shielded proton gyromag. ratio in MHz/T"][2] * 1e6
    u_f = b_s * math.hypot(1e-4 / f, u_g / GAMMA)
    assert r.standard_uncertainty == pytest.approx(math.hypot(u_pos, u_f), rel=0.02)
    with pytest.raises(BudgetFileError, match="not both"):
        NMRMeasurement.from_dict(dict(d, gradient_T_per_m=1e-4, offset_m=0.0), base_dir=tmp_path)


def test_trace_beside_repeated_readings_follows_noise_in_readings(tmp_path):
    rng = np.random.default_rng(12)
    f = np.linspace(F0 - 40, F0 + 40, 401)
    y = _lorentz(f, 1.0, F0, 8.0, 0.0) + rng.normal(0, 0.01, f.size)
    (tmp_path / "sweep.csv").write_text("f_Hz,signal\n" + "".join(f"{a:.4f},{b:.6f}\n" for a, b in zip(f, y)))
    d = {"frequency": {"readings_Hz": [F0 + 0.01, F0 - 0.02, F0 + 0.015]},
         "sample": {"temperature_C": 25.0}, "line": {"trace_csv": "sweep.csv"}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert "d_line" not in r.budget.symbols  # the fit's noise is in the three readings' scatter
    assert [f.severity for f in r.findings if f.code == "nmr.line_in_readings"] == ["note"]
    d["line"]["noise_in_readings"] = False
    r2 = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert "d_line" in r2.budget.symbols and any("counted twice" in w for w in r2.findings)
