"""CalibrationDraft: points as text, the calibration layer's per-point errors, curve and conformity.

Check values for a point with no other terms: E = mean(readings) - B_ref
(the error of indication, VIM 4.11 / EA-4/02 M; the calibration layer's
model), u^2(E) = s^2/n + u^2(B_ref) + (r/2)^2/3 with r the display
resolution (JCGM 100:2008 4.2.3, 5.1.2 and F.2.2.1 for the resolution).
"""

import math
import statistics

import pytest

from fieldbudget.drafts import CalibrationDraft

READINGS = [0.50014, 0.50016, 0.50015, 0.50017, 0.50013]


def draft(**settings):
    pts = [{"name": f"P{i}", "reference_t": b, "u_reference_t": 1e-8, "readings_t": [r - 0.5 + b for r in READINGS]}
           for i, b in enumerate((0.2, 0.5, 1.0), 1)]
    return CalibrationDraft(pts, {"instrument": "teslameter HT-4 (invented)", "resolution_t": 1e-5, **settings})


def test_point_error_and_its_uncertainty():
    d = draft()
    assert d.current, d.errors
    p = d.calibration.points[1]
    assert p.error == pytest.approx(statistics.fmean(READINGS) - 0.5, abs=1e-12)
    u = math.sqrt(statistics.variance(READINGS) / 5 + 1e-8**2 + (1e-5 / 2) ** 2 / 3)
    assert p.u_error == pytest.approx(u, rel=1e-9)
    assert d.result is d.calibration.points[0].gum  # the selected point's budget


def test_curve_and_conformity():
    d = draft(tolerance_t=1e-4, tolerance_source="spec sheet (invented)")
    assert d.curve.fit.degree == 1
    # errors of 1.5e-4 T against +-1e-4 T: none conforms under simple acceptance (JCGM 106:2012 8.2)
    assert [c.accepted for c in d.conformity] == [False, False, False]
    d.set(None, "tolerance_t", "1e-3")
    assert all(c.accepted for c in d.conformity)


def test_bad_values_beside_their_fields_last_good_kept():
    d = draft()
    good = d.calibration
    d.set(1, "u_reference_t", "-1e-8")
    assert d.calibration is good and list(d.errors) == ["points[1].u_reference_t"]
    d.set(1, "u_reference_t", "1e-8")
    d.set(0, "readings_t", "0.2 zero")
    assert list(d.errors) == ["points[0].readings_t"] and d.points[0]["readings_t"].text == "0.2 zero"
    d.set(0, "readings_t", "0.20015 0.20016")
    d.set(None, "resolution_t", "-1e-5")
    assert list(d.errors) == ["resolution_t"]


def test_add_remove_select_points():
    d = draft()
    i = d.add_point(name="P4", reference_t=1.5, u_reference_t=1e-8, readings_t=[1.50015, 1.50016])
    assert d.current and len(d.calibration.points) == 4
    d.select(i)
    assert d.result.measurand.symbol == "E_4"
    d.remove_point(0)
    assert [p.name for p in d.calibration.points] == ["P2", "P3", "P4"]


def test_repr():
    assert repr(draft()) == "<CalibrationDraft teslameter HT-4 (invented), 3 points, current>"
