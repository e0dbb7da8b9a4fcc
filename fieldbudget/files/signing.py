"""Signing keys and record signatures (Ed25519 through the ``cryptography`` package).

Each person who makes or approves records has a key pair.  The private key
file (``NAME.key``, mode 0600) is a small JSON document of our own holding
the owner's name and role and the private key as PKCS #8 PEM, encrypted with
the passphrase when one is given; the public file (``NAME.pub``) holds the
name, role, public key (base64 of the 32 raw bytes), fingerprint and creation
time.  A folder of ``.pub`` files is the list of trusted keys that
``fieldbudget verify --trusted DIR`` checks against.

The fingerprint is the SHA-256 (hex) of the raw public key.

What is signed.  A signature covers the record's *content digest* (SHA-256 of
the canonical record without ``digest`` and ``signatures``) together with the
signer's name, role, fingerprint, the UTC time and the algorithm, as the
canonical JSON of those six fields (:func:`signed_payload`).  So an approval
added later never changes the content, and none of the signature's own claims
(who, in which role, when) can be edited without breaking it.

Written by hand only as far as the file layout and the payload go; every
cryptographic operation is the ``cryptography`` package's (RFC 8032 Ed25519).
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import json
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .._display import utc_now as _utc_now
from .._io import read_json_file
from ..errors import BudgetFileError, InputError

__all__ = [
    "ALGORITHM",
    "SIGNER_ROLES",
    "SigningKey",
    "PublicKey",
    "SignatureCheck",
    "new_key",
    "load_signing_key",
    "load_public_key",
    "load_trusted",
    "sign_digest",
    "check_signature",
    "signed_payload",
    "fingerprint_of",
]

ALGORITHM = "Ed25519"
SIGNER_ROLES = ("operator", "approver")
KEY_FORMAT = "fieldbudget-signing-key/1"
PUB_FORMAT = "fieldbudget-public-key/1"
_ENTRY_KEYS = ("name", "role", "fingerprint", "time", "algorithm", "public_key", "signature")


def _b64(data: bytes) -> str:
    return base64.b64encode(data).decode("ascii")


def _unb64(text: Any, length: int) -> bytes | None:
    """Strict base64: the text must be exactly the canonical encoding of ``length`` bytes."""
    if not isinstance(text, str):
        return None
    try:
        raw = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError):
        return None
    # b64decode ignores stray bits in the last character; only the canonical text is accepted
    return raw if len(raw) == length and _b64(raw) == text else None


def fingerprint_of(public_raw: bytes) -> str:
    """SHA-256 (hex) of the 32 raw bytes of an Ed25519 public key."""
    return hashlib.sha256(public_raw).hexdigest()


def signed_payload(content_digest: str, name: str, role: str, fingerprint: str, time: str,
                   algorithm: str = ALGORITHM) -> bytes:
    """The bytes a record signature signs (canonical JSON of the six fields)."""
    doc = {"algorithm": algorithm, "content_digest": content_digest, "fingerprint": fingerprint, "name": name,
           "role": role, "time": time}
    return json.dumps(doc, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode("utf-8")


def _check_name_role(name: Any, role: Any, where: str) -> None:
    if not isinstance(name, str) or not name.strip() or "\n" in name:
        raise InputError("name", name, "the signer's name (one line of text)", where)
    if role not in SIGNER_ROLES:
        raise InputError("role", role, f"one of {', '.join(SIGNER_ROLES)}", where)


@dataclass(frozen=True)
class PublicKey:
    """A trusted public key: owner, role, key bytes (base64) and fingerprint."""

    name: str
    role: str
    public_key: str
    fingerprint: str
    created: str = ""
    path: str = ""

    def __repr__(self) -> str:
        return f"<PublicKey {self.name} ({self.role}) {self.fingerprint[:16]}>"

    def to_dict(self) -> dict:
        return {"format": PUB_FORMAT, "name": self.name, "role": self.role, "public_key": self.public_key,
                "fingerprint": self.fingerprint, "created": self.created}


@dataclass(frozen=True)
class SigningKey:
    """A loaded private key with its owner's name and role (the key itself never shows in ``repr``)."""

    name: str
    role: str
    fingerprint: str
    public_key: str
    created: str = ""
    _private: Any = field(default=None, repr=False, compare=False)

    def __repr__(self) -> str:
        return f"<SigningKey {self.name} ({self.role}) {self.fingerprint[:16]}>"

    def public(self) -> PublicKey:
        return PublicKey(self.name, self.role, self.public_key, self.fingerprint, self.created)

    def sign(self, data: bytes) -> bytes:
        return self._private.sign(data)


