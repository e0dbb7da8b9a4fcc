"""The reference answers of the shipped practice cases, checked against sources outside the project."""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

import pytest
import scipy.constants

from fieldbudget.procedure import load_procedure
from fieldbudget.procedure.practice import PracticeSession, practice_case

TEMPLATES = Path(__file__).resolve().parents[2] / "templates"


def _answer(template: str, case: str, component: str):
    return practice_case(load_procedure(TEMPLATES / template), case).decision(component).answer


def test_u_from_a_certificate_is_U_divided_by_k():
    # JCGM 100:2008 4.3.3: a stated expanded uncertainty U with coverage factor k gives u = U / k.
    assert _answer("nmr-reference-field.toml", "routine-1t", "timebase_u") == pytest.approx(1.0e-9 / 2)
    assert _answer("teslameter-calibration.toml", "certificate-k2", "zero_offset_u") == pytest.approx(6.0e-6 / 2)


def test_u_from_a_bound_is_a_over_sqrt3():
    # JCGM 100:2008 4.3.7: bounds +-a with no other knowledge, rectangular distribution, u = a / sqrt(3).
    a = 0.0035e-2  # the data sheet's +-0.0035 %/K of the teslameter cases
    for case in ("routine-sequence", "certificate-k2"):
        assert _answer("teslameter-calibration.toml", case, "temperature_coefficient_u") == \
            pytest.approx(a / math.sqrt(3), rel=1e-4)


def test_the_certificate_age_is_the_calendar_difference():
    # Python's datetime (proleptic Gregorian calendar) as the reference for counting days.
    assert _answer("nmr-reference-field.toml", "routine-1t", "days_since_calibration") == \
        (dt.date(2026, 11, 30) - dt.date(2026, 8, 4)).days
    assert _answer("nmr-reference-field.toml", "gradient-trap", "days_since_calibration") == \
        (dt.date(2026, 12, 1) - dt.date(2026, 8, 4)).days


def test_the_gradient_trap_spreads_the_line_wider_than_it_is():
    # Delta f = (gamma'_p / 2 pi) G d for a linear gradient across a sample of extent d (the Larmor
    # relation f = (gamma/2pi) B applied across the sample); gamma'_p/2pi from CODATA via scipy.constants.
    gamma = scipy.constants.physical_constants["shielded proton gyromag. ratio in MHz/T"][0] * 1e6
    spread = gamma * 6.0e-4 * 0.002
    assert spread == pytest.approx(51.09, abs=0.01)
    assert spread > 6.0  # the probe's own line width in the case: the reading is invalid
    s = PracticeSession(load_procedure(TEMPLATES / "nmr-reference-field.toml"), "gradient-trap")
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    (warning,) = [w for w in s.run.outcome.nmr_warnings if w.code == "nmr.gradient_invalid"]
    assert f"{spread:.3g} Hz" in warning and f"{6.0 / (gamma * 0.002):.3g} T/m" in warning
