"""``fieldbudget record FILE -o RECORD``: evaluate a budget, NMR measurement or calibration file and archive its record.

The kind of file is recognised by its ``format`` (see
:mod:`fieldbudget.files.measurement_record`).  An existing file at ``-o`` is
never replaced, except by its own next revision: ``-o R --previous R --reason
TEXT`` (same measurand).
"""

from __future__ import annotations

import argparse

from ..errors import InputError, is_note
from ..files.guard import check_output, same_file
from ..files.measurement_record import record_file
from ..files.record import load_record, save_record
from ._labopts import add_register_options, resolve_measurement
from ._passphrase import add_passphrase_option, load_key

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("record", help="evaluate a budget file and write its hash-stamped record",
                       description="Evaluate a budget file (GUM, and Monte Carlo with --monte-carlo) and write a "
                                   "record: budget, results, settings, software versions, operator, UTC time "
                                   "stamp and a SHA-256 digest, signed with --sign. The file is written "
                                   "atomically and an existing file is never replaced, except by its own next "
                                   "revision (-o R --previous R --reason TEXT).")
    p.add_argument("file", help="budget file, NMR measurement file or calibration file (JSON)")
    p.add_argument("-o", "--output", required=True, metavar="RECORD", help="record file to write (JSON)")
    p.add_argument("--monte-carlo", type=int, metavar="M", default=None,
                   help="also propagate by Monte Carlo with M trials (JCGM 101) and record the run")
    p.add_argument("--seed", type=int, default=None,
                   help="seed of the Monte Carlo generator (drawn and recorded when omitted)")
    p.add_argument("--operator", default="", help="who made the evaluation")
    p.add_argument("--remarks", default="", help="free remarks kept in the record")
    p.add_argument("--previous", metavar="OLD_RECORD", default=None,
                   help="the previous revision of the same measurand: the new record gets the next revision "
                        "number and a list of what changed (needs --reason)")
    p.add_argument("--reason", default="", help="why this revision was made (goes into the change log)")
    p.add_argument("--sign", metavar="KEY", default=None, help="sign the record with this private key file")
    add_passphrase_option(p)
    add_register_options(p)
    return p


def run(args: argparse.Namespace) -> int:
    if args.monte_carlo is not None and args.monte_carlo < 1:
        raise InputError("--monte-carlo", args.monte_carlo, "a number of trials >= 1")
    if args.seed is not None and args.seed < 0:
        raise InputError("--seed", args.seed, "a whole number >= 0")
    if args.previous is None and args.reason:
        raise InputError("--reason", args.reason, "given only with --previous (the revision it explains)")
    if args.previous is not None and not args.reason.strip():
        raise InputError("--reason", args.reason, "a text saying why this revision was made (with --previous)")
    own_revision = args.previous is not None and same_file(args.output, args.previous)
    check_output(args.output, inputs=(("input file", args.file),), record_ok=own_revision, force=True,
                 what="record")
    from pathlib import Path

    if Path(args.output).exists() and not own_revision:  # an existing non-record file: a record needs a new name
        raise InputError("-o", args.output, "a new file (records never replace a file; the next revision of "
                         "record R is written with -o R --previous R --reason TEXT)")
    key = load_key(args, args.sign) if args.sign else None
    previous = load_record(args.previous) if args.previous else None
    kw = {"reason": args.reason} if args.reason else {}
    if key is not None:
        kw["sign"] = key
    rec = record_file(args.file, monte_carlo=args.monte_carlo, seed=args.seed, operator=args.operator,
                      remarks=args.remarks, previous=previous,
                      resolve=lambda doc, where: resolve_measurement(args, doc, where), **kw)
    path = save_record(rec, args.output)
    print(f"{path}: revision {rec.revision}, {rec.statement.split('. ')[0]}")
    if not hasattr(rec, "monte_carlo"):  # a calibration or several-output record
        print(f"SHA-256 {rec.digest}")
        return 0
    if rec.monte_carlo:
        print(f"Monte Carlo: {rec.monte_carlo['trials']} trials, seed {rec.monte_carlo['seed']}")
    from ..files.record_details import findings_of

    for f in findings_of(rec):
        print(f"{'note' if is_note(f) else 'warning'}: {f}")
    for c in rec.changes:
        print(f"changed: {c['change']} {c['what']}: {c['detail']}")
    for s in rec.signatures:
        print(f"signed by {s['name']} ({s['role']}) at {s['time']}, key {s['fingerprint'][:16]}")
    print(f"SHA-256 {rec.digest}")
    return 0