def _passphrase_bytes(passphrase: Any, where: str) -> bytes | None:
    if passphrase is None or passphrase == "":
        return None
    if isinstance(passphrase, bytes):
        return passphrase
    if not isinstance(passphrase, str):
        raise InputError("passphrase", type(passphrase).__name__, "text or None", where)
    return passphrase.encode("utf-8")


def new_key(name: str, role: str, path: str | os.PathLike, passphrase: str | None = None) -> SigningKey:
    """Make a key pair: write the private key to ``path`` (mode 0600) and the public key beside it as ``.pub``.

    Neither file may exist already (a key is never silently replaced).
    """
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from .atomic import atomic_write_text
    from .guard import OutputError

    _check_name_role(name, role, "key new")
    target = Path(path)
    if str(path) == "" or target.suffix == ".pub":
        raise OutputError(str(path), "must be the private key file to write, e.g. NAME.key (not empty, not .pub)")
    pub_path = target.with_suffix(".pub")
    for p in (target, pub_path):
        if p.exists():
            raise OutputError(str(p), "exists already; a key file is never replaced (choose another name)")
    pw = _passphrase_bytes(passphrase, "key new")
    private = Ed25519PrivateKey.generate()
    raw = private.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    enc = serialization.BestAvailableEncryption(pw) if pw else serialization.NoEncryption()
    pem = private.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, enc).decode("ascii")
    created = _utc_now()
    key = SigningKey(name.strip(), role, fingerprint_of(raw), _b64(raw), created, private)
    doc = {"format": KEY_FORMAT, "name": key.name, "role": role, "fingerprint": key.fingerprint,
           "public_key": key.public_key, "created": created, "encrypted": bool(pw), "private_key": pem}
    atomic_write_text(target, json.dumps(doc, indent=2, ensure_ascii=False) + "\n", mode=0o600)
    atomic_write_text(pub_path, json.dumps(key.public().to_dict(), indent=2, ensure_ascii=False) + "\n")
    return key


def load_signing_key(path: str | os.PathLike, passphrase: str | None = None) -> SigningKey:
    """Read a private key file written by :func:`new_key`; a wrong or missing passphrase is refused."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    where = str(path)
    doc = read_json_file(path, what="key file")
    if not isinstance(doc, dict) or doc.get("format") != KEY_FORMAT:
        raise BudgetFileError(where, "#/format", f"not a fieldbudget signing key (format must be {KEY_FORMAT!r})")
    for k in ("name", "role", "private_key"):
        if not isinstance(doc.get(k), str):
            raise BudgetFileError(where, f"#/{k}", "missing or not text")
    if doc["role"] not in SIGNER_ROLES:
        raise BudgetFileError(where, "#/role", f"must be one of {', '.join(SIGNER_ROLES)} (got {doc['role']!r})")
    pw = _passphrase_bytes(passphrase, where)
    try:
        private = serialization.load_pem_private_key(doc["private_key"].encode("ascii"), password=pw)
    except TypeError:
        if pw is None:
            raise BudgetFileError(where, "", "the key is protected by a passphrase; give it "
                                  "(--passphrase-env VAR names an environment variable holding it)") from None
        raise BudgetFileError(where, "", "the key is not protected by a passphrase; give none") from None
    except (ValueError, UnicodeEncodeError):
        reason = "wrong passphrase, or a damaged key" if pw else "damaged key (not a PKCS #8 PEM private key)"
        raise BudgetFileError(where, "#/private_key", reason) from None
    if not isinstance(private, Ed25519PrivateKey):
        raise BudgetFileError(where, "#/private_key", f"must be an {ALGORITHM} key")
    raw = private.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    fp = fingerprint_of(raw)
    if doc.get("fingerprint") not in (None, fp):
        raise BudgetFileError(where, "#/fingerprint", "does not match the private key (the file was edited)")
    return SigningKey(doc["name"], doc["role"], fp, _b64(raw), str(doc.get("created", "")), private)


def load_public_key(path: str | os.PathLike) -> PublicKey:
    """Read a ``.pub`` file; the fingerprint must be the key's own."""
    where = str(path)
    doc = read_json_file(path, what="public key file")
    if not isinstance(doc, dict) or doc.get("format") != PUB_FORMAT:
        raise BudgetFileError(where, "#/format", f"not a fieldbudget public key (format must be {PUB_FORMAT!r})")
    raw = _unb64(doc.get("public_key"), 32)
    if raw is None:
        raise BudgetFileError(where, "#/public_key", "must be the base64 of a 32-byte Ed25519 public key")
    if not isinstance(doc.get("name"), str) or doc.get("role") not in SIGNER_ROLES:
        raise BudgetFileError(where, "#/role", f"name must be text and role one of {', '.join(SIGNER_ROLES)}")
    if doc.get("fingerprint") != fingerprint_of(raw):
        raise BudgetFileError(where, "#/fingerprint", "does not match the public key")
    return PublicKey(doc["name"], doc["role"], doc["public_key"], doc["fingerprint"], str(doc.get("created", "")),
                     where)


