"""The equipment register: schema, calibration states, and measurement files that name instruments."""

from __future__ import annotations

import datetime as dt
import json
import shutil

import pytest

from fieldbudget.cli import main
from fieldbudget.errors import BudgetFileError, InputError
from fieldbudget.files.record import load_record, make_record
from fieldbudget.lab import lab_folder
from fieldbudget.lab.register import ExpiredCertificate, load_instrument, load_register, resolve_instruments
from fieldbudget.nmr.measurement import NMRMeasurement

from .conftest import EXAMPLE_LAB

MEASUREMENTS = EXAMPLE_LAB / "measurements"


def _desc(name="LMCL-CM1-2026-11.json"):
    return json.loads((MEASUREMENTS / name).read_text(encoding="utf-8"))


def test_the_example_register_loads_and_reports_states():
    reg = load_register(lab_folder(EXAMPLE_LAB))
    assert reg.ids() == ("CM-1", "FC-9", "HT-2", "PX-3", "PX-4", "PX-5", "TH-7")
    states = {r.id: r.state for r in reg.status_on(dt.date(2026, 12, 2), due_soon_days=30)}
    assert states == {"CM-1": "valid", "FC-9": "valid", "HT-2": "not in use", "PX-3": "valid", "PX-4": "overdue",
                      "PX-5": "valid", "TH-7": "due soon"}
    rows = {r.id: r for r in reg.status_on(dt.date(2026, 12, 2))}
    assert rows["TH-7"].days_left == (dt.date(2026, 12, 18) - dt.date(2026, 12, 2)).days == 16
    assert rows["PX-4"].problem and not rows["TH-7"].problem
    # the certificate in force on a day is the newest dated on or before it
    fc9 = reg.get("FC-9")
    assert fc9.certificate_on(dt.date(2026, 8, 3)).id == "NTFS-2025-0431"
    assert fc9.certificate_on(dt.date(2026, 8, 4)).id == "LMCL-FS-2026-0712"
    assert "<table" in reg._repr_html_() and "FC-9" in repr(reg)


@pytest.mark.parametrize("edit, pointer", [
    (lambda d: d.pop("serial"), "#"),
    (lambda d: d.update(status="broken"), "#/status"),
    (lambda d: d["certificates"][0].update(date="4 Aug 2026"), "#/certificates/0/date"),
    (lambda d: d["certificates"][0].update(values={"offset": "big"}), "#/certificates/0/values/offset"),
    (lambda d: d.update(colour="red"), "#"),
])
def test_a_register_file_against_the_schema(tmp_path, edit, pointer):
    doc = load_instrument(EXAMPLE_LAB / "register" / "FC-9.toml").to_dict()
    edit(doc)
    p = tmp_path / "X.json"
    p.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(BudgetFileError) as err:
        load_instrument(p)
    assert err.value.pointer == pointer and err.value.path == str(p)


def test_json_and_toml_entries_agree(tmp_path):
    a = load_instrument(EXAMPLE_LAB / "register" / "FC-9.toml")
    p = tmp_path / "FC-9.json"
    p.write_text(json.dumps(a.to_dict()), encoding="utf-8")
    b = load_instrument(p)
    assert a.to_dict() == b.to_dict()


def test_json_entries_are_read_strictly(tmp_path, capsys):
    """RFC 8259 4 leaves duplicate names undefined; a register entry (and a monitoring file) naming a
    key twice is refused, naming the key, instead of keeping the last value silently."""
    text = json.dumps(load_instrument(EXAMPLE_LAB / "register" / "FC-9.toml").to_dict())
    p = tmp_path / "FC-9.json"
    p.write_text(text[:-1] + ', "id": "FC-10"}', encoding="utf-8")
    with pytest.raises(BudgetFileError, match="duplicate key 'id'"):
        load_instrument(p)
    scores = tmp_path / "scores.json"
    scores.write_text('{"rounds": [], "rounds": []}', encoding="utf-8")
    assert main(["monitor", "scores", str(scores)]) == 2
    err = capsys.readouterr().err.strip()
    assert "duplicate key 'rounds'" in err and "\n" not in err


