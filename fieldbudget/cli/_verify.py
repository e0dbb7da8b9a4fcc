"""``fieldbudget verify RECORD``: recompute a record and check its digest (exit 0 only when both agree)."""

from __future__ import annotations

import argparse
import json

from ..files.record import verify_record

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("verify", help="recompute a record from its inputs and check its digest",
                       description="Check a record's SHA-256 digest and file form, re-evaluate its budget with "
                                   "the recorded settings and seed, and compare: GUM results to the last digit, "
                                   "Monte Carlo bit for bit with the same seed and numpy version (within the "
                                   "recorded tolerance otherwise). Exit status 0 only when every check passes, "
                                   "1 when one fails, 2 when the file cannot be read.")
    p.add_argument("record", help="record file (JSON)")
    p.add_argument("--json", action="store_true", help="print the checks as one JSON object")
    return p


def run(args: argparse.Namespace) -> int:
    result = verify_record(args.record)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(result.report())
    return 0 if result.passed else 1