def load_trusted(folder: str | os.PathLike) -> dict[str, PublicKey]:
    """The trusted keys of a folder: every ``*.pub`` in it, by fingerprint."""
    p = Path(folder)
    if not p.is_dir():
        raise BudgetFileError(str(folder), "", "must be a folder of trusted .pub files"
                              + (" (no such folder)" if not p.exists() else " (it is a file)"))
    out: dict[str, PublicKey] = {}
    for f in sorted(p.glob("*.pub")):
        k = load_public_key(f)
        out[k.fingerprint] = k
    return out


def sign_digest(key: SigningKey, content_digest: str, time: str | None = None) -> dict:
    """A signature entry (the record's ``signatures`` item) over ``content_digest``."""
    if not isinstance(key, SigningKey):
        raise InputError("key", type(key).__name__, "a SigningKey (load_signing_key) or a key file path", "sign")
    t = time or _utc_now()
    payload = signed_payload(content_digest, key.name, key.role, key.fingerprint, t)
    return {"name": key.name, "role": key.role, "fingerprint": key.fingerprint, "time": t, "algorithm": ALGORITHM,
            "public_key": key.public_key, "signature": _b64(key.sign(payload))}


@dataclass(frozen=True)
class SignatureCheck:
    """The outcome for one signature: who, in which role, when, and whether it holds.

    ``valid`` is True only when the signature is intact *and* (when a trusted
    list was given) its key is trusted under that name and role.  ``trusted``
    is None when no trusted list was given.
    """

    name: str
    role: str
    fingerprint: str
    time: str
    valid: bool
    detail: str
    trusted: bool | None = None

    def __repr__(self) -> str:
        return f"<SignatureCheck {self.name} ({self.role}) {self.time}: {'valid' if self.valid else 'INVALID'}>"

    def to_dict(self) -> dict:
        return {"name": self.name, "role": self.role, "fingerprint": self.fingerprint, "time": self.time,
                "valid": self.valid}


def check_signature(entry: Any, content_digest: str, trusted: dict[str, PublicKey] | None = None) -> SignatureCheck:
    """Check one signature entry against the content digest and, if given, the trusted keys."""
    from cryptography.exceptions import InvalidSignature
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    e = entry if isinstance(entry, dict) else {}
    name, role, fp, t = (str(e.get(k, "")) for k in ("name", "role", "fingerprint", "time"))

    def bad(why: str) -> SignatureCheck:
        return SignatureCheck(name, role, fp, t, False, why, None if trusted is None else False)

    if not isinstance(entry, dict) or sorted(entry) != sorted(_ENTRY_KEYS):
        return bad(f"malformed signature entry (keys must be {', '.join(_ENTRY_KEYS)})")
    if not all(isinstance(e[k], str) for k in _ENTRY_KEYS):
        return bad("malformed signature entry (every field must be text)")
    if e["algorithm"] != ALGORITHM:
        return bad(f"algorithm {e['algorithm']!r} is not {ALGORITHM}")
    raw = _unb64(e["public_key"], 32)
    sig = _unb64(e["signature"], 64)
    if raw is None or sig is None:
        return bad("public_key or signature is not canonical base64 of the right length")
    if fingerprint_of(raw) != fp:
        return bad("the fingerprint is not that of the public key given")
    try:
        Ed25519PublicKey.from_public_bytes(raw).verify(sig, signed_payload(content_digest, name, role, fp, t))
    except InvalidSignature:
        return bad("BROKEN: the signature does not match this content and these signer details")
    except ValueError:
        return bad("the public key is not a valid Ed25519 key")
    if trusted is None:
        return SignatureCheck(name, role, fp, t, True, "intact (not checked against a list of trusted keys)", None)
    known = trusted.get(fp)
    if known is None:
        return bad("UNKNOWN key: not among the trusted keys")
    if known.public_key != e["public_key"] or known.name != name or known.role != role:
        return bad(f"the trusted key {fp[:16]} belongs to {known.name} ({known.role}), not {name} ({role})")
    return SignatureCheck(name, role, fp, t, True, f"valid, trusted key {Path(known.path).name or fp[:16]}", True)