def test_a_due_date_before_the_certificate_is_refused(tmp_path):
    doc = load_instrument(EXAMPLE_LAB / "register" / "PX-4.toml").to_dict()
    doc["certificates"][0]["due"] = "2020-01-01"
    p = tmp_path / "PX-4.json"
    p.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(BudgetFileError, match="on or after"):
        load_instrument(p)


def test_values_source_and_days_since_calibration_come_from_the_register():
    reg = load_register(EXAMPLE_LAB / "register")
    resolved, notes = resolve_instruments(_desc(), reg)
    tb = resolved["timebase"]
    assert tb["offset"] == 2.1e-9 and tb["u"] == 5e-10 and tb["ageing_per_day"] == 3e-11
    assert tb["days_since_calibration"] == (dt.date(2026, 11, 10) - dt.date(2026, 8, 4)).days == 98
    assert "certificate LMCL-FS-2026-0712 of 2026-08-04" in tb["source"] and "instrument" not in tb
    pp = resolved["probe_perturbation"]
    assert pp == {"value": 0.0, "u": 1e-8, "report": "LMCL-PC-2025-031", "source": pp["source"]}
    # the documents by their identity, for the traceability chain
    assert (tb["certificate"], tb["calibration_date"]) == ("LMCL-FS-2026-0712", "2026-08-04") and tb["issuer"]
    assert "LMCL-PC-2025-031" in resolved["probe_perturbation"]["source"]
    assert [n.instrument for n in notes] == ["FC-9", "PX-3"] and all(n.state == "valid" for n in notes)
    assert resolved["metadata"]["register"][0]["certificate"] == "LMCL-FS-2026-0712"
    budget = NMRMeasurement.from_dict(resolved).to_budget()
    y_tb = next(q for q in budget.inputs if q.symbol == "y_tb")
    assert y_tb.estimate == 2.1e-9 and "LMCL-FS-2026-0712" in y_tb.source
    from fieldbudget.engine.traceability import traceability

    chain = traceability(budget)
    assert chain["y_tb"].text.startswith("calibration: certificate LMCL-FS-2026-0712, issued by ")
    assert chain["y_tb"].text.endswith("dated 2026-08-04") and "source given" not in chain["y_tb"].text
    assert chain["d_probe"].text == "laboratory characterisation, report LMCL-PC-2025-031"
    # the description given is not changed
    assert _desc()["timebase"] == {"instrument": "FC-9"}


def test_an_expired_certificate_is_refused_and_accepted_with_a_reason_that_reaches_the_record():
    reg = load_register(EXAMPLE_LAB / "register")
    desc = _desc("LMCL-NMR-2026-07-21-01.json")
    reason = desc["probe_perturbation"].pop("accept_expired")
    with pytest.raises(ExpiredCertificate) as err:
        resolve_instruments(desc, reg)
    assert "LMCL-PC-2024-009 was due on 2026-06-28" in str(err.value) and err.value.field == "probe_perturbation.instrument"
    resolved, notes = resolve_instruments(desc, reg, accept_expired={"PX-4": "probe PX-3 at repair"})
    (note,) = [n for n in notes if n.instrument == "PX-4"]
    assert note.state == "expired, accepted" and note.reason == "probe PX-3 at repair"
    assert note.finding().code == "lab.certificate_expired_accepted"
    rec = make_record(NMRMeasurement.from_dict(resolved).to_budget())
    md = rec.to_dict()["budget"]["metadata"]["measurement_metadata"]
    assert md["register"][1]["reason"] == "probe PX-3 at repair"
    assert "probe PX-3 at repair" in next(q for q in rec.budget["inputs"].values()
                                          if "PX-4" in str(q.get("source")))["source"]
    # the reason may also stand in the measurement file itself
    desc["probe_perturbation"]["accept_expired"] = reason
    resolved, notes = resolve_instruments(desc, reg)
    assert notes[1].reason == reason


