"""Signed records: key files, signing, approvals, and verification against trusted keys.

Cryptography is the ``cryptography`` package's Ed25519 (RFC 8032); these tests check our use of it:
what is signed, what a signature binds, and how verify reports it.
"""

from __future__ import annotations

import dataclasses
import json
import os
import stat

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fieldbudget.cli import main
from fieldbudget.errors import BudgetFileError, DigestMismatch, InputError, OutputError, RecordError
from fieldbudget.files.record import (
    load_record,
    make_record,
    save_record,
    serialise,
    sign_record,
    verify_record,
)
from fieldbudget.files.signing import load_public_key, load_signing_key, new_key, signed_payload
from tests.report._budgets import mixed_budget

STAMP = "2026-11-30T09:15:00Z"


@pytest.fixture(scope="module")
def keys(tmp_path_factory):
    d = tmp_path_factory.mktemp("keys")
    trusted = d / "trusted"
    trusted.mkdir()
    op = new_key("R. Okafor", "operator", trusted / "okafor.key")
    ap = new_key("L. Brandt", "approver", trusted / "brandt.key", passphrase="quartz-lantern")
    stranger = new_key("M. Unknown", "approver", d / "stranger.key")
    return {"dir": trusted, "op": op, "ap": ap, "stranger": stranger, "root": d}


@pytest.fixture(scope="module")
def signed(keys):
    rec = make_record(mixed_budget(), operator="R. Okafor", created_utc=STAMP, sign=keys["op"])
    return sign_record(rec, keys["ap"], time="2026-11-30T10:00:00Z")


def _redigest(rec, **changes):
    new = dataclasses.replace(rec, **changes)
    return dataclasses.replace(new, digest=new.computed_digest())


def test_key_files(keys):
    key_file = keys["dir"] / "okafor.key"
    assert stat.S_IMODE(key_file.stat().st_mode) == 0o600  # private key readable by its owner only
    pub = json.loads((keys["dir"] / "okafor.pub").read_text())
    assert set(pub) >= {"name", "role", "public_key", "fingerprint", "created"}
    assert pub["name"] == "R. Okafor" and pub["role"] == "operator"
    assert load_public_key(keys["dir"] / "okafor.pub").fingerprint == keys["op"].fingerprint
    assert "PRIVATE" not in repr(keys["op"]) and "BEGIN" not in repr(keys["op"])


def test_passphrase_protected_key(keys):
    with pytest.raises(BudgetFileError, match="protected by a passphrase"):
        load_signing_key(keys["dir"] / "brandt.key")
    with pytest.raises(BudgetFileError, match="wrong passphrase"):
        load_signing_key(keys["dir"] / "brandt.key", "wrong")
    assert load_signing_key(keys["dir"] / "brandt.key", "quartz-lantern").role == "approver"
    assert "ENCRYPTED" in json.loads((keys["dir"] / "brandt.key").read_text())["private_key"]


def test_a_key_file_is_never_replaced(keys):
    with pytest.raises(OutputError, match="exists already"):
        new_key("R. Okafor", "operator", keys["dir"] / "okafor.key")
    with pytest.raises(InputError, match="role must be one of operator, approver"):
        new_key("X", "boss", keys["root"] / "x.key")


def test_signature_shape_and_approval_keeps_the_content(keys, signed):
    d = signed.to_dict()
    assert [s["role"] for s in d["signatures"]] == ["operator", "approver"]
    for s in d["signatures"]:
        assert set(s) == {"name", "role", "fingerprint", "time", "algorithm", "public_key", "signature"}
        assert s["algorithm"] == "Ed25519" and s["time"].endswith("Z")
    unsigned = make_record(mixed_budget(), operator="R. Okafor", created_utc=STAMP)
    assert signed.digest == unsigned.digest  # signatures are outside the digested content


