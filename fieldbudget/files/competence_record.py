"""Training records: practice results and authorisations, digested and signed like measurement records.

Two kinds of document, each a JSON file with its own schema in ``schemas/``:

``fieldbudget-practice/1``
    One practice run's result (``practice``: the trainee, the procedure and
    case, passed or not, every difference explained, both budgets input by
    input).  Signed by the trainee (a key of role ``operator`` in the
    trainee's name) and countersigned by the supervisor (role ``approver``,
    another person).
``fieldbudget-authorisation/1``
    One person's authorisation for one procedure (by whom, from when, until
    when, and the practice results and supervised measurements behind it).
    Signed by the person who authorises (role ``approver``, the one named).

These are the records of ISO/IEC 17025:2017 6.2.5 (training, supervision,
competence) and 6.2.6 (authorisation).  The content digest is the one of
measurement records (:func:`fieldbudget.files.record.compute_digest`: SHA-256
of the canonical JSON without ``digest`` and ``signatures``) and a signature
is :func:`fieldbudget.files.signing.sign_digest` over it, so a countersignature
never changes the content.  Written by hand only as far as the two layouts
and their rules (who must sign in which role) go.
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping
from dataclasses import dataclass, replace
from functools import cache
from pathlib import Path
from typing import Any

from .._display import html_table
from .._io import parse_json, read_bytes
from ..errors import BudgetFileError, InputError, OutputError
from .record import Check, VerifyResult, _freeze, _jsonable, _thaw, compute_digest

__all__ = [
    "AUTHORISATION_FORMAT",
    "FORMATS",
    "PRACTICE_FORMAT",
    "SignedDocument",
    "document_format",
    "load_document",
    "make_authorisation",
    "make_practice_record",
    "save_document",
    "sign_document",
    "verify_document",
]

PRACTICE_FORMAT = "fieldbudget-practice/1"
AUTHORISATION_FORMAT = "fieldbudget-authorisation/1"
FORMATS = (PRACTICE_FORMAT, AUTHORISATION_FORMAT)
_SCHEMAS = {PRACTICE_FORMAT: "practice-record-1.json", AUTHORISATION_FORMAT: "authorisation-record-1.json"}
_WORDS = {PRACTICE_FORMAT: "practice record", AUTHORISATION_FORMAT: "authorisation record"}


@cache
def _schema(fmt: str) -> dict:
    return json.loads((Path(__file__).with_name("schemas") / _SCHEMAS[fmt]).read_text(encoding="utf-8"))


@dataclass(frozen=True)
class SignedDocument:
    """A practice or authorisation record: its content (read-only), digest and signatures."""

    content: Mapping
    digest: str
    signatures: tuple = ()
    path: str = ""

    @property
    def format(self) -> str:
        return str(self.content.get("format", ""))

    def to_dict(self) -> dict:
        d = _thaw(self.content)
        d["digest"] = self.digest
        d["signatures"] = _thaw(self.signatures)
        return d

    def digest_ok(self) -> bool:
        return compute_digest(self.content) == self.digest

    def signers(self, role: str) -> tuple[str, ...]:
        return tuple(str(s.get("name", "")) for s in self.signatures if s.get("role") == role)

    def __repr__(self) -> str:
        c = self.content
        if self.format == PRACTICE_FORMAT:
            p = c["practice"]
            what = (f"{p['trainee']} on {p['procedure']['id']} case {p['case']['id']!r}: "
                    f"{'passed' if p['passed'] else 'not passed'}")
        else:
            what = f"{c['person']} for {c['procedure']['id']} until {c['until']} (by {c['authorised_by']})"
        return f"<{_WORDS.get(self.format, 'document')} {what}, {len(self.signatures)} signature(s)>"

    def _repr_html_(self) -> str:
        rows = [("kind", _WORDS.get(self.format, self.format)), ("digest", self.digest),
                ("signatures", "; ".join(f"{s.get('name')} ({s.get('role')}), {s.get('time')}"
                                         for s in self.signatures) or "none")]
        return html_table(("", ""), rows, caption=repr(self), css_class="fb-table fb-competence")


def _document(content: Mapping, where: str) -> SignedDocument:
    import jsonschema

    plain = _jsonable(dict(content), where)
    errors = sorted(jsonschema.Draft202012Validator(_schema(plain["format"])).iter_errors(plain),
                    key=lambda e: [str(x) for x in e.absolute_path])
    if errors:
        e = errors[0]
        raise BudgetFileError(where, "#/" + "/".join(str(x) for x in e.absolute_path), e.message)
    return SignedDocument(_freeze(plain), compute_digest(plain))


def make_practice_record(result: Any) -> SignedDocument:
    """A practice record of ``result`` (a :class:`~fieldbudget.procedure.practice.PracticeResult` or its dict).

    The trainee must be named: the record is signed in that name.
    """
    d = result.to_dict() if hasattr(result, "to_dict") else dict(result)
    if not str(d.get("trainee", "")).strip():
        raise InputError("trainee", d.get("trainee"), "the trainee's name (the practice record is signed in it)",
                         "practice record")
    return _document({"format": PRACTICE_FORMAT, "practice": d}, "practice record")


def make_authorisation(person: str, procedure: Mapping, *, authorised_by: str, date_from: str, until: str,
                       practice: tuple[str, ...] = (), supervised: tuple[str, ...] = (), remarks: str = "") -> SignedDocument:
    """An authorisation of ``person`` for ``procedure`` (``{"id", "version", "name"}``), dates as ISO text.

    ``practice`` and ``supervised`` are the digests of the records behind it.
    """
    for name, v in (("person", person), ("authorised_by", authorised_by)):
        if not isinstance(v, str) or not v.strip():
            raise InputError(name, v, "a person's name", "authorisation")
    if person.strip() == authorised_by.strip():
        raise InputError("authorised_by", authorised_by, f"someone other than {person!r} (nobody authorises "
                                                         "themselves)", "authorisation")
    if until < date_from:
        raise InputError("until", until, f"a date on or after {date_from}", "authorisation")
    return _document({"format": AUTHORISATION_FORMAT, "person": person.strip(), "procedure": dict(procedure),
                      "authorised_by": authorised_by.strip(), "from": date_from, "until": until,
                      "backed_by": {"practice": list(practice), "supervised": list(supervised)},
                      "remarks": remarks}, "authorisation")


def _rules(doc: SignedDocument) -> list[tuple[str, str, str]]:
    """(role, name or "" for anyone but the subject, words) that must have signed the document."""
    if doc.format == PRACTICE_FORMAT:
        trainee = doc.content["practice"]["trainee"]
        return [("operator", trainee, "the trainee's signature"), ("approver", "", "the supervisor's countersignature")]
    return [("approver", doc.content["authorised_by"], "the signature of the person who authorises")]


def _subject(doc: SignedDocument) -> str:
    return doc.content["practice"]["trainee"] if doc.format == PRACTICE_FORMAT else doc.content["person"]


def sign_document(doc: SignedDocument, key: Any, *, passphrase: str | None = None,
                  time: str | None = None) -> SignedDocument:
    """The document with one more signature; the key's name and role must fit the document.

    A practice record takes the trainee's signature (role ``operator``, the
    trainee's own name) and then a supervisor's (role ``approver``, not the
    trainee); an authorisation takes the signature of the person named as
    authorising it (role ``approver``).
    """
    from .signing import SigningKey, load_signing_key, sign_digest

    where = doc.path or _WORDS.get(doc.format, "document")
    k = key if isinstance(key, SigningKey) else load_signing_key(key, passphrase)
    if not doc.digest_ok():
        raise InputError("digest", doc.digest, "the digest of the content (the file was changed after it was "
                                               "made; make a new one)", where)
    rules = {role: (name, words) for role, name, words in _rules(doc)}
    if k.role not in rules:
        raise InputError("key", f"{k.name} ({k.role})", f"a key of role {' or '.join(rules)}", where)
    name, words = rules[k.role]
    if name and k.name != name:
        raise InputError("key", f"{k.name} ({k.role})", f"the key of {name} ({words})", where)
    if not name and k.name == _subject(doc):
        raise InputError("key", f"{k.name} ({k.role})", f"someone other than {k.name} ({words})", where)
    if doc.format == PRACTICE_FORMAT and k.role == "approver" and not doc.signers("operator"):
        raise InputError("key", f"{k.name} ({k.role})", "used after the trainee has signed (sign first as "
                                                        "the trainee)", where)
    if any(s.get("fingerprint") == k.fingerprint and s.get("role") == k.role for s in doc.signatures):
        raise InputError("key", f"{k.name} ({k.role})", "a key that has not signed this document yet", where)
    return replace(doc, signatures=(*doc.signatures, _freeze(sign_digest(k, doc.digest, time))))


def _text(doc: SignedDocument) -> str:
    return json.dumps(doc.to_dict(), indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"


def save_document(doc: SignedDocument, path: str | os.PathLike, *, replace_signed_copy: bool = False) -> Path:
    """Write the document (atomic).  An existing file is replaced only by the same content with more signatures.

    ``replace_signed_copy`` is what a signing command passes: the file at
    ``path`` must then hold this very content (same digest).
    """
    from .atomic import atomic_write_text

    p = Path(path)
    if not doc.digest_ok():
        raise OutputError(str(path), "not saved: the digest does not match the content")
    if p.exists():
        old = document_format(p) in FORMATS and load_document(p, check=False).digest == doc.digest
        if not (replace_signed_copy and old):
            raise OutputError(str(path), "exists already; a training record is never replaced (choose another name)")
    return atomic_write_text(p, _text(doc))


def document_format(path: str | os.PathLike) -> str | None:
    """The ``format`` of a JSON file, or None when it is not a JSON object with one."""
    try:
        doc = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return doc.get("format") if isinstance(doc, dict) and isinstance(doc.get("format"), str) else None


def load_document(path: str | os.PathLike, *, check: bool = True) -> SignedDocument:
    """Read a practice or authorisation record; with ``check``, its digest must match its content."""
    return _parse(read_bytes(path, str(path)), str(path), check=check)


def _parse(data: bytes, where: str, *, check: bool = True) -> SignedDocument:
    raw = parse_json(data, where, what="training record")
    if not isinstance(raw, dict) or raw.get("format") not in FORMATS:
        got = raw.get("format") if isinstance(raw, dict) else type(raw).__name__
        raise BudgetFileError(where, "#/format", f"must be one of {', '.join(map(repr, FORMATS))} (got {got!r})")
    content = {k: v for k, v in raw.items() if k not in ("digest", "signatures")}
    doc = _document(content, where)
    sigs = raw.get("signatures", [])
    if not isinstance(sigs, list):
        raise BudgetFileError(where, "#/signatures", "must be a list")
    doc = replace(doc, digest=str(raw.get("digest", "")), signatures=_freeze(tuple(sigs)), path=where)
    if check and not doc.digest_ok():
        raise BudgetFileError(where, "#/digest", "does not match the content (the file was changed after it was "
                                                 "made)")
    return doc


def verify_document(doc: SignedDocument | str | os.PathLike, *, trusted: Any = None) -> VerifyResult:
    """Check a training record: schema, file form, digest, every signature, and who signed in which role.

    ``trusted`` is a folder of ``.pub`` files or a mapping fingerprint -> key,
    as for :func:`fieldbudget.files.record.verify_record`.
    """
    from .record import signature_checks

    checks: list[Check] = []
    where = ""
    if not isinstance(doc, SignedDocument):
        where = str(doc)
        raw = read_bytes(doc, where)  # read once: parsed, and compared with what the kit writes
        doc = _parse(raw, where, check=False)
        checks.append(Check("schema", "pass", f"follows {_SCHEMAS[doc.format]}"))
        same = raw.replace(b"\r\n", b"\n") == _text(doc).encode("utf-8")
        checks.append(Check("file form", "pass" if same else "fail",
                            "the file is byte for byte as fieldbudget writes this content" if same else
                            "the file's bytes differ from what fieldbudget writes (edited after it was written?)"))
    computed = compute_digest(doc.content)
    checks.append(Check("digest", "pass", f"SHA-256 {computed}") if computed == doc.digest else
                  Check("digest", "fail", f"stored {doc.digest or '(none)'} but the content gives {computed}"))

    sig_checks, results = signature_checks(doc.signatures, computed, trusted)
    checks.extend(c for c in sig_checks if not c.detail.startswith("UNSIGNED"))
    subject = _subject(doc)
    for role, name, words in _rules(doc):
        ok = [r for r in results if r.valid and r.role == role and (r.name == name if name else r.name != subject)]
        who = name or f"someone other than {subject}"
        checks.append(Check(words, "pass", f"{ok[0].name} ({role}) at {ok[0].time}") if ok else
                      Check(words, "fail", f"missing: a valid signature of {who} in role {role!r}"))
    if doc.format == PRACTICE_FORMAT:
        p = doc.content["practice"]
        consistent = bool(p["passed"]) == (len(p["differences"]) == 0)
        checks.append(Check("verdict", "pass" if consistent else "fail",
                            f"{'passed' if p['passed'] else 'not passed'} with {len(p['differences'])} difference(s)"
                            if consistent else "the verdict does not match the differences listed"))
    return VerifyResult(tuple(checks), where, results, trusted is not None)

