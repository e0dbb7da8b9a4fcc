"""Invariants of the line and map fits (hypothesis): shifting or scaling the data moves the results as it should."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.nmr.fieldmap import FieldMap, fit_map
from fieldbudget.nmr.linefit import Trace, fit_trace

_RNG = np.random.default_rng(11)
_F = np.linspace(-40.0, 40.0, 801)
_Q = (_F - 0.3) / 4.0
_Y = 1.0 / (1 + _Q * _Q) + _RNG.normal(0, 0.02, _F.size)
_BASE = fit_trace(Trace(_F + 1e6, _Y))


@settings(max_examples=30, deadline=None)
@given(st.floats(1e3, 1e9), st.floats(1e-3, 1e3))
def test_line_fit_moves_with_the_frequency_axis_and_ignores_the_signal_scale(f_mid, scale):
    fit = fit_trace(Trace(_F + f_mid, scale * _Y))
    assert fit.centre_hz - f_mid == pytest.approx(_BASE.centre_hz - 1e6, abs=1e-6 * _BASE.u_centre_hz + 1e-9 * f_mid)
    assert fit.u_centre_hz == pytest.approx(_BASE.u_centre_hz, rel=1e-5)
    assert fit.snr == pytest.approx(_BASE.snr, rel=1e-6)
    assert fit.chi2_reduced == pytest.approx(_BASE.chi2_reduced, rel=1e-6)


_XYZ = np.random.default_rng(12).uniform(-0.02, 0.02, (300, 3))
_B = 1.0 + 2e-4 * _XYZ[:, 2] + 0.4 * (_XYZ[:, 2] ** 2 - (_XYZ[:, 0] ** 2 + _XYZ[:, 1] ** 2) / 2)


@settings(max_examples=30, deadline=None)
@given(st.floats(-0.01, 0.01), st.floats(-0.01, 0.01), st.floats(-0.01, 0.01))
def test_moving_the_map_moves_the_reference_point_with_it(dx, dy, dz):
    shift = np.array([dx, dy, dz])
    a = fit_map(FieldMap(_XYZ, _B), 2)
    b = fit_map(FieldMap(_XYZ + shift, _B), 2, about_m=tuple(shift))
    assert b.b0_t == pytest.approx(a.b0_t, rel=1e-12)
    assert b.gradient_t_per_m == pytest.approx(a.gradient_t_per_m, rel=1e-7, abs=1e-12)
    assert b.coefficients == pytest.approx(a.coefficients, rel=1e-7, abs=1e-12)
