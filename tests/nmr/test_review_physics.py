"""The physics an independent review asked for, each against an independent computation named beside it.

Water probe without a temperature, the line centre not counted twice, Allan deviation and its equivalent
degrees of freedom, the local field over finite cylinders and where a detection method reads it, the
curvature term's u, water's susceptibility, frequencies with units.  Lab and instruments are invented.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from fieldbudget import constants
from fieldbudget.errors import BudgetFileError
from fieldbudget.nmr import NMRMeasurement, lineshape, physics

DATA = Path(__file__).parent / "data"
F = 63.87e6


def _m(**kw) -> NMRMeasurement:
    d = {"frequency": {"value_Hz": F, "u_Hz": 0.01}}
    d.update(kw)
    return NMRMeasurement.from_dict(d)


# --- water probe without a temperature --------------------------------------------------------

def test_water_probe_without_temperature_carries_an_assumption():
    r = _m().evaluate()
    t = r.budget.input("t_s")
    assert t.estimate == 25.0
    assert t.standard_uncertainty == pytest.approx(5.0 / math.sqrt(3), rel=1e-12)  # rectangular +-5 K, GUM 4.3.7
    assert "assumed" in t.source
    (f,) = [w for w in r.findings if w.code == "nmr.temperature_assumed"]
    assert f.key == "sample.temperature_C"
    # its share: (alpha u(t))^2, alpha = 10.36e-9 /K (Petley & Donaldson 1984), relative to B
    c = r.contribution("t_s")
    assert abs(c.sensitivity) * c.standard_uncertainty / r.estimate == pytest.approx(10.36e-9 * 5 / math.sqrt(3),
                                                                                     rel=1e-6)
    # a stated temperature replaces the assumption and the finding
    r2 = _m(sample={"temperature_C": 25.0, "u_temperature_C": 0.1}).evaluate()
    assert r2.estimate == pytest.approx(r.estimate, rel=1e-15)
    assert not [w for w in r2.findings if w.code == "nmr.temperature_assumed"]
    # other nuclei: no water term at all
    assert "t_s" not in _m(nucleus="proton").to_budget().symbols


# --- the line centre is not counted twice -------------------------------------------------------

def test_line_noise_in_readings_is_not_added_again():
    m = NMRMeasurement.from_file(DATA / "low_field_47mT.json")
    r = m.evaluate()
    assert "d_line" not in r.budget.symbols
    (f,) = [w for w in r.findings if w.code == "nmr.line_in_readings"]
    assert f.key == "line.noise_in_readings" and f.values["noise_in_readings"] is True
    # Lorentzian fit bound Gamma (sigma/H) sqrt(2/(pi n)) with Gamma = 1 Hz, H/sigma = 8, n = 4 (physics docstring)
    assert f.values["u_line_Hz"] == pytest.approx(1.0 / 8 * math.sqrt(2 / (math.pi * 4)), rel=1e-12)
    # the other choice: added, with the warning that it may be counted twice
    d = m.to_dict()
    d["line"]["noise_in_readings"] = False
    r2 = NMRMeasurement.from_dict(d, base_dir=DATA).evaluate()
    assert r2.budget.input("d_line").standard_uncertainty == pytest.approx(f.values["u_line_Hz"], rel=1e-12)
    assert any("counted twice" in w for w in r2.findings)
    # the readings' own scatter: s/sqrt(n) of the six readings in the CSV (JCGM 100 4.2.3)
    col = [2012345.71, 2012345.74, 2012345.69, 2012345.73, 2012345.72, 2012345.70]
    assert r.budget.input("f_read").standard_uncertainty == pytest.approx(np.std(col, ddof=1) / math.sqrt(6))


def test_a_stated_line_u_is_always_carried_and_noise_in_readings_needs_readings():
    r = _m(line={"u_Hz": 0.05}).evaluate()
    assert r.budget.input("d_line").standard_uncertainty == 0.05
    with pytest.raises(BudgetFileError, match="noise_in_readings: can be true only"):
        _m(line={"fwhm_Hz": 1, "snr": 8, "points_per_fwhm": 4, "noise_in_readings": True})


# --- Allan deviation ------------------------------------------------------------------------------

@pytest.mark.parametrize("blocks, nu", [(3, 1.6), (10, 6.2), (30, 19.6)])
def test_allan_edf_white_fm_published_values(blocks, nu):
    # nu = 2 (M - 1)^2 / (3 M - 4) (Lesage & Audoin 1973; from memory): about 1.6, 6.2, 19.6
    assert physics.allan_edf_white_fm(blocks) == pytest.approx(nu, abs=0.05)


@pytest.mark.parametrize("blocks", [3, 10, 30])
def test_allan_edf_by_simulation(blocks):
    # White FM: y_i independent normal. The Allan variance estimate is (sigma^2/nu) chi^2_nu with
    # nu = 2 mean^2 / var over many trials. With K trials the sample variance has relative standard error
    # sqrt((2 + kappa)/K), kappa = 12/nu the excess kurtosis of chi^2_nu; we allow 4 of them.
    rng = np.random.default_rng(13)
    k = 20000
    y = rng.standard_normal((k, blocks))
    avar = 0.5 * np.mean(np.diff(y, axis=1) ** 2, axis=1)
    nu_sim = 2 * avar.mean() ** 2 / avar.var(ddof=1)
    nu = physics.allan_edf_white_fm(blocks)
    tol = 4 * math.sqrt((2 + 12 / nu) / k)
    assert nu_sim == pytest.approx(nu, rel=tol)
    # and the function's own estimate is this one, trial by trial
    adev, count = physics.allan_deviation(y[0], 1)
    assert count == blocks and adev**2 == pytest.approx(avar[0], rel=1e-12)


def test_overlapping_allan_deviation_against_a_direct_sum():
    # NIST SP 1065 eq. 10 written out as a loop (from memory): sigma^2 = sum_j (ybar_{j+m} - ybar_j)^2 / (2 (n-2m+1))
    rng = np.random.default_rng(5)
    y = rng.standard_normal(101)
    m = 4
    ybar = [np.mean(y[j:j + m]) for j in range(len(y) - m + 1)]
    s = sum((ybar[j + m] - ybar[j]) ** 2 for j in range(len(y) - 2 * m + 1))
    adev, n = physics.allan_deviation(y, m, overlapping=True)
    assert adev == pytest.approx(math.sqrt(s / (2 * (len(y) - 2 * m + 1))), rel=1e-12) and n == 101
    # at m = 1 overlapping and non-overlapping first differences coincide
    assert physics.allan_deviation(y, 1, overlapping=True)[0] == pytest.approx(physics.allan_deviation(y, 1)[0])


def test_overlapping_edf_by_simulation():
    # Howe, Allan & Barnes 1981 white-FM EDF (as in NIST SP 1065 Table 5; from memory) is an approximation:
    # the simulated nu = 2 mean^2/var agrees within 15 % plus the Monte Carlo error of test_allan_edf_by_simulation
    rng = np.random.default_rng(29)
    n, m, k = 64, 4, 6000
    vals = np.array([physics.allan_deviation(rng.standard_normal(n), m, overlapping=True)[0] ** 2 for _ in range(k)])
    nu_sim = 2 * vals.mean() ** 2 / vals.var(ddof=1)
    nu = physics.allan_edf_white_fm(n, m, overlapping=True)
    assert nu_sim == pytest.approx(nu, rel=0.15 + 4 * math.sqrt((2 + 12 / nu) / k))


def test_drift_log_csv_with_time_stamps(tmp_path):
    rng = np.random.default_rng(3)
    f = 63871224.3 * (1 + 2e-9 * rng.standard_normal(40))
    rows = "".join(f"{10.0 * i:.1f},{v:.4f}\n" for i, v in enumerate(f))
    (tmp_path / "drift.csv").write_text("# drift log of an invented magnet\nt_s,f_Hz\n" + rows)
    d = {"frequency": {"value_Hz": F, "u_Hz": 0.01}, "sample": {"temperature_C": 22.0},
         "drift": {"log_csv": {"path": "drift.csv", "time_column": "t_s", "column": "f_Hz"},
                   "method": "allan", "interval_s": 40.0}}
    q = NMRMeasurement.from_dict(d, base_dir=tmp_path).to_budget().input("y_drift")
    yf = np.asarray([float(f"{v:.4f}") for v in f])
    yf = yf / yf.mean()
    blocks = yf[:40].reshape(10, 4).mean(axis=1)  # tau = 40 s = 4 logging intervals of 10 s
    assert q.standard_uncertainty == pytest.approx(math.sqrt(0.5 * np.mean(np.diff(blocks) ** 2)), rel=1e-9)
    assert q.dof == pytest.approx(2 * 9**2 / 26)
    (tmp_path / "drift.csv").write_text("t_s,f_Hz\n0,63871224.3\n10,63871224.3\n25,63871224.3\n30,63871224.3\n")
    with pytest.raises(BudgetFileError, match="evenly spaced"):
        NMRMeasurement.from_dict(d, base_dir=tmp_path)


# --- the local field over a finite cylinder -------------------------------------------------------

@pytest.mark.parametrize("ratio", [1.0, 0.5, 2.5])
def test_ellipsoids_have_a_uniform_field(ratio):
    # a uniformly magnetised spheroid has a uniform field, N = Osborn 1945 (physics.demag_spheroid)
    lf = lineshape.local_field("spheroid", ratio)
    n = physics.demag_spheroid(ratio)[0]
    for p in (0.05, 0.5, 0.95):
        assert 1 / 3 - lf.quantile(1.0, p) == pytest.approx(n, abs=1e-9)


def test_cylinder_mean_is_the_magnetometric_factor_and_centre_matches_the_solid_angle():
    for g in (0.5, 1.0, 2.0, 5.0):
        along = lineshape.local_field("cylinder", g, "parallel")
        across = lineshape.local_field("cylinder", g, "perpendicular")
        nz, nx = physics.demag_cylinder(g)  # shape-function integral (Chen, Brug & Goldfarb 1991)
        assert along.mean_n == pytest.approx(nz, abs=2e-4)
        assert across.mean_n == pytest.approx(nx, abs=3e-4)
    # on the axis at the centre: two end discs seen under cos = g/sqrt(g^2 + 1/4)... with L/2 = g R:
    # N(0) = 1 - g/sqrt(g^2 + 1) for g = (L/2)/R = L/D (solid angle of a disc, elementary)
    g = 2.0
    lf = lineshape._cylinder_along(g, 400)
    assert lf.n_local[0] == pytest.approx(1 - g / math.sqrt(g * g + 1), abs=2e-4)  # first cell ~ the centre


def test_long_cylinder_limit():
    # a long cylinder: N -> 0 along its axis and 1/2 across over most of its volume (physics.demag_long_cylinder)
    along = lineshape.local_field("cylinder", 40.0, "parallel")
    across = lineshape.local_field("cylinder", 40.0, "perpendicular")
    assert 1 / 3 - along.quantile(1.0, 0.5) == pytest.approx(0.0, abs=1e-3)
    assert 1 / 3 - across.quantile(1.0, 0.5) == pytest.approx(0.5, abs=2e-3)


def test_peak_is_not_the_mean_for_a_finite_cylinder():
    # the figure of the review: L/D = 2 along B0, water, the mode lies about 0.7 ppm below the mean
    lf = lineshape.local_field("cylinder", 2.0, "parallel")
    chi = constants.lookup_other("volume magnetic susceptibility of water").value
    assert lf.centre(chi, "peak", 0.0) == pytest.approx(-0.74e-6, abs=0.05e-6)
    assert lf.centre(chi, "centroid", 0.0) == 0.0
    st = lf.stats(chi)
    assert st["p05"] < st["mode"] < st["median"] < st["mean"] < st["p95"]
    # a natural line much wider than the spread pulls the peak back to the mean
    assert abs(lf.centre(chi, "peak", 100e-6)) < 0.05 * abs(lf.centre(chi, "peak", 0.0))


def test_detection_shift_enters_the_budget():
    sample = {"temperature_C": 22.0, "shape": "cylinder", "length_over_diameter": 2.0, "axis": "parallel"}
    line = {"fwhm_Hz": 150.0, "natural_fwhm_Hz": 2.5, "detection": "peak"}
    r = _m(sample=sample, line=line).evaluate()
    chi = constants.lookup_other("volume magnetic susceptibility of water").value
    expect = lineshape.local_field("cylinder", 2.0, "parallel").centre(chi, "peak", 2.5 / F)
    q = r.budget.input("d_det")
    assert q.estimate == pytest.approx(expect, rel=1e-12) and q.standard_uncertainty == pytest.approx(abs(expect) / 2)
    base = _m(sample=sample, line=dict(line, detection="centroid")).evaluate()
    assert r.estimate == pytest.approx(base.estimate / (1 + expect), rel=1e-13)
    assert [f.key for f in r.findings if f.code == "nmr.susceptibility_broadening"] == ["line.detection"]
    # a 2.5 Hz observed line cannot come from this sample at 64 MHz
    narrow = _m(sample=sample, line={"fwhm_Hz": 2.5}).evaluate()
    assert [f.severity for f in narrow.findings if f.code == "nmr.line_narrower_than_sample"] == ["invalid"]
    # the laboratory may state its own u of the shift, as a fraction of it (0 to 1)
    own = _m(sample=sample, line=dict(line, u_detection_fraction=0.2)).to_budget().input("d_det")
    assert own.estimate == q.estimate and own.standard_uncertainty == pytest.approx(0.2 * abs(expect))
    from fieldbudget.errors import BudgetFileError

    with pytest.raises(BudgetFileError, match="u_detection_fraction"):
        _m(sample=sample, line=dict(line, u_detection_fraction=1.5)).to_budget()


# --- curvature, susceptibility, units ------------------------------------------------------------

def test_curvature_u_from_the_sample_dimensions():
    sample = {"temperature_C": 22.0, "shape": "cylinder", "axis": "parallel", "diameter_m": 0.004,
              "length_m": 0.008, "u_diameter_m": 0.1e-3, "u_length_m": 0.2e-3}
    q = _m(sample=sample, curvature={"d2B_dz2_T_per_m2": 0.5}).to_budget().input("q_curv")
    # <q> = L^2/12 - R^2/4 = L^2/12 - D^2/16: dq/dL = L/6, dq/dD = -D/8 (differentiated by hand)
    L, D = 0.008, 0.004
    assert q.estimate == pytest.approx(L**2 / 12 - D**2 / 16, rel=1e-12)
    assert q.standard_uncertainty == pytest.approx(math.hypot(L / 6 * 0.2e-3, D / 8 * 0.1e-3), rel=1e-6)


def test_water_susceptibility_and_its_u():
    rv = constants.lookup_other("volume magnetic susceptibility of water")
    # Auer 1933 (mass susceptibility 0.72183e-6 cm^3/g, 20 degC) in SI: -4 pi rho chi_m, rho = 0.998207 g/cm^3
    # (from memory); CRC Handbook molar susceptibility -12.96e-6 cm^3/mol, M = 18.015 g/mol (from memory)
    auer = -4 * math.pi * 0.998207 * 0.72183e-6
    crc = -4 * math.pi * 0.998207 * 12.96e-6 / 18.015
    assert rv.value == pytest.approx(auer, abs=0.005e-6)
    assert rv.uncertainty == 0.02e-6 and rv.uncertainty >= abs(auer - crc) / math.sqrt(3)


def test_frequency_with_a_unit_and_implausible_fields():
    a = _m(frequency={"value_Hz": "63.871224 MHz", "u_Hz": "10 mHz"}).to_budget().input("f_read")
    assert a.estimate == pytest.approx(63871224.0, rel=1e-15) and a.standard_uncertainty == pytest.approx(0.01)
    with pytest.raises(BudgetFileError, match="a text with a unit such as"):
        _m(frequency={"value_Hz": "63.87 T", "u_Hz": 0.01})
    # a MHz number typed into a _Hz key: 63.87 Hz / 42.577 MHz/T = 1.5 uT
    r = _m(frequency={"value_Hz": 63.87, "u_Hz": 1e-6}, sample={"temperature_C": 22.0}).evaluate()
    (f,) = [w for w in r.findings if w.code == "nmr.frequency_implausible"]
    assert f.key == "frequency.value_Hz" and f.values["field_T"] == pytest.approx(1.5e-6, rel=1e-3)
    assert not [w for w in _m(sample={"temperature_C": 22.0}).evaluate().findings
                if w.code == "nmr.frequency_implausible"]
