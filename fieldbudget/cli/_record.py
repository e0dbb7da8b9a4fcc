"""``fieldbudget record FILE -o RECORD``: evaluate a budget file and archive its record."""

from __future__ import annotations

import argparse

from ..files.budget_file import load_budget
from ..files.record import load_record, make_record, save_record

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("record", help="evaluate a budget file and write its hash-stamped record",
                       description="Evaluate a budget file (GUM, and Monte Carlo with --monte-carlo) and write a "
                                   "record: budget, results, settings, software versions, operator, UTC time "
                                   "stamp and a SHA-256 digest. The file is written atomically.")
    p.add_argument("file", help="budget file (JSON)")
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
    from ..files.budget_file import read_json
    from ..files.calibration_file import FORMAT, load_calibration

    doc = read_json(args.file)
    if isinstance(doc, dict) and doc.get("format") == FORMAT:
        budget = load_calibration(args.file)  # a calibration file: recorded with its points, curve and conformity
    else:
        budget = load_budget(args.file)
    previous = load_record(args.previous) if args.previous else None
    rec = make_record(budget, monte_carlo=args.monte_carlo, seed=args.seed, operator=args.operator,
                      remarks=args.remarks, previous=previous)
    path = save_record(rec, args.output)
    print(f"{path}: revision {rec.revision}, {rec.statement.split('. ')[0]}")
    if not hasattr(rec, "monte_carlo"):  # a calibration or several-output record
        print(f"SHA-256 {rec.digest}")
        return 0
    if rec.monte_carlo:
        print(f"Monte Carlo: {rec.monte_carlo['trials']} trials, seed {rec.monte_carlo['seed']}")
    for c in rec.changes:
        print(f"changed: {c['change']} {c['what']}: {c['detail']}")
    print(f"SHA-256 {rec.digest}")
    return 0
