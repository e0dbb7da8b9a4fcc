"""`fieldbudget competence ...` end to end: a practice run scored, signed twice, kept, authorised, listed."""

from __future__ import annotations

import json
from pathlib import Path

from fieldbudget.cli import main

NMR_TEMPLATE = Path(__file__).resolve().parents[2] / "templates" / "nmr-reference-field.toml"
TRAINEE, SUPERVISOR, MANAGER = "T. Rainee (invented)", "S. Upervisor (invented)", "Q. Manager (invented)"


def test_from_practice_to_authorisation_on_the_command_line(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "lab").mkdir()
    (tmp_path / "keys").mkdir()
    (tmp_path / "lab" / "settings.toml").write_text('[competence]\ntrusted_keys = "../keys"\n')
    for name, role, who in (("trainee", "operator", TRAINEE), ("supervisor", "approver", SUPERVISOR),
                            ("manager", "approver", MANAGER)):
        assert main(["key", "new", "--name", who, "--role", role, "-o", f"keys/{name}.key"]) == 0
    wrong = {"decisions": {"days_since_calibration": 119, "timebase_offset": 2.1e-9, "timebase_u": 5e-10},
             "issue": True}
    Path("wrong.json").write_text(json.dumps(wrong))
    assert main(["competence", "practice", str(NMR_TEMPLATE), "--case", "gradient-trap", "--trainee", TRAINEE,
                 "--answers", "wrong.json", "-o", "first.practice.json"]) == 1  # not passed: exit 1
    out = capsys.readouterr().out
    assert "not passed" in out and "NOT to issue" in out
    right = dict(wrong, issue=False)
    Path("right.json").write_text(json.dumps(right))
    assert main(["competence", "practice", str(NMR_TEMPLATE), "--case", "gradient-trap", "--trainee", TRAINEE,
                 "--answers", "right.json", "-o", "p.practice.json"]) == 0
    assert main(["sign", "p.practice.json", "--key", "keys/trainee.key"]) == 0
    assert main(["sign", "p.practice.json", "--key", "keys/supervisor.key"]) == 0
    capsys.readouterr()
    assert main(["verify", "p.practice.json", "--trusted", "keys"]) == 0
    assert "countersignature: S. Upervisor" in capsys.readouterr().out
    assert main(["competence", "add", "p.practice.json", "--lab", "lab"]) == 0
    assert main(["competence", "authorise", "--person", TRAINEE, "--procedure", str(NMR_TEMPLATE),
                 "--from", "2026-12-01", "--until", "2027-11-30", "--key", "keys/manager.key", "--lab", "lab"]) == 0
    capsys.readouterr()
    assert main(["competence", "list", "--lab", "lab", "--person", TRAINEE, "--date", "2027-01-04",
                 "--json"]) == 0
    (entry,) = json.loads(capsys.readouterr().out)["entries"]
    assert entry["authorised"] and entry["authorised_by"] == MANAGER and entry["until"] == "2027-11-30"
    assert entry["backed_by"] == {"practice_passed": 1, "practice_total": 1, "cases_passed": ["gradient-trap"],
                                  "supervised_measurements": 0}
    assert main(["competence", "list", "--lab", "lab", "--date", "2028-01-04"]) == 0
    assert "NOT authorised" in capsys.readouterr().out
    auth = next(Path("lab/competence/authorisations").glob("*.json"))
    assert main(["verify", str(auth), "--trusted", "keys"]) == 0