@pytest.mark.parametrize("edit, words", [
    (lambda d: d["timebase"].update(instrument="FC-99"), "an instrument of the register"),
    (lambda d: d["timebase"].update(instrument="PX-3"), "supplies 'timebase'"),
    (lambda d: d["timebase"].update(instrument="HT-2"), "'retired'"),
    (lambda d: d["timebase"].update(offset=1e-9), "left out: certificate"),
    (lambda d: d["metadata"].pop("date"), "the measurement's date"),
    (lambda d: d["metadata"].update(date="2020-01-01"), "dated on or before"),
])
def test_bad_references_name_the_section(edit, words):
    reg = load_register(EXAMPLE_LAB / "register")
    desc = _desc()
    edit(desc)
    with pytest.raises(InputError, match=words) as err:
        resolve_instruments(desc, reg, where="cm1.json")
    assert str(err.value).startswith("cm1.json")


def test_nmr_command_resolves_from_the_lab(capsys, tmp_path, monkeypatch):
    monkeypatch.delenv("FIELDBUDGET_LAB", raising=False)
    src = MEASUREMENTS / "LMCL-NMR-2026-07-21-01.json"
    desc = json.loads(src.read_text(encoding="utf-8"))
    desc["probe_perturbation"].pop("accept_expired")
    f = tmp_path / "m.json"
    f.write_text(json.dumps(desc), encoding="utf-8")
    # without a laboratory folder: one line naming --lab, exit 2
    assert main(["nmr", str(f)]) == 2
    err = capsys.readouterr().err
    assert "--lab" in err and len(err.strip().splitlines()) == 1
    # expired: refused in one line naming the section and how to override
    assert main(["nmr", str(f), "--lab", str(EXAMPLE_LAB)]) == 2
    err = capsys.readouterr().err
    assert "probe_perturbation.instrument" in err and "--accept-expired PX-4=REASON" in err
    assert len(err.strip().splitlines()) == 1
    assert main(["nmr", str(f), "--lab", str(EXAMPLE_LAB), "--accept-expired", "PX-4"]) == 2
    assert "ID=REASON" in capsys.readouterr().err
    # accepted with a reason: the reason is in the record's remarks and metadata
    rec_path = tmp_path / "m.record.json"
    monkeypatch.setenv("FIELDBUDGET_LAB", str(EXAMPLE_LAB))
    code = main(["nmr", str(f), "--accept-expired", "PX-4=PX-3 at repair", "--record-out", str(rec_path),
                 "--operator", "R. Okafor (invented)"])
    out = capsys.readouterr().out
    assert code == 0 and "EXPIRED on 2026-06-28, used because: PX-3 at repair" in out
    rec = load_record(rec_path)
    assert "PX-3 at repair" in rec.remarks
    assert rec.budget["metadata"]["measurement_metadata"]["register"][1]["reason"] == "PX-3 at repair"
    # a record is never overwritten
    assert main(["nmr", str(f), "--accept-expired", "PX-4=again", "--record-out", str(rec_path)]) == 2
    assert "never overwritten" in capsys.readouterr().err
    # the record keeps the resolved measurement, so that verify re-builds it without the register
    from fieldbudget.files.record import verify_record

    check = verify_record(rec_path)
    assert check.passed and any(c.name == "measurement" and c.status == "pass" for c in check.checks)


def test_record_command_resolves_from_the_lab_like_nmr(capsys, tmp_path, monkeypatch):
    """`fieldbudget record` of a measurement naming register instruments takes --lab and --accept-expired
    as `fieldbudget nmr` does, and both give the same budget."""
    monkeypatch.delenv("FIELDBUDGET_LAB", raising=False)
    src = MEASUREMENTS / "LMCL-NMR-2026-07-21-01.json"
    assert main(["record", str(src), "-o", str(tmp_path / "a.json")]) == 2
    err = capsys.readouterr().err
    assert "--lab" in err and len(err.strip().splitlines()) == 1
    assert main(["record", str(src), "-o", str(tmp_path / "a.json"), "--lab", str(EXAMPLE_LAB)]) == 0
    assert main(["nmr", str(src), "--lab", str(EXAMPLE_LAB), "--record-out", str(tmp_path / "b.json")]) == 0
    a, b = load_record(tmp_path / "a.json"), load_record(tmp_path / "b.json")
    assert a.budget == b.budget and a.gum == b.gum
    assert a.budget["metadata"]["measurement_metadata"]["register"]


