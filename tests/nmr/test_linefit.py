"""Line centre fitted from synthetic traces: centre, u, Cramer-Rao bound, chi2, warnings, errors.

The statistical checks run many seeded synthetic traces with a known centre
and white Gaussian noise.  Tolerances: over N traces the empirical standard
deviation s of the fitted centres has a relative standard error of about
1/sqrt(2(N - 1)) (normal theory, common practice); with N = 300 that is 4.1 %,
so the 10 % asked of u against s is a 2.4-sigma band.  The mean's bias check
uses 3 s/sqrt(N).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fieldbudget.errors import BudgetFileError, InputError
from fieldbudget.nmr import physics
from fieldbudget.nmr.linefit import Trace, fit_trace, read_trace

F0 = 42576412.21
N_SEEDS = 300


def swept(kind="absorption", *, n=801, fwhm=8.0, height=60.0, sigma=1.0, span_fwhm=16.0, seed=0, base=0.3,
          shape="lorentzian"):
    rng = np.random.default_rng(seed)
    f = F0 - 0.37 + np.linspace(-span_fwhm * fwhm / 2, span_fwhm * fwhm / 2, n)
    q = (f - F0) / (fwhm / 2)
    if shape == "gaussian":  # same FWHM, a different line shape
        y = height * np.exp(-math.log(2) * q * q)
    elif kind == "absorption":
        y = height / (1 + q * q)
    else:
        y = height * q / (1 + q * q)
    return Trace(f, y + base + rng.normal(0.0, sigma, n))


def fid(*, complex_=True, n=2048, dt=2e-4, offset=412.21, t2=0.04, amp=30.0, sigma=1.0, seed=0, t0=5e-4):
    rng = np.random.default_rng(seed)
    t = t0 + dt * np.arange(n)
    s = amp * np.exp(-t / t2) * np.exp(1j * (2 * np.pi * offset * t + 0.9))
    if complex_:  # complex white noise with E|w|^2 = sigma^2
        w = (rng.normal(0, 1, n) + 1j * rng.normal(0, 1, n)) * sigma / math.sqrt(2)
        return Trace(t, (s + w).real, (s + w).imag, axis="t_s")
    return Trace(t, s.real + rng.normal(0, sigma, n), axis="t_s")


def _many(make, truth, reference_hz=0.0, kind=None):
    centres, us, crbs = [], [], []
    for seed in range(N_SEEDS):
        fit = fit_trace(make(seed), kind, reference_hz=reference_hz)
        centres.append(fit.centre_hz - truth)
        us.append(fit.u_centre_hz)
        crbs.append(fit.crb_hz)
    return np.array(centres), np.array(us), np.array(crbs)


@pytest.mark.parametrize("kind", ["absorption", "dispersion"])
def test_swept_line_centre_u_and_bound_over_many_seeds(kind):
    d, u, crb = _many(lambda s: swept(kind, seed=s), F0, kind=kind)
    s = float(np.std(d, ddof=1))
    assert abs(np.mean(d)) < 3 * s / math.sqrt(N_SEEDS)         # no bias
    assert np.mean(np.abs(d) > 3 * u) < 0.01                    # 0.27 % expected outside 3 sigma
    assert np.mean(u) == pytest.approx(s, rel=0.10)             # u against the empirical scatter
    assert np.mean(u) == pytest.approx(np.mean(crb), rel=0.10)  # u against the Cramer-Rao bound
    # the per-trace u scatters little: s^2 from about 800 residuals
    assert np.std(u) / np.mean(u) < 0.05


@pytest.mark.parametrize("complex_", [True, False])
def test_fid_centre_u_and_bound_over_many_seeds(complex_):
    ref = 42576000.0
    d, u, crb = _many(lambda s: fid(complex_=complex_, seed=s), ref + 412.21, reference_hz=ref)
    s = float(np.std(d, ddof=1))
    assert abs(np.mean(d)) < 3 * s / math.sqrt(N_SEEDS)
    assert np.mean(np.abs(d) > 3 * u) < 0.01
    assert np.mean(u) == pytest.approx(s, rel=0.10)
    assert np.mean(u) == pytest.approx(np.mean(crb), rel=0.10)


def test_lorentzian_bound_tends_to_the_closed_form():
    # A wide, finely sampled noiseless line: the discrete bound equals Gamma (sigma/H) sqrt(2/(pi n))
    # (fieldbudget.nmr.physics.lorentzian_centre_uncertainty_hz) to the wings' share.
    fit = fit_trace(swept(n=8001, span_fwhm=200, sigma=1.0, seed=1))
    n_per_fwhm = 8001 / 200
    closed = physics.lorentzian_centre_uncertainty_hz(fit.fwhm_hz, fit.snr, n_per_fwhm)
    assert fit.crb_hz == pytest.approx(closed, rel=0.02)


def test_fid_bound_equals_the_closed_form_sum():
    # The complex FID's bound from the Fisher matrix equals sigma^2/(2A^2) S0/(S0 S2 - S1^2) over the
    # same samples (physics.fid_frequency_crb_hz with the record length), A at the first sample.
    tr = fid(seed=3, t0=0.0)
    fit = fit_trace(tr)
    t2 = math.pi * fit.fwhm_hz
    closed = physics.fid_frequency_crb_hz(fit.snr, 1.0 / t2, 2e-4, 2048 * 2e-4)
    assert fit.crb_hz == pytest.approx(closed, rel=1e-6)


def test_fitted_values_of_one_trace():
    fit = fit_trace(swept(seed=7))
    assert fit.kind == "absorption" and fit.n_points == 801 and fit.dof == 797
    assert fit.fwhm_hz == pytest.approx(8.0, abs=5 * fit.u_fwhm_hz)
    assert fit.snr == pytest.approx(60.0, rel=0.1)
    assert fit.chi2_reduced == pytest.approx(1.0, abs=0.2)
    assert fit.warnings == ()
    assert fit.ratio == pytest.approx(1.0, rel=0.02)


def test_wrong_line_shape_is_flagged_by_chi2():
    fit = fit_trace(swept(seed=2, shape="gaussian", sigma=0.2))
    assert fit.chi2_reduced > 2
    assert [w.code for w in fit.warnings] == ["line.chi2"]


def test_white_noise_is_not_flagged_over_seeds():
    flagged = sum(bool(fit_trace(swept(seed=s)).warnings) for s in range(100))
    assert flagged == 0


def test_narrow_sweep_and_coarse_sampling_are_flagged():
    assert "line.narrow_sweep" in [w.code for w in fit_trace(swept(span_fwhm=3, seed=1)).warnings]
    assert "line.coarse" in [w.code for w in fit_trace(swept(n=41, span_fwhm=16, seed=1)).warnings]


def test_real_fid_sign_note_and_centre_above_reference():
    fit = fit_trace(fid(complex_=False, seed=1), reference_hz=42576000.0)
    assert fit.centre_hz == pytest.approx(42576412.21, abs=5 * fit.u_centre_hz)
    assert "line.fid_sign" in [w.code for w in fit.warnings]


def test_complex_fid_below_reference_keeps_its_sign():
    fit = fit_trace(fid(offset=-250.0, seed=2), reference_hz=42576000.0)
    assert fit.centre_hz == pytest.approx(42576000.0 - 250.0, abs=5 * fit.u_centre_hz)


def test_to_dict_keys():
    d = fit_trace(swept(seed=0)).to_dict()
    for key in ("centre_Hz", "u_centre_Hz", "crb_Hz", "fwhm_Hz", "snr", "chi2_reduced", "n_points", "kind"):
        assert key in d
    assert d["kind"] == "absorption" and d["n_points"] == 801


def test_read_trace_csv(tmp_path):
    p = tmp_path / "t.csv"
    tr = swept(seed=4)
    p.write_text("# instrument note\nf_Hz,signal\n" + "".join(f"{float(a)!r},{float(b)!r}\n" for a, b in zip(tr.x, tr.signal)))
    back = read_trace(p)
    assert back.axis == "f_Hz" and back.n_points == 801
    assert back.digest.startswith("sha256:") and len(back.digest) == 71
    assert fit_trace(back).centre_hz == fit_trace(tr).centre_hz


@pytest.mark.parametrize("text, where", [
    ("f_Hz,signal\n1,2\n", "data rows"),
    ("f_Hz,value\n" + "1,2\n" * 10, "signal"),
    ("f_Hz,signal\n" + "1,2\n" * 9 + "1,x\n", "line 11"),
    ("f_Hz,signal,signal_im\n" + "1,2,3\n" * 10, "signal_im"),
])
def test_bad_trace_files(tmp_path, text, where):
    p = tmp_path / "bad.csv"
    p.write_text(text)
    with pytest.raises(BudgetFileError) as e:
        read_trace(p)
    assert where in str(e.value)


def test_bad_kind_and_reference():
    with pytest.raises(InputError, match="kind"):
        fit_trace(swept(), "fid")
    with pytest.raises(InputError, match="kind"):
        fit_trace(swept(), "gaussian")
    with pytest.raises(InputError, match="reference_Hz"):
        fit_trace(fid(), reference_hz=-1.0)


def test_uneven_fid_sampling_is_refused():
    tr = fid()
    t = np.array(tr.x)
    t[100] += 1e-5
    with pytest.raises(InputError, match="constant interval"):
        fit_trace(Trace(t, tr.signal, tr.signal_im, axis="t_s"))


def test_repr_and_html():
    fit = fit_trace(swept(seed=0))
    assert repr(fit).startswith("<LineFit absorption: centre = ")
    assert "Cramér–Rao" in fit._repr_html_()
    assert "u/CRB" in fit.text()
