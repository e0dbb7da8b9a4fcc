"""Calibration files: the checks (unknown keys, bad values named by place), and the example file.

The example (examples/data/, an invented lab, customer and instrument) is the one docs/calibration.md
documents; the test checks the documented JSON block is that file, and that it evaluates.
"""

from __future__ import annotations

import copy
import json
import re
from pathlib import Path

import pytest

from fieldbudget.errors import BudgetFileError
from fieldbudget.files.calibration_file import CalibrationFile, load_calibration

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"
DOC = ROOT / "docs" / "calibration.md"


def _base():
    return {"format": "fieldbudget-calibration/1",
            "points": [{"id": "A", "reference": {"value_T": 0.5, "u_T": 1e-6}, "readings_T": [0.50002, 0.50003]},
                       {"id": "B", "reference": {"value_T": 1.0, "u_T": 2e-6}, "readings_T": [1.00004, 1.00005]}],
            "resolution_T": 1e-5}


def _err(d) -> str:
    with pytest.raises(BudgetFileError) as info:
        CalibrationFile.from_dict(d, where="cal.json")
    return str(info.value)


def test_the_documented_example_is_the_example_file_and_it_evaluates():
    text = DOC.read_text(encoding="utf-8")
    blocks = re.findall(r"```json\n(.*?)```", text, flags=re.S)
    docs = [json.loads(b) for b in blocks if '"fieldbudget-calibration/1"' in b]
    assert docs, "docs/calibration.md shows the example calibration file"
    assert docs[0] == json.loads(EXAMPLE.read_text(encoding="utf-8"))
    out = load_calibration(EXAMPLE).evaluate()
    d = out.to_dict()
    assert [p["id"] for p in d["points"]] == ["P1", "P2", "P3", "P4", "P5"]
    assert d["curve"]["degree"] == 1 and len(d["conformity"]) == 5
    assert "Monte Carlo" in out.calibration.propagation  # the probe alignment matters here


@pytest.mark.parametrize("mutate, expect", [
    (lambda d: d.update(colour="red"), "cal.json, at #/colour: unknown key"),
    (lambda d: d.update(format="fieldbudget-budget/1"), "at #/format: must be 'fieldbudget-calibration/1'"),
    (lambda d: d["points"][0].update(extra=1), "at #/points/0/extra: unknown key"),
    (lambda d: d["points"][0]["reference"].update(u_T=0), "at #/points/0/reference/u_T: must be > 0"),
    (lambda d: d["points"][0]["reference"].update(unit="mT"), "at #/points/0/reference/unit: unknown key"),
    (lambda d: d["points"][1].update(id="A"), "at #/points/1/id: must be unique"),
    (lambda d: d["points"][0].update(readings_csv={"path": "x.csv", "column": "B"}),
     "at #/points/0/readings_T: give exactly one of readings_T"),
    (lambda d: d["points"][0].update(readings_T=[0.5, "x"]), "at #/points/0/readings_T/1: must be a finite number"),
    (lambda d: d.update(resolution_T=-1), "at #/resolution_T: must be > 0"),
    (lambda d: d.update(tilt={"u_rad": 0.01, "model": "three-angle"}), "tilt_model"),
    (lambda d: d.update(tilt={"angle": 0.01}), "at #/tilt/angle: unknown key"),
    (lambda d: d.update(decision_rule={"rule": "simple acceptance"}), "at #/tolerance: missing"),
    (lambda d: d.update(field_reversal=True), "at #/points/0/reversed_readings_T: missing"),
    (lambda d: d["points"][0].update(reference={"measurement": "nope.json"}), "no such NMR measurement file"),
    (lambda d: d.update(authorised_by=[{"function": "head"}]), "at #/authorised_by/0/name: missing"),
    (lambda d: d.update(points=[]), "at #/points: must be a non-empty list"),
])
def test_mistakes_are_named_by_place(mutate, expect):
    d = _base()
    mutate(d)
    assert expect in _err(d)


def test_bad_decision_rule_is_named_at_evaluation():
    d = _base()
    d.update(tolerance={"relative": 1e-4, "absolute_T": 1e-5}, decision_rule={"rule": "lenient"})
    with pytest.raises(BudgetFileError, match=r"#/decision_rule: .*rule"):
        CalibrationFile.from_dict(d, where="cal.json").evaluate()