def test_register_commands(capsys, tmp_path):
    assert main(["register", "list", "--lab", str(EXAMPLE_LAB), "--date", "2026-12-02"]) == 0
    out = capsys.readouterr().out
    assert "TH-7" in out and "due soon" in out
    assert main(["register", "check", "--lab", str(EXAMPLE_LAB), "--date", "2026-12-02", "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["ok"] is False and {r["id"] for r in doc["instruments"] if r["state"] == "overdue"} == {"PX-4"}
    lab = tmp_path / "lab"
    shutil.copytree(EXAMPLE_LAB / "register", lab / "register")
    (lab / "register" / "PX-4.toml").unlink()
    assert main(["register", "check", "--lab", str(lab), "--date", "2026-12-02"]) == 0
    assert "every instrument in use has a valid certificate" in capsys.readouterr().out
    assert main(["register", "show", "FC-9", "--lab", str(EXAMPLE_LAB)]) == 0
    assert "NTFS-2022-0388" in capsys.readouterr().out
    for argv, words in ((["register", "check", "--lab", str(EXAMPLE_LAB), "--date", "02.12.2026"], "--date"),
                        (["register", "list", "--lab", str(tmp_path / "nowhere")], "--lab"),
                        (["register", "show", "XX", "--lab", str(EXAMPLE_LAB)], "instrument")):
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert words in err and len(err.strip().splitlines()) == 1


def test_the_nmr_draft_resolves_instruments_when_a_lab_is_set():
    from fieldbudget.drafts.nmr_draft import NMRDraft

    draft = NMRDraft(_desc(), lab=EXAMPLE_LAB)
    assert draft.current and [n.instrument for n in draft.register_notes] == ["FC-9", "PX-3"]
    y_tb = next(q for q in draft.budget.inputs if q.symbol == "y_tb")
    assert y_tb.estimate == 2.1e-9
    good = draft.budget
    # an expired certificate: the message sits beside the instrument field, the last good budget stays
    assert not draft.set("probe_perturbation.instrument", "PX-4")
    assert "LMCL-PC-2024-009 was due on 2026-06-28" in draft.fields["probe_perturbation.instrument"].error
    assert draft.last_good_budget is good
    with_reason = NMRDraft({**_desc(), "probe_perturbation": {"instrument": "PX-4"}}, lab=EXAMPLE_LAB,
                           accept_expired={"PX-4": "PX-3 at repair"})
    assert with_reason.current and with_reason.register_notes[1].reason == "PX-3 at repair"


def test_the_registered_timebase_certificate_agrees_with_the_certificate_file():
    # examples/data/certificate-LMCL-FS-2026-0712.toml is the certificate as issued: u = U / k
    import tomllib

    cert_file = tomllib.loads((EXAMPLE_LAB.parent / "data" / "certificate-LMCL-FS-2026-0712.toml").read_text())
    cert = load_register(EXAMPLE_LAB / "register").get("FC-9").latest
    assert cert.id == cert_file["certificate"] and cert.date.isoformat() == cert_file["calibration_date"]
    assert cert.values["offset"] == cert_file["result"]["fractional_frequency_offset"]
    assert cert.values["u"] == pytest.approx(cert_file["result"]["expanded_uncertainty"]
                                             / cert_file["result"]["coverage_factor"], rel=1e-15)
    assert cert.values["ageing_per_day"] == cert_file["stability"]["ageing_per_day"]
    assert (EXAMPLE_LAB / "register" / cert.file).resolve() == (EXAMPLE_LAB.parent / "data" /
                                                                "certificate-LMCL-FS-2026-0712.toml").resolve()
