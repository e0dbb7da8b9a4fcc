"""Training records end to end: practice record signed and countersigned, kept, authorisation, checks at use."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.errors import InputError, OutputError
from fieldbudget.files import competence_record as cr
from fieldbudget.files.record import verify_record
from fieldbudget.files.signing import new_key
from fieldbudget.lab.competence import Competence
from fieldbudget.procedure import load_procedure
from fieldbudget.procedure.authorised import start_run
from fieldbudget.procedure.practice import PracticeSession

NMR_TEMPLATE = Path(__file__).resolve().parents[2] / "templates" / "nmr-reference-field.toml"
TRAINEE, SUPERVISOR, MANAGER = "T. Rainee (invented)", "S. Upervisor (invented)", "Q. Manager (invented)"
READINGS = "42576412.10 42576412.22 42576412.26"


@pytest.fixture(scope="module")
def procedure():
    return load_procedure(NMR_TEMPLATE)


@pytest.fixture
def keys(tmp_path):
    d = tmp_path / "keys"
    d.mkdir()
    return {"trainee": new_key(TRAINEE, "operator", d / "trainee.key"),
            "supervisor": new_key(SUPERVISOR, "approver", d / "supervisor.key"),
            "manager": new_key(MANAGER, "approver", d / "manager.key"),
            "trainee-approver": new_key(TRAINEE, "approver", d / "trainee-approver.key"), "dir": d}


def _lab(tmp_path, settings: str = "") -> Path:
    lab = tmp_path / "lab"
    lab.mkdir(exist_ok=True)
    (lab / "settings.toml").write_text(settings, encoding="utf-8")
    return lab


def _practice(procedure, passed: bool = True, trainee: str = TRAINEE):
    s = PracticeSession(procedure, "gradient-trap", trainee=trainee)
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    s.decide_issue(not passed)  # the trap: the right verdict is not to issue
    return s.submit()


def _signed(procedure, keys, tmp_path, name="p.practice.json", passed=True) -> Path:
    doc = cr.make_practice_record(_practice(procedure, passed))
    doc = cr.sign_document(cr.sign_document(doc, keys["trainee"]), keys["supervisor"])
    return cr.save_document(doc, tmp_path / name)


def test_the_practice_record_is_signed_countersigned_and_verified(procedure, keys, tmp_path):
    path = _signed(procedure, keys, tmp_path)
    result = verify_record(path, trusted=keys["dir"])  # what `fieldbudget verify --trusted` runs
    assert result.passed, result.report()
    names = {c.name: c.status for c in result.checks}
    assert names["the trainee's signature"] == "pass" and names["the supervisor's countersignature"] == "pass"
    assert [s.role for s in result.signatures] == ["operator", "approver"]


def test_a_changed_practice_record_fails_verification(procedure, keys, tmp_path):
    path = _signed(procedure, keys, tmp_path)
    doc = json.loads(path.read_text())
    doc["practice"]["passed"] = not doc["practice"]["passed"]
    path.write_text(json.dumps(doc, indent=2, sort_keys=True) + "\n")
    failed = {c.name for c in verify_record(path, trusted=keys["dir"]).failures}
    assert {"digest", "verdict"} <= failed and any(n.startswith("signature of") for n in failed)


def test_without_the_countersignature_the_record_does_not_verify(procedure, keys):
    doc = cr.sign_document(cr.make_practice_record(_practice(procedure)), keys["trainee"])
    result = cr.verify_document(doc, trusted=keys["dir"])
    assert [c.name for c in result.failures] == ["the supervisor's countersignature"]


def test_who_may_sign_in_which_role(procedure, keys):
    doc = cr.make_practice_record(_practice(procedure))
    with pytest.raises(InputError, match="after the trainee has signed"):
        cr.sign_document(doc, keys["supervisor"])
    with pytest.raises(InputError, match="the key of T. Rainee"):
        cr.sign_document(doc, new_key("Someone Else", "operator", Path(keys["dir"]) / "else.key"))
    signed = cr.sign_document(doc, keys["trainee"])
    with pytest.raises(InputError, match="someone other than T. Rainee"):
        cr.sign_document(signed, keys["trainee-approver"])  # nobody countersigns their own practice
    with pytest.raises(InputError, match="not signed this document yet"):
        cr.sign_document(signed, keys["trainee"])
    with pytest.raises(InputError, match="trainee's name"):
        cr.make_practice_record({**_practice(procedure).to_dict(), "trainee": ""})


def test_a_training_record_is_never_replaced(procedure, keys, tmp_path):
    path = _signed(procedure, keys, tmp_path)
    other = cr.make_practice_record(_practice(procedure, passed=False))
    with pytest.raises(OutputError, match="never replaced"):
        cr.save_document(other, path, replace_signed_copy=True)


def test_from_practice_to_authorisation(procedure, keys, tmp_path):
    lab = _lab(tmp_path, '[competence]\ntrusted_keys = "../keys"\n')
    comp = Competence(lab)
    with pytest.raises(InputError, match="passed, countersigned practice run"):
        comp.authorise(TRAINEE, procedure, key=keys["manager"], until="2027-12-31")
    comp.add(_signed(procedure, keys, tmp_path, "failed.practice.json", passed=False))
    with pytest.raises(InputError, match="passed, countersigned practice run"):
        comp.authorise(TRAINEE, procedure, key=keys["manager"], until="2027-12-31")
    kept = comp.add(_signed(procedure, keys, tmp_path))
    assert kept.parent == lab / "competence" / "practice"
    with pytest.raises(InputError, match="already in the competence records"):
        comp.add(tmp_path / "p.practice.json")
    (entry,) = comp.entries(TRAINEE, "2026-12-01")
    assert (entry.practice_passed, entry.practice_total, entry.authorised) == (1, 2, False)
    path = comp.authorise(TRAINEE, procedure, key=keys["manager"], date_from="2026-12-01", until="2027-11-30")
    assert verify_record(path, trusted=keys["dir"]).passed
    auth = cr.load_document(path)
    assert auth.content["authorised_by"] == MANAGER and auth.content["until"] == "2027-11-30"
    assert len(auth.content["backed_by"]["practice"]) == 1
    (entry,) = comp.entries(TRAINEE, "2027-01-15")
    assert entry.authorised and entry.authorised_by == MANAGER and entry.until == "2027-11-30"
    (late,) = comp.entries(TRAINEE, "2028-01-01")
    assert not late.authorised and late.lapsed and "NOT authorised" in late.status
    assert comp.check(TRAINEE, procedure.id, day="2027-01-15").status == "authorised"


def test_an_authorisation_placed_by_hand_without_a_valid_signature_authorises_nobody(procedure, keys, tmp_path):
    """ISO/IEC 17025:2017 6.2.6 asks for authorisation records: an unsigned one (digest consistent, so it loads)
    dropped into the folder is not counted, and `list` names it."""
    lab = _lab(tmp_path, '[competence]\ntrusted_keys = "../keys"\n')
    forged = cr.make_authorisation(TRAINEE, {"id": procedure.id, "version": procedure.version, "name": procedure.name},
                                   authorised_by=MANAGER, date_from="2026-01-01", until="2030-12-31")
    target = lab / "competence" / "authorisations" / "forged.authorisation.json"
    target.parent.mkdir(parents=True)
    cr.save_document(forged, target)
    comp = Competence(lab)
    assert comp.check(TRAINEE, procedure.id, day="2027-01-15").status != "authorised"
    assert str(target) in comp.not_counted and "missing" in comp.not_counted[str(target)]


def test_an_authorisation_whose_practice_record_is_gone_authorises_nobody(procedure, keys, tmp_path):
    # ISO/IEC 17025:2017 6.2.5 (records of training retained): an authorisation is only as good as the
    # records it cites; with its practice record removed from the competence folder it no longer counts
    lab = _lab(tmp_path, '[competence]\ntrusted_keys = "../keys"\n')
    comp = Competence(lab)
    kept = comp.add(_signed(procedure, keys, tmp_path))
    path = comp.authorise(TRAINEE, procedure, key=keys["manager"], date_from="2026-12-01", until="2027-11-30")
    assert Competence(lab).check(TRAINEE, procedure.id, day="2027-01-15").status == "authorised"
    kept.unlink()
    again = Competence(lab)
    assert again.check(TRAINEE, procedure.id, day="2027-01-15").status != "authorised"
    assert "the practice record" in again.not_counted[str(path)] and "backed_by" in again.not_counted[str(path)]


def test_an_untrusted_key_is_refused_when_the_lab_names_its_keys(procedure, keys, tmp_path):
    lab = _lab(tmp_path, '[competence]\ntrusted_keys = "trusted"\n')
    (lab / "trusted").mkdir()
    with pytest.raises(InputError, match="UNKNOWN key"):
        Competence(lab).add(_signed(procedure, keys, tmp_path))


def _authorised_lab(procedure, keys, tmp_path, settings: str) -> Competence:
    comp = Competence(_lab(tmp_path, settings))
    comp.add(_signed(procedure, keys, tmp_path, "sup.practice.json"))
    # the supervisor's own authorisation (they trained earlier; their practice is kept the same way)
    sup_doc = cr.make_practice_record(_practice(procedure, trainee=SUPERVISOR))
    sup_key = new_key(SUPERVISOR, "operator", Path(keys["dir"]) / "supervisor-op.key")
    sup_doc = cr.sign_document(cr.sign_document(sup_doc, sup_key), keys["manager"])
    comp.add(cr.save_document(sup_doc, tmp_path / "s.practice.json"))
    comp.authorise(SUPERVISOR, procedure, key=keys["manager"], date_from="2026-01-01", until="2030-12-31")
    return comp


def test_an_unauthorised_operator_is_flagged_and_the_record_keeps_the_flag(procedure, keys, tmp_path):
    comp = _authorised_lab(procedure, keys, tmp_path, "")
    run = start_run(procedure, operator="N. Ewcomer (invented)", lab=comp.lab, supervisor=SUPERVISOR)
    assert run.authorisation.status == "supervised" and run.authorisation.supervisor == SUPERVISOR
    assert "SUPERVISED by S. Upervisor" in run.authorisation.message
    run.set("frequency_readings", READINGS)
    rec = run.make_record()
    ident = rec.extra["identification"]
    assert ident["authorisation"] == "supervised" and ident["supervisor"] == SUPERVISOR
    assert ident["operator"] == "N. Ewcomer (invented)"
    assert "run supervised by S. Upervisor" in rec.remarks
    # the supervised measurement goes into the competence records too, once the supervisor has signed it
    from fieldbudget.files.record import save_record, sign_record

    unsigned = save_record(rec, tmp_path / "m.record.json")
    with pytest.raises(InputError, match="signed by its supervisor 'S. Upervisor"):
        comp.add(unsigned)
    comp.add(save_record(sign_record(rec, keys["supervisor"]), tmp_path / "m-signed.record.json"))
    (entry,) = comp.entries("N. Ewcomer (invented)")
    assert entry.supervised == 1 and not entry.authorised


def test_a_supervised_record_placed_by_hand_counts_only_with_the_supervisors_signature(procedure, keys, tmp_path):
    # ISO/IEC 17025:2017 6.2.5 (records of supervision): the supervisor vouches for the run by signing it
    from fieldbudget.files.record import save_record, sign_record

    comp = _authorised_lab(procedure, keys, tmp_path, "")
    run = start_run(procedure, operator="N. Ewcomer (invented)", lab=comp.lab, supervisor=SUPERVISOR)
    run.set("frequency_readings", READINGS)
    rec = run.make_record()
    folder = comp.root / "supervised"
    folder.mkdir(parents=True, exist_ok=True)
    save_record(rec, folder / "unsigned.record.json")
    save_record(sign_record(rec, keys["trainee-approver"]), folder / "wrong-signer.record.json")
    assert Competence(comp.lab).supervised_records() == ()
    fresh = Competence(comp.lab)
    fresh.entries()
    assert set(map(Path, fresh.not_counted)) == {folder / "unsigned.record.json", folder / "wrong-signer.record.json"}
    assert all("signed by its supervisor" in why for why in fresh.not_counted.values())
    save_record(sign_record(rec, keys["supervisor"]), folder / "signed.record.json")
    assert [r[0] for r in Competence(comp.lab).supervised_records()] == ["N. Ewcomer (invented)"]
    # a signature that no longer matches the content (the record edited after signing) counts for nothing
    doc = json.loads((folder / "signed.record.json").read_text())
    doc["remarks"] += " edited"
    (folder / "signed.record.json").write_text(json.dumps(doc))
    assert Competence(comp.lab).supervised_records() == ()


def test_supervision_needs_an_authorised_supervisor(procedure, keys, tmp_path):
    comp = _authorised_lab(procedure, keys, tmp_path, "")
    with pytest.raises(InputError, match="name a supervisor who is authorised"):
        start_run(procedure, operator="N. Ewcomer (invented)", lab=comp.lab)
    with pytest.raises(InputError, match="is not authorised for it"):
        start_run(procedure, operator="N. Ewcomer (invented)", lab=comp.lab, supervisor="N. Obody (invented)")


def test_the_lab_may_refuse_unauthorised_operators(procedure, keys, tmp_path):
    comp = _authorised_lab(procedure, keys, tmp_path, '[competence]\nunauthorised = "refuse"\n')
    with pytest.raises(InputError) as err:
        start_run(procedure, operator="N. Ewcomer (invented)", lab=comp.lab, supervisor=SUPERVISOR)
    assert err.value.field == "operator" and "settings refuse the run" in str(err.value)
    run = start_run(procedure, operator=SUPERVISOR, lab=comp.lab)
    assert run.authorisation.status == "authorised"
    run.set("frequency_readings", READINGS)
    assert run.make_record().extra["identification"]["authorisation"] == "authorised"


def test_the_operator_cannot_be_swapped_after_the_check(procedure, keys, tmp_path):
    comp = _authorised_lab(procedure, keys, tmp_path, "")
    run = start_run(procedure, operator=SUPERVISOR, lab=comp.lab)
    run.set("frequency_readings", READINGS)
    run.set("operator", "Someone Else")
    with pytest.raises(InputError, match="whose authorisation was checked"):
        run.make_record()


def test_bad_settings_name_the_setting(tmp_path):
    with pytest.raises(InputError, match=r"\[competence\]: unauthorised must be one of 'supervised', 'refuse'"):
        Competence(_lab(tmp_path, '[competence]\nunauthorised = "warn"\n'))


TESLA_TEMPLATE = NMR_TEMPLATE.with_name("teslameter-calibration.toml")


def test_a_supervised_teslameter_calibration_keeps_the_flag_in_its_record_and_counts(keys, tmp_path):
    # the calibration record keeps who calibrated under which authorisation as structured identification,
    # not only in its remark (ISO/IEC 17025:2017 6.2.5 d and e, 6.2.6; clause letters from memory)
    from fieldbudget.files.record import save_record, sign_record

    tesla = load_procedure(TESLA_TEMPLATE)
    comp = Competence(_lab(tmp_path))
    s = PracticeSession(tesla, "routine-sequence", trainee=SUPERVISOR)
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    s.decide_issue(s.case.answer.issue)
    sup_key = new_key(SUPERVISOR, "operator", Path(keys["dir"]) / "supervisor-op.key")
    doc = cr.sign_document(cr.sign_document(cr.make_practice_record(s.submit()), sup_key), keys["manager"])
    comp.add(cr.save_document(doc, tmp_path / "tesla.practice.json"))
    comp.authorise(SUPERVISOR, tesla, key=keys["manager"], date_from="2026-01-01", until="2030-12-31")
    run = start_run(tesla, operator="N. Ewcomer (invented)", lab=comp.lab, supervisor=SUPERVISOR)
    rec = run.make_record()
    d = rec.to_dict()
    assert d["kind"] == "fieldbudget calibration record" and d["schema_version"] == "1.1"
    assert d["identification"]["authorisation"] == "supervised" and d["identification"]["supervisor"] == SUPERVISOR
    assert d["identification"]["operator"] == "N. Ewcomer (invented)"
    assert d["acceptance"]["accepted"] is True and d["acceptance"]["verdicts"]
    assert verify_record(save_record(rec, tmp_path / "cal.record.json")).passed
    comp.add(save_record(sign_record(rec, keys["supervisor"]), tmp_path / "cal-signed.record.json"))
    (entry,) = [e for e in Competence(comp.lab).entries("N. Ewcomer (invented)")]
    assert entry.procedure == tesla.id and entry.supervised == 1
