"""`fieldbudget cmc`: the CMC table of the accreditation scope from the laboratory's records.

Checks: the claim of each range is recomputed here from the records' own JSON (U_i / |B_i| at its largest,
rounded *up* to two significant digits: ILAC P14:09/2020 asks that the CMC is not below any best measurement;
rounding up is common practice); records are read with their digest checked; every bad scope file ends in
one line and exit 2.  The demo laboratory and its records are invented.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from fieldbudget.cli import main
from fieldbudget.lab.scope import load_scope

from .conftest import EXAMPLE_LAB

SCOPE = EXAMPLE_LAB / "scope" / "cmc-nmr-reference-field.toml"


def _round_up(x: float, digits: int = 2) -> float:
    e = math.floor(math.log10(abs(x))) - digits + 1
    return math.ceil(x / 10 ** e - 1e-9) * 10 ** e


def test_the_example_scope_claims_the_largest_relative_U_of_its_records_rounded_up():
    scope = load_scope(SCOPE)
    names = __import__("tomllib").loads(SCOPE.read_text())["records"]
    pairs = []
    for name in names:
        doc = json.loads((SCOPE.parent / name).read_text())
        pairs.append((doc["results"]["gum"]["value"], doc["results"]["gum"]["U"]))
    for entry, (lo, hi) in zip(scope.table.entries, [(0.1, 0.5), (0.5, 1.2)]):
        inside = [u / abs(b) for b, u in pairs if lo <= abs(b) <= hi]
        assert entry.form == "relative" and entry.a == 0
        assert entry.b == pytest.approx(_round_up(max(inside)), rel=1e-12)
        assert all(entry.uncertainty_at(b) >= u for b, u in pairs if lo <= abs(b) <= hi)
    assert [d for _, d in scope.sources] == [json.loads((SCOPE.parent / n).read_text())["digest"] for n in names]
    assert all(met for _, met, _ in scope.table.p14_checklist())


def test_cmc_command_prints_writes_and_never_overwrites(tmp_path, capsys):
    assert main(["cmc", str(SCOPE)]) == 0
    out = capsys.readouterr().out
    assert "ILAC P14:09/2020 checklist" in out and "0.1 to 0.5 T" in out
    target = tmp_path / "cmc.md"
    assert main(["cmc", str(SCOPE), "--to", "md", "-o", str(target)]) == 0
    assert "| requirement | met | detail |" in target.read_text() and "SHA-256" in target.read_text()
    capsys.readouterr()
    assert main(["cmc", str(SCOPE), "--to", "csv", "-o", str(target)]) == 2
    assert "exists already" in capsys.readouterr().err
    assert main(["cmc", str(SCOPE), "--to", "json", "-o", str(SCOPE), "--force"]) == 2
    assert "scope file" in capsys.readouterr().err


def _scope(tmp_path: Path, **changes) -> Path:
    doc = {"format": "fieldbudget-cmc-scope/1", "measurand": "B, static field", "method": "proton NMR",
           "form": "absolute", "ranges_T": [[0.1, 2.0]],
           "measurements": [{"value_T": 1.0, "U_T": 2e-7, "source": "budget LMCL-B-1 (invented)"}]}
    doc.update(changes)
    doc = {k: v for k, v in doc.items() if v is not None}
    path = tmp_path / "scope.json"
    path.write_text(json.dumps(doc))
    return path


@pytest.mark.parametrize("changes, words", [
    ({"format": "other/1"}, "#/format: must be 'fieldbudget-cmc-scope/1'"),
    ({"measurand": " "}, "#/measurand: must be a text"),
    ({"method": None}, "#/method: must be a text"),
    ({"form": "log"}, "#/form: must be one of 'absolute', 'relative', 'linear'"),
    ({"ranges_T": [[0.1]]}, "#/ranges_T: must be a list of [lower, upper]"),
    ({"ranges_T": [[2.0, 0.1]]}, "0 <= lower < upper"),
    ({"colour": "blue"}, "#/colour: is not a key of a scope file"),
    ({"records": ["nothing.record.json"]}, "#/records/0: names 'nothing.record.json', which is not a file"),
    ({"measurements": [{"value_T": 1.0, "U_T": "small", "source": "x"}]}, "#/measurements/0/U_T: must be a finite"),
    ({"measurements": [{"value_T": 1.0, "U_T": 1e-7}]}, "#/measurements/0/source: must say which budget"),
    ({"measurements": [], "records": []}, "needs best measurements"),
])
def test_bad_scope_files_end_in_one_line(tmp_path, capsys, changes, words):
    assert main(["cmc", str(_scope(tmp_path, **changes))]) == 2
    err = capsys.readouterr().err
    assert words in err and err.count("\n") == 1 and "Traceback" not in err


def test_a_changed_record_is_refused(tmp_path, capsys):
    src = EXAMPLE_LAB / "archive" / "records" / "000015-6dece674653b5640.record.json"
    doc = json.loads(src.read_text())
    doc["results"]["gum"]["U"] /= 10  # a smaller U, edited by hand: the digest no longer matches
    rec = tmp_path / "edited.record.json"
    rec.write_text(json.dumps(doc, indent=2, sort_keys=True) + "\n")
    assert main(["cmc", str(_scope(tmp_path, records=["edited.record.json"]))]) == 2
    err = capsys.readouterr().err
    assert "digest" in err and err.count("\n") == 1


def test_calibration_records_give_one_best_measurement_per_point(tmp_path):
    from fieldbudget.files.calibration_file import CalibrationFile
    from fieldbudget.files.calibration_record import make_calibration_record, save_calibration_record

    example = Path(__file__).resolve().parents[2] / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"
    rec = make_calibration_record(CalibrationFile.from_file(example), created_utc="2026-11-24T09:00:00Z")
    save_calibration_record(rec, tmp_path / "cal.record.json")
    points = rec.results["summary"]["points"]
    fields = [p["reference_T"] for p in points]
    scope = load_scope(_scope(tmp_path, records=["cal.record.json"], measurements=None,
                              ranges_T=[[min(fields), max(fields)]]))
    (entry,) = scope.table.entries
    assert len(entry.points) == len(points)
    assert entry.a == pytest.approx(_round_up(max(p["U_T"] for p in points)), rel=1e-12)
