"""The teslameter-calibration procedure: the template, the built calibration, and its errors."""

from __future__ import annotations

import csv
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
import scipy.constants

from fieldbudget.procedure import ProcedureRun, load_procedure, procedure_from_dict

ROOT = Path(__file__).resolve().parents[2]
TEMPLATE = ROOT / "templates" / "teslameter-calibration.toml"
CSV = ROOT / "examples" / "data" / "hall-calibration-2026-11-19.csv"


@pytest.fixture(scope="module")
def run() -> ProcedureRun:
    return ProcedureRun(load_procedure(TEMPLATE))


def _points():
    by: dict[str, dict[str, list[float]]] = {}
    with open(CSV, newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            p = by.setdefault(row["point"], {"f": [], "R": [], "t": []})
            p["f"].append(float(row["nmr_frequency_Hz"]))
            p["R"].append(float(row["hall_reading_T"]))
            p["t"].append(float(row["probe_temperature_C"]))
    return by


def test_template_runs_and_is_accepted(run):
    assert run.complete and run.current, dict(run.errors)
    out = run.outcome
    assert [p.name for p in out.calibration.points] == ["P1", "P2", "P3", "P4", "P5"]
    assert out.curve is not None and len(out.conformity) == 5
    assert run.check().accepted is True
    d = run.measurement_dict()
    assert d["reference"]["codata"] == 2022 and d["columns"]["hall_reading_T"] == "hall_reading_T"


def test_first_order_errors_against_an_independent_calculation(run):
    """E_i (first order) = mean(R_i) - zero offset - B_ref,i, with B_ref from f by an independent formula.

    Sources: gamma'_p/2pi from scipy.constants (CODATA 2022, 'shielded proton gyromag. ratio in MHz/T');
    the water shielding temperature coefficient alpha = 10.36e-9 /K of Petley & Donaldson, Metrologia 20, 81
    (1984), abstract: f(t) = f(25 degC) [1 - alpha (t - 25 degC)]; f_true = f_read (1 + y_tb + y_age) with the
    timebase certificate's offset (the template's value) and the ageing correction estimate 0.
    """
    gamma = scipy.constants.value("shielded proton gyromag. ratio in MHz/T") * 1e6
    alpha, y_tb, zero = 10.36e-9, 2.1e-9, 3.0e-5
    points = _points()
    gum = {p.name: p for p in run.outcome.calibration.points}
    for name, p in points.items():
        t = float(np.mean(p["t"]))
        b_ref = float(np.mean(p["f"])) * (1 + y_tb) / (gamma * (1 - alpha * (t - 25.0)))
        e = float(np.mean(p["R"])) - zero - b_ref
        assert gum[name].gum.estimate == pytest.approx(e, abs=1e-12), name
        assert gum[name].reference == pytest.approx(b_ref, rel=1e-12)


def test_points_are_correlated_through_shared_inputs(run):
    r = run.outcome.calibration.correlation
    assert r.shape == (5, 5)
    assert all(0 < r[i, j] < 1 for i in range(5) for j in range(5) if i != j)


def test_monte_carlo_is_repeatable_with_the_fixed_seed(run):
    again = ProcedureRun(load_procedure(TEMPLATE))
    a = [p.u_error for p in run.outcome.calibration.points]
    b = [p.u_error for p in again.outcome.calibration.points]
    assert a == b


def test_missing_readings_file_is_placed_on_its_component(tmp_path):
    data = tomllib.loads(TEMPLATE.read_text("utf-8"))
    data["components"]["readings_file"]["value"] = "no-such-file.csv"
    r = ProcedureRun(procedure_from_dict(data, str(tmp_path / "lab.toml")))
    assert not r.current and r.result is None
    (cid, msg), = r.errors.items()
    assert cid == "readings_file"
    assert msg.startswith("values entered for procedure 'teslameter-calibration', at #/readings_csv: cannot read ")
    assert "no-such-file.csv" in msg and "No such file or directory" in msg


def test_wrong_column_is_named(tmp_path):
    data = tomllib.loads(TEMPLATE.read_text("utf-8"))
    data["components"]["column_hall"]["value"] = "hall_T"
    r = ProcedureRun(procedure_from_dict(data, str(TEMPLATE)))
    (_cid, msg), = r.errors.items()
    assert msg == ("values entered for procedure 'teslameter-calibration', at #/columns/hall_reading_T: must name "
                   "a column of 'hall-calibration-2026-11-19.csv' (columns: point, magnet_current_A, "
                   "nmr_frequency_Hz, hall_reading_T, probe_temperature_C, note) (got 'hall_T')")


def test_conformity_limit_at_and_beyond(run):
    # A tolerance narrower than the largest error makes that point non-conforming (JCGM 106:2012 8.2,
    # simple acceptance: accept when the estimate lies inside the tolerance interval).
    e_max = run.outcome.max_abs_error
    data = tomllib.loads(TEMPLATE.read_text("utf-8"))
    data["components"]["tolerance_relative"]["value"] = 0.0
    data["components"]["tolerance_absolute"]["value"] = e_max * 0.999
    r = ProcedureRun(procedure_from_dict(data, str(TEMPLATE)))
    v = next(v for v in r.check().verdicts if v.limit.id == "conformity")
    assert v.value == 1.0 and v.passed is False
    data["components"]["tolerance_absolute"]["value"] = e_max * 1.5
    r = ProcedureRun(procedure_from_dict(data, str(TEMPLATE)))
    v = next(v for v in r.check().verdicts if v.limit.id == "conformity")
    assert v.value == 0.0 and v.passed is True
    assert math.isfinite(r.outcome.max_expanded_uncertainty)