def test_verify_with_trusted_keys_names_who_signed(keys, signed, tmp_path):
    p = save_record(signed, tmp_path / "r.json")
    result = verify_record(p, trusted=keys["dir"])
    assert result.passed, result.report()
    assert [(s.name, s.role, s.valid) for s in result.signatures] == [
        ("R. Okafor", "operator", True), ("L. Brandt", "approver", True)]
    assert "L. Brandt (approver) at 2026-11-30T10:00:00Z" in result.report()
    sig = result.to_dict()["signatures"][1]
    assert set(sig) == {"name", "role", "fingerprint", "time", "valid"}


def test_unknown_key_fails_with_trusted_list(keys, tmp_path):
    rec = make_record(mixed_budget(), created_utc=STAMP, sign=keys["stranger"])
    assert verify_record(rec).passed  # intact, but whose key it is is not checked without a list
    result = verify_record(rec, trusted=keys["dir"])
    assert not result.passed and "UNKNOWN key" in result.report()


def test_unsigned_record_says_so(tmp_path):
    rec = make_record(mixed_budget(), created_utc=STAMP)
    result = verify_record(rec)
    assert result.passed and not result.signed
    assert "UNSIGNED" in result.report() and "accidental damage only" in result.report()


@pytest.mark.parametrize("field,value", [
    ("name", "Someone Else"), ("role", "approver"), ("time", "2025-01-01T00:00:00Z"),
])
def test_a_signature_binds_its_claims(keys, signed, field, value):
    sigs = [dict(s) for s in signed.signatures]
    sigs[0][field] = value
    result = verify_record(dataclasses.replace(signed, signatures=tuple(sigs)), trusted=keys["dir"])
    assert not result.passed and "BROKEN" in result.report()


def test_a_content_change_with_recomputed_digest_breaks_every_signature(keys, signed):
    forged = _redigest(signed, operator="Someone Else")
    result = verify_record(forged, trusted=keys["dir"])
    assert not result.passed
    assert [s.valid for s in result.signatures] == [False, False]


def test_signing_a_tampered_record_or_twice_is_refused(keys, signed):
    with pytest.raises(DigestMismatch):
        sign_record(dataclasses.replace(signed, operator="x"), keys["op"])
    with pytest.raises(InputError, match="has not signed this record in this role"):
        sign_record(signed, keys["ap"])


def test_payload_is_canonical_json():
    p = signed_payload("ab" * 32, "A", "operator", "cd" * 32, STAMP)
    assert json.loads(p) == {"algorithm": "Ed25519", "content_digest": "ab" * 32, "fingerprint": "cd" * 32,
                             "name": "A", "role": "operator", "time": STAMP}


