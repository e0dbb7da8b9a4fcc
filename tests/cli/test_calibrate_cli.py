"""``fieldbudget calibrate`` and ``fieldbudget certificate`` on the documented example (invented lab)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from fieldbudget.cli import main

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"


def test_calibrate_json_has_the_named_keys(capsys):
    assert main(["calibrate", str(EXAMPLE), "--json", "--monte-carlo", "20000", "--seed", "7"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert set(d) >= {"points", "correlation", "curve", "conformity", "warnings"}
    p = d["points"][0]
    assert set(p) >= {"id", "reference_T", "indication_T", "error_T", "u_T", "dof", "U_T", "k",
                      "coverage_probability", "propagation", "validated"}
    assert p["propagation"] == "monte carlo" and isinstance(p["validated"], bool)
    assert set(d["curve"]) >= {"form", "degree", "coefficients", "covariance", "chi2", "birge_ratio"}
    assert set(d["conformity"][0]) == {"point", "rule", "decision", "p_c", "guard_band_T", "tolerance_T",
                                       "distribution"}
    assert len(d["correlation"]) == 5


def test_calibrate_record_verify_certificate(tmp_path, capsys):
    rec = tmp_path / "c.record.json"
    assert main(["calibrate", str(EXAMPLE), "--monte-carlo", "20000", "--seed", "7", "-o", str(rec)]) == 0
    assert main(["verify", str(rec)]) == 0
    assert main(["certificate", str(rec), "--to", "md", "-o", str(tmp_path / "c.md"), "--json"]) == 0
    out = capsys.readouterr().out
    check = json.loads(out[out.index('{\n  "certificate_id"'):])
    assert check["complete"] is True and all(set(i) >= {"item", "clause", "present"} for i in check["checklist"])
    assert "LMCL-C-2026-0419" in (tmp_path / "c.md").read_text(encoding="utf-8")
    # a record is never overwritten
    assert main(["calibrate", str(EXAMPLE), "-o", str(rec)]) == 2
    assert "does not exist yet" in capsys.readouterr().err


def test_record_command_takes_a_calibration_file(tmp_path, capsys):
    rec = tmp_path / "r.json"
    assert main(["record", str(EXAMPLE), "-o", str(rec)]) == 0
    assert json.loads(rec.read_text())["kind"] == "fieldbudget calibration record"


@pytest.mark.parametrize("argv, msg", [
    (["calibrate", "missing.json"], "missing.json: no such file"),
    (["calibrate", str(EXAMPLE), "--monte-carlo", "0"], "--monte-carlo must be a number of trials >= 1"),
    (["calibrate", str(EXAMPLE), "--sign", "k.key"], "--sign must be given with -o RECORD"),
    (["certificate", str(EXAMPLE), "-o", "x.md"], "not a calibration or several-output record"),
])
def test_bad_input_is_one_line_and_exit_2(argv, msg, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and msg in err and "Traceback" not in err


def test_calibration_file_with_bad_key_exits_2(tmp_path, capsys):
    d = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    d["points"][2]["readingz_T"] = [1]
    f = tmp_path / "bad.json"
    f.write_text(json.dumps(d))
    for name in ("nmr-measurement-2026-11-18.json", "counter-readings-2026-11-18.csv"):
        shutil.copy(EXAMPLE.parent / name, tmp_path)
    assert main(["calibrate", str(f)]) == 2
    assert "at #/points/2/readingz_T: unknown key" in capsys.readouterr().err
