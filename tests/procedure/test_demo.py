"""The demo scenario: packaged copies match the repository's, and ``fieldbudget demo`` writes its files."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.procedure.demo import DEMO_FILES, demo_file, demo_readings, demo_run

ROOT = Path(__file__).resolve().parents[2]
ORIGINALS = {
    "nmr-reference-field.toml": ROOT / "templates" / "nmr-reference-field.toml",
    "counter-readings-2026-11-18.csv": ROOT / "examples" / "data" / "counter-readings-2026-11-18.csv",
}


@pytest.mark.parametrize("name", DEMO_FILES)
def test_packaged_demo_files_equal_the_repository_files(name):
    assert demo_file(name).read_bytes() == ORIGINALS[name].read_bytes()


def test_demo_run_matches_the_example_measurement_file():
    # The example measurement JSON (examples/data) and the procedure run describe the same measurement.
    from fieldbudget.nmr.measurement import NMRMeasurement

    run = demo_run()
    assert run.complete and run.current
    by_file = NMRMeasurement.from_file(ROOT / "examples" / "data" / "nmr-measurement-2026-11-18.json").evaluate()
    assert run.result.estimate == pytest.approx(by_file.estimate, rel=1e-15)
    assert run.result.standard_uncertainty == pytest.approx(by_file.standard_uncertainty, rel=1e-12)
    assert len(demo_readings()) == 10
    assert run.check().accepted is True


def test_demo_command_writes_its_files(tmp_path, capsys):
    from fieldbudget.cli import main
    from fieldbudget.files.record import load_record, verify_record

    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "--trials", "2000"]) == 0
    printed = capsys.readouterr().out
    for name in ("demo-measurement.json", "demo-budget.json", "demo-record.json", "demo-acceptance.json",
                 "demo-report.html"):
        assert (out / name).is_file(), name
        assert f"{out / name}" in printed
    assert "invented data for the demo" in printed
    assert "[met] Relative expanded uncertainty at most 0.5 ppm" in printed
    record = load_record(out / "demo-record.json")          # digest checked on load
    assert record.procedure == {"name": "Reference field by proton NMR", "version": "1.0", "id": "nmr-reference-field"}
    assert record.operator == "R. Okafor (invented)"
    assert json.loads((out / "demo-acceptance.json").read_text())["accepted"] is True
    check = verify_record(out / "demo-record.json")      # an assessor's re-check of the demo record
    assert check.passed, [str(c) for c in check.failures]
    html = (out / "demo-report.html").read_text("utf-8")
    assert "Reference field by proton NMR" in html


def test_demo_command_bad_out_is_one_line(tmp_path, capsys):
    from fieldbudget.cli import main

    blocker = tmp_path / "file"
    blocker.write_text("x")
    assert main(["demo", "--out", str(blocker / "sub")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("fieldbudget demo: demo: --out must be a folder that can be written") and "\n" not in err


def test_demo_command_keeps_a_previous_demo_unless_told(tmp_path, capsys):
    """No command overwrites a record unless told to: a second demo into the same folder is refused."""
    from fieldbudget.cli import main

    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "--trials", "0"]) == 0
    before = (out / "demo-record.json").read_bytes()
    capsys.readouterr()
    assert main(["demo", "--out", str(out), "--trials", "0"]) == 2
    err = capsys.readouterr().err.strip()
    assert "add --replace" in err and "demo-measurement.json" in err and "\n" not in err
    assert (out / "demo-record.json").read_bytes() == before
    assert main(["demo", "--out", str(out), "--trials", "0", "--replace"]) == 0
