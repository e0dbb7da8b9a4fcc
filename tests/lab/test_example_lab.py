"""The commands on the invented laboratory folder examples/lab, as the README and docs/lab.md show them."""

from __future__ import annotations

import json
import math
import re
import shlex

import pytest

from fieldbudget.cli import main

from .conftest import EXAMPLE_LAB, ROOT


def test_the_check_magnet_chart_of_the_example(capsys):
    assert main(["monitor", "chart", "--lab", str(EXAMPLE_LAB), "--series", "check-magnet", "--ewma", "0.2",
                 "--json"]) == 0
    chart = json.loads(capsys.readouterr().out)
    assert len(chart["values"]) == 24 and chart["baseline"] == 12 and chart["unit"] == "T"
    # centre and sigma recomputed here from the first twelve archived values (ISO 7870-2: MR-bar / 1.128)
    base = chart["values"][:12]
    mr = [abs(b - a) for a, b in zip(base, base[1:])]
    assert chart["centre"] == pytest.approx(sum(base) / 12, rel=1e-15)
    assert chart["sigma"] == pytest.approx(sum(mr) / 11 / 1.1283791670955126, rel=1e-12)
    # the invented series has an outlier in month 14 and nine months in a row above the centre to month 24
    assert [(v["rule"], v["index"] + 1) for v in chart["violations"]] == [(1, 14), (2, 24)]
    assert chart["labels"][13] == "2026-01-13" and all(u and u > 0 for u in chart["U"])
    assert chart["ewma"]["signals"] == []
    assert main(["monitor", "chart", "--lab", str(EXAMPLE_LAB), "--series", "check-magnet"]) == 0
    out = capsys.readouterr().out
    assert "test 1 (outside the limits): point 14" in out and "test 2 (run on one side): points 16 to 24" in out
    # the same series chosen by item and measurand
    assert main(["monitor", "chart", "--lab", str(EXAMPLE_LAB), "--item", "DEMO-CM1", "--measurand", "B0",
                 "--instrument", "PX-3", "--baseline", "12", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["values"] == chart["values"]


def test_the_reference_probe_against_the_second_probe(capsys):
    assert main(["monitor", "chart", "--lab", str(EXAMPLE_LAB), "--series", "probe-pair", "--json"]) == 0
    chart = json.loads(capsys.readouterr().out)
    # the differences recomputed here from the two archived series, day by day
    rows = {}
    for probe in ("PX-3", "PX-5"):
        assert main(["archive", "find", "--lab", str(EXAMPLE_LAB), "--item", "DEMO-CM1", "--instrument", probe,
                     "--json"]) == 0
        rows[probe] = {e["measured"]: e for e in json.loads(capsys.readouterr().out)}
    days = sorted(rows["PX-3"])
    assert chart["labels"] == days and len(days) == 24
    assert chart["values"] == [rows["PX-3"][d]["value"] - rows["PX-5"][d]["value"] for d in days]
    assert chart["U"] == [math.hypot(rows["PX-3"][d]["U"], rows["PX-5"][d]["U"]) for d in days]
    assert chart["violations"] == [] and chart["in_control"]
    # the same from the command line options
    assert main(["monitor", "chart", "--lab", str(EXAMPLE_LAB), "--item", "DEMO-CM1", "--measurand", "B0",
                 "--instrument", "PX-3", "--against-instrument", "PX-5", "--baseline", "12", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["values"] == chart["values"]


def test_drift_and_scores_of_the_example(capsys):
    assert main(["monitor", "drift", "FC-9", "--lab", str(EXAMPLE_LAB), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["drift"]["slope_per_day"] > 0 and doc["review"]["current_days"] == 365
    assert doc["review"]["verdict"] == "the current interval of 365 days is supported"
    assert main(["monitor", "scores", str(EXAMPLE_LAB / "comparisons" / "ilc-magnetic-field-2025.toml")]) == 0
    out = capsys.readouterr().out
    assert "E_n = +1.40 (unsatisfactory), zeta = +2.80 (questionable)" in out


@pytest.mark.parametrize("argv, words", [
    (["monitor", "chart", "--series", "nothing"], "check-magnet"),
    (["monitor", "chart"], "--series"),
    (["monitor", "chart", "--series", "check-magnet", "--baseline", "1"], "baseline"),
    (["monitor", "drift", "PX-3"], "--quantity"),
    (["monitor", "drift", "FC-9", "--limit", "-1"], "--limit"),
    (["monitor", "drift", "FC-9", "--k", "0"], "--k"),
    (["monitor", "chart", "--series", "check-magnet", "--ewma", "2"], "lambda"),
])
def test_monitor_errors_are_one_line(capsys, argv, words):
    assert main([*argv, "--lab", str(EXAMPLE_LAB)]) == 2
    err = capsys.readouterr().err
    assert words in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_readme_lab_commands_run(capsys, monkeypatch):
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = readme.split("## The laboratory: register, archive, monitoring", 1)[1].split("\n## ", 1)[0]
    block = re.search(r"```bash\n(.*?)```", section, flags=re.S).group(1)
    monkeypatch.chdir(ROOT)
    ran = 0
    for line in block.strip().splitlines():
        argv = shlex.split(line.split("#")[0])[1:]
        if "LAB" in argv:  # the archive add line writes; it is exercised in test_archive.py
            continue
        code = main(argv)
        capsys.readouterr()
        assert code in (0, 1), line   # register check may report an overdue instrument (exit 1)
        ran += 1
    assert ran == 4


def test_the_example_staff_records_verify_and_say_who_is_authorised(capsys):
    # the demo's training records (examples/lab/build_demo_competence.py): every one verifies against the
    # lab's trusted keys, and the list follows ISO/IEC 17025:2017 6.2.5/6.2.6 as the kit applies them
    assert main(["competence", "list", "--lab", str(EXAMPLE_LAB), "--date", "2026-12-01", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["not_counted"] == {}
    by = {(e["person"], e["procedure"]): e for e in doc["entries"]}
    assert by[("R. Okafor (invented)", "nmr-reference-field")]["authorised"] is True
    assert by[("M. Lindqvist (invented)", "teslameter-calibration")]["authorised"] is True
    trainee = by[("J. Abara (invented)", "nmr-reference-field")]
    assert trainee["authorised"] is False and trainee["backed_by"]["cases_passed"] == ["routine-1t"]
    for sub in ("practice", "authorisations"):
        for path in sorted((EXAMPLE_LAB / "competence" / sub).glob("*.json")):
            assert main(["verify", str(path), "--trusted", str(EXAMPLE_LAB / "keys")]) == 0, path
            capsys.readouterr()


def test_a_trainee_of_the_example_lab_works_under_supervision():
    from fieldbudget.procedure import load_procedure
    from fieldbudget.procedure.authorised import start_run

    proc = load_procedure(ROOT / "templates" / "nmr-reference-field.toml")
    run = start_run(proc, operator="J. Abara (invented)", lab=EXAMPLE_LAB, supervisor="R. Okafor (invented)",
                    day="2026-12-01")
    assert run.authorisation.status == "supervised" and run.authorisation.supervisor == "R. Okafor (invented)"
