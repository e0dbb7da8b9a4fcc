"""``fieldbudget record FILE -o RECORD``: evaluate a budget, NMR measurement or calibration file and archive its record.

The kind of file is recognised by its ``format`` (see
:mod:`fieldbudget.files.measurement_record`).
"""

from __future__ import annotations

import argparse

from ..files.measurement_record import record_file
from ..files.record import load_record, save_record

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("record", help="evaluate a budget file and write its hash-stamped record",
                       description="Evaluate a budget file (GUM, and Monte Carlo with --monte-carlo) and write a "
                                   "record: budget, results, settings, software versions, operator, UTC time "
                                   "stamp and a SHA-256 digest. The file is written atomically.")
    p.add_argument("file", help="budget file, NMR measurement file or calibration file (JSON)")
    p.add_argument("-o", "--output", required=True, metavar="RECORD", help="record file to write (JSON)")
    p.add_argument("--monte-carlo", type=int, metavar="M", default=None,
                   help="also propagate by Monte Carlo with M trials (JCGM 101) and record the run")
    p.add_argument("--seed", type=int, default=None,
                   help="seed of the Monte Carlo generator (drawn and recorded when omitted)")
    p.add_argument("--operator", default="", help="who made the evaluation")
    p.add_argument("--remarks", default="", help="free remarks kept in the record")
    p.add_argument("--previous", metavar="OLD_RECORD", default=None,
                   help="the previous revision of the same budget: the new record gets the next revision "
                        "number and a list of what changed")
    return p


def run(args: argparse.Namespace) -> int:
    previous = load_record(args.previous) if args.previous else None
    rec = record_file(args.file, monte_carlo=args.monte_carlo, seed=args.seed, operator=args.operator,
                      remarks=args.remarks, previous=previous)
    path = save_record(rec, args.output)
    print(f"{path}: revision {rec.revision}, {rec.statement.split('. ')[0]}")
    if rec.monte_carlo:
        print(f"Monte Carlo: {rec.monte_carlo['trials']} trials, seed {rec.monte_carlo['seed']}")
    from ..files.record_details import findings_of

    for f in findings_of(rec):
        print(f"warning: {f}")
    for c in rec.changes:
        print(f"changed: {c['change']} {c['what']}: {c['detail']}")
    print(f"SHA-256 {rec.digest}")
    return 0