def test_cli_key_record_sign_verify(tmp_path, capsys, monkeypatch):
    budget = tmp_path / "b.json"
    budget.write_text(json.dumps(mixed_budget()))
    trusted = tmp_path / "keys"
    trusted.mkdir()
    assert main(["key", "new", "--name", "R. Okafor", "--role", "operator", "-o", str(trusted / "okafor.key")]) == 0
    monkeypatch.setenv("FB_TEST_PASS", "quartz-lantern")
    assert main(["key", "new", "--name", "L. Brandt", "--role", "approver", "-o", str(trusted / "brandt.key"),
                 "--passphrase-env", "FB_TEST_PASS"]) == 0
    rec = tmp_path / "r.json"
    assert main(["record", str(budget), "-o", str(rec), "--sign", str(trusted / "okafor.key")]) == 0
    assert main(["sign", str(rec), "--key", str(trusted / "brandt.key"), "--passphrase-env", "FB_TEST_PASS"]) == 0
    capsys.readouterr()
    assert main(["verify", str(rec), "--trusted", str(trusted), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [(s["name"], s["role"], s["valid"]) for s in out["signatures"]] == [
        ("R. Okafor", "operator", True), ("L. Brandt", "approver", True)]
    assert load_record(rec).digest == out["checks"][2]["detail"].split()[-1]


# -- property: nothing short of the keys lets a changed signed record verify -----------------------

@pytest.fixture(scope="module")
def signed_bytes(signed):
    return serialise(signed).encode("utf-8")


def _verifies(data: bytes, path, trusted) -> bool:
    path.write_bytes(data)
    try:
        return verify_record(path, trusted=trusted).passed
    except RecordError:
        return False


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(pos=st.integers(min_value=0), byte=st.integers(min_value=0, max_value=255))
def test_no_single_byte_change_verifies(signed_bytes, keys, tmp_path_factory, pos, byte):
    i = pos % len(signed_bytes)
    if signed_bytes[i] == byte:
        byte = (byte + 1) % 256
    data = signed_bytes[:i] + bytes([byte]) + signed_bytes[i + 1:]
    path = tmp_path_factory.mktemp("b") / "r.json"
    assert not _verifies(data, path, keys["dir"])


_FIELDS = st.sampled_from(["operator", "remarks", "created_utc", "revision"])


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(field=_FIELDS, text=st.text(min_size=1, max_size=12))
def test_no_content_change_with_recomputed_digest_verifies(signed, keys, field, text):
    value = {"revision": len(text) + 1, "created_utc": "2027-01-01T00:00:00Z"}.get(field, text)
    if getattr(signed, field) == value:
        value = value + "x" if isinstance(value, str) else value + 1
    forged = _redigest(signed, **{field: value})
    assert not verify_record(forged, trusted=keys["dir"]).passed


def test_single_byte_change_in_signature_base64_tail_is_caught(signed, keys, tmp_path):
    # Ed25519 signatures are 64 bytes: base64 "==" padding leaves stray bits in the last character.
    sig = signed.signatures[1]["signature"]
    last = sig.rstrip("=")[-1]
    alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
    other = alphabet[(alphabet.index(last) + 1) % 64]
    mangled = sig.rstrip("=")[:-1] + other + "=" * (len(sig) - len(sig.rstrip("=")))
    sigs = [dict(s) for s in signed.signatures]
    sigs[1]["signature"] = mangled
    p = save_record(dataclasses.replace(signed, signatures=tuple(sigs)), tmp_path / "r.json")
    assert not verify_record(p, trusted=keys["dir"]).passed
    assert os.path.exists(p)


# -- calibration records take the same signatures and the same trusted-key check -------------------

def test_calibration_record_signed_countersigned_and_checked_against_trusted_keys(tmp_path, capsys):
    """ISO/IEC 17025:2017 7.5 (attributable records): a calibration record is signed by its operator with
    `calibrate`/`record --sign`, countersigned with `fieldbudget sign`, and `verify --trusted` names both."""
    from pathlib import Path

    example = Path(__file__).resolve().parents[2] / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"
    trusted = tmp_path / "keys"
    trusted.mkdir()
    op = new_key("R. Okafor", "operator", trusted / "okafor.key")
    new_key("L. Brandt", "approver", trusted / "brandt.key")
    new_key("M. Unknown", "approver", tmp_path / "stranger.key")
    rec = tmp_path / "cal.json"
    assert main(["record", str(example), "-o", str(rec), "--sign", str(trusted / "okafor.key")]) == 0
    assert main(["sign", str(rec), "--key", str(trusted / "brandt.key")]) == 0
    assert main(["sign", str(rec), "--key", str(trusted / "brandt.key")]) == 2   # the same key, the same role
    capsys.readouterr()
    assert main(["verify", str(rec), "--trusted", str(trusted), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [(s["name"], s["role"], s["valid"]) for s in out["signatures"]] == [
        ("R. Okafor", "operator", True), ("L. Brandt", "approver", True)]
    assert load_record(rec).signatures[0]["fingerprint"] == op.fingerprint

    # a countersignature from a key outside the trusted folder fails the check that names it
    assert main(["sign", str(rec), "--key", str(tmp_path / "stranger.key")]) == 0
    capsys.readouterr()
    assert main(["verify", str(rec), "--trusted", str(trusted)]) == 1
    assert "M. Unknown" in capsys.readouterr().out
    assert verify_record(rec).passed                     # intact, when no trusted list is asked for
