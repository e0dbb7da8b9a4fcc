"""Calibration records: what they keep, that verify re-evaluates all of it, and that changes are caught.

The digest is SHA-256 (FIPS 180-4) over the canonical JSON without digest and signatures, recomputed here
with hashlib; Monte Carlo re-runs are compared bit for bit (same seed, generator and numpy).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

from fieldbudget.errors import DigestMismatch
from fieldbudget.files.calibration_file import CalibrationFile
from fieldbudget.files.calibration_record import CalibrationRecord, serialise
from fieldbudget.files.record import canonical_bytes, load_record, make_record, save_record, verify_record

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"


@pytest.fixture(scope="module")
def rec():
    return make_record(CalibrationFile.from_file(EXAMPLE), monte_carlo=20_000, seed=5,
                       created_utc="2026-11-24T09:00:00Z", operator="R. Okafor (invented)")


def test_the_record_keeps_file_covariance_runs_curve_and_conformity(rec):
    d = rec.to_dict()
    assert d["kind"] == "fieldbudget calibration record" and d["certificate_id"] == "LMCL-C-2026-0419"
    assert d["calibration_file"] == json.loads(EXAMPLE.read_text(encoding="utf-8"))
    assert "budget" in d["resolved_file"]["points"][3]["reference"]  # the NMR file's budget is kept
    res = d["results"]
    assert len(res["covariance"]) == 5 and len(res["covariance"][0]) == 5
    for p in res["points"]:
        assert p["mc"]["seed"] == 5 and p["mc"]["trials"] == 20_000
    assert res["curve"]["fit"]["degree"] == 1 and len(res["conformity"]) == 5
    assert d["settings"]["monte_carlo"]["seed"] == 5
    content = {k: v for k, v in d.items() if k not in ("digest", "signatures")}
    assert d["digest"] == hashlib.sha256(canonical_bytes(content)).hexdigest()


def test_save_load_verify(rec, tmp_path):
    path = save_record(rec, tmp_path / "c.json")
    assert isinstance(load_record(path), CalibrationRecord)
    v = verify_record(path)
    assert v.passed, v.report()
    assert any(c.name == "results" and "last digit" in c.detail for c in v.checks)


def test_changed_content_is_caught(rec, tmp_path):
    path = save_record(rec, tmp_path / "c.json")
    doc = json.loads(path.read_text())
    doc["results"]["points"][0]["error"] *= 1.001
    path.write_text(json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n")
    with pytest.raises(DigestMismatch):
        load_record(path)
    v = verify_record(path)
    assert not v.passed and {c.name for c in v.failures} >= {"digest", "results"}


def test_a_forged_digest_does_not_hide_a_changed_result(rec, tmp_path):
    doc = rec.to_dict()
    doc["results"]["summary"]["points"][1]["U_T"] = 1e-6
    doc["digest"] = hashlib.sha256(canonical_bytes({k: v for k, v in doc.items()
                                                    if k not in ("digest", "signatures")})).hexdigest()
    forged = CalibrationRecord(doc)
    path = tmp_path / "f.json"
    path.write_text(serialise(forged))
    v = verify_record(path)
    assert [c.name for c in v.failures] == ["results"] and "U_T" in v.failures[0].detail


def test_edited_file_form_fails(rec, tmp_path):
    path = save_record(rec, tmp_path / "c.json")
    path.write_text(json.dumps(rec.to_dict(), sort_keys=True) + "\n")
    v = verify_record(path)
    assert [c.name for c in v.failures] == ["file form"]


def test_a_new_revision_names_the_previous_one_and_what_changed(rec):
    d = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    d["dates"]["issued"] = "2026-11-25"
    new = make_record(CalibrationFile.from_dict(d, where="x", base_dir=EXAMPLE.parent), monte_carlo=20_000, seed=5,
                      previous=rec)
    doc = new.to_dict()
    assert doc["revision"] == 2 and doc["previous_digest"] == rec.digest
    assert [c["what"] for c in doc["changes"]] == ["dates"]


def test_signed_at_creation_and_checked_by_verify(tmp_path):
    signing = pytest.importorskip("fieldbudget.files.signing")
    key = signing.new_key("I. Marchetti (invented)", "approver", tmp_path / "im.key")
    r = make_record(CalibrationFile.from_file(EXAMPLE), monte_carlo=10_000, seed=1)
    from fieldbudget.files.calibration_record import sign_calibration_record

    signed = sign_calibration_record(r, key)
    assert signed.digest == r.digest and len(signed.signatures) == 1
    path = save_record(signed, tmp_path / "s.json")
    v = verify_record(path)
    assert v.passed and any(c.name.startswith("signature of I. Marchetti") and c.status == "pass" for c in v.checks)
    doc = signed.to_dict()
    doc["signatures"][0]["role"] = "operator"  # the signed details changed: the signature no longer holds
    path.write_text(serialise(CalibrationRecord(doc)))
    assert not verify_record(path).passed


def test_the_record_is_an_immutable_value_with_readable_forms(rec):
    with pytest.raises(TypeError):
        rec.document["kind"] = "x"  # type: ignore[index]
    assert "\n" not in repr(rec) and "LMCL-C-2026-0419" in repr(rec)
    assert "<table" in rec._repr_html_()
    d = rec.to_dict()
    d["kind"] = "changed"
    assert rec.kind == "fieldbudget calibration record"
