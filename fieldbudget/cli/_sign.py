"""``fieldbudget sign RECORD --key APPROVER.key``: add a signature without changing the record's content."""

from __future__ import annotations

import argparse

from ..files.record import load_record, save_record, sign_record
from ._passphrase import add_passphrase_option, load_key

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("sign", help="add a signature (e.g. an approval) to a record",
                       description="Check the record's digest, sign its content digest with the key (signer, role, "
                                   "fingerprint, UTC time) and write the record back with the signature added. The "
                                   "content and the digest do not change.")
    p.add_argument("record", help="record file (JSON)")
    p.add_argument("--key", required=True, metavar="KEY", help="private key file (from `fieldbudget key new`)")
    add_passphrase_option(p)
    return p


def run(args: argparse.Namespace) -> int:
    from ..files import competence_record as training

    if training.document_format(args.record) in training.FORMATS:  # a practice or authorisation record
        doc = training.load_document(args.record)
        key = load_key(args, args.key)
        signed = training.sign_document(doc, key)
        training.save_document(signed, args.record, replace_signed_copy=True)
        print(f"{args.record}: signed by {key.name} ({key.role}), key {key.fingerprint[:16]}; "
              f"{len(signed.signatures)} signature(s); content digest unchanged {doc.digest[:12]}")
        return 0
    rec = load_record(args.record)
    key = load_key(args, args.key)
    signed = sign_record(rec, key)
    save_record(signed, args.record)
    print(f"{args.record}: signed by {key.name} ({key.role}), key {key.fingerprint[:16]}; "
          f"{len(signed.signatures)} signature(s); content digest unchanged {rec.digest[:12]}")
    return 0