def test_readings_csv_and_measurement_reference_are_resolved_into_the_content(tmp_path):
    src = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    d = copy.deepcopy(src)
    (tmp_path / "hall.csv").write_text("B_T\n" + "\n".join(str(v) for v in d["points"][0]["readings_T"]) + "\n")
    del d["points"][0]["readings_T"]
    d["points"][0]["readings_csv"] = {"path": "hall.csv", "column": "B_T"}
    for name in ("nmr-measurement-2026-11-18.json", "counter-readings-2026-11-18.csv"):
        (tmp_path / name).write_bytes((EXAMPLE.parent / name).read_bytes())
    cal = CalibrationFile.from_dict(d, where="x.json", base_dir=tmp_path)
    resolved, files = cal.resolved()
    assert resolved["points"][0]["readings_T"] == src["points"][0]["readings_T"]
    assert "budget" in resolved["points"][3]["reference"] and {f["path"] for f in files} == {
        "hall.csv", "nmr-measurement-2026-11-18.json"}
    a = cal.evaluate(seed=3, monte_carlo=20_000).to_dict()
    b = CalibrationFile.from_dict(json.loads(json.dumps(resolved, sort_keys=True)), where="r").evaluate(
        seed=3, monte_carlo=20_000).to_dict()
    assert a["points"] == b["points"] and a["curve"] == b["curve"]


def _gradient_map(path, b0, g):
    """A map of B_z = b0 + g x on a 5 x 5 x 5 grid (x, y, z in -10..10 mm): a linear field satisfies Laplace's
    equation, so the harmonic fit represents it exactly (common practice)."""
    lines = ["x_m,y_m,z_m,B_T,u_B_T"]
    steps = [-0.01, -0.005, 0.0, 0.005, 0.01]
    for x in steps:
        for y in steps:
            for z in steps:
                lines.append(f"{x},{y},{z},{b0 + g * x!r},1e-7")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def test_a_point_takes_its_gradient_from_a_field_map(tmp_path):
    """`field_map` at a point: G = (B(Hall) - B(NMR))/d from the fitted expansion, checked against the
    gradient the synthetic map was made with; the point then evaluates as with that gradient typed, and the
    resolved content carries the numbers and the map's SHA-256."""
    import hashlib

    d = _base()
    d["propagation"] = "gum"
    d["position_offset"] = {"value_m": 0.008, "u_m": 0.0002}
    _gradient_map(tmp_path / "map.csv", 0.5, 0.05)
    d["points"][0]["field_map"] = {"path": "map.csv", "nmr_position_m": [0, 0, 0], "hall_position_m": [0.008, 0, 0],
                                   "order": 2}
    cal = CalibrationFile.from_dict(d, where="cal.json", base_dir=tmp_path)
    resolved, files = cal.resolved()
    p0 = resolved["points"][0]
    assert "field_map" not in p0
    assert p0["gradient_T_per_m"] == pytest.approx(0.05, rel=1e-9)
    assert 0 < p0["u_gradient_T_per_m"] < 1e-4
    assert files == [{"path": "map.csv", "sha256": hashlib.sha256((tmp_path / "map.csv").read_bytes()).hexdigest(),
                      "used_for": "#/points/0/field_map"}]
    typed = copy.deepcopy(d)
    del typed["points"][0]["field_map"]
    typed["points"][0].update(gradient_T_per_m=p0["gradient_T_per_m"], u_gradient_T_per_m=p0["u_gradient_T_per_m"])
    a = cal.evaluate().to_dict()["points"]
    b = CalibrationFile.from_dict(typed, where="typed").evaluate().to_dict()["points"]
    assert a == b
    point = cal.calibration_set().points[0]
    assert point.gradient_t_per_m == pytest.approx(0.05, rel=1e-9)   # G d = 0.4 mT between NMR and Hall


@pytest.mark.parametrize("edit, words", [
    (lambda p: p.update(gradient_T_per_m=0.01), "either field_map or the typed gradient"),
    (lambda p: p["field_map"].pop("hall_position_m"), "hall_position_m: missing"),
    (lambda p: p["field_map"].update(hall_position_m=[0.004, 0, 0]), "position_offset.value_m must be that distance"),
    (lambda p: p["field_map"].update(path="nope.csv"), "field_map/path"),
])
def test_field_map_mistakes_are_named_by_place(tmp_path, edit, words):
    d = _base()
    d["position_offset"] = {"value_m": 0.008, "u_m": 0.0002}
    _gradient_map(tmp_path / "map.csv", 0.5, 0.05)
    d["points"][0]["field_map"] = {"path": "map.csv", "nmr_position_m": [0, 0, 0], "hall_position_m": [0.008, 0, 0],
                                   "order": 2}
    edit(d["points"][0])
    with pytest.raises(BudgetFileError) as info:
        CalibrationFile.from_dict(d, where="cal.json", base_dir=tmp_path).calibration_set()
    assert words in str(info.value) and "\n" not in str(info.value)
