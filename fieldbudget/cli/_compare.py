"""``fieldbudget compare RECORD --codata YEAR``: the record's result under another CODATA edition."""

from __future__ import annotations

import argparse
import json

from ..files.record import compare_editions, load_record

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("compare", help="re-evaluate a record under another CODATA edition",
                       description="Look every CODATA-referenced input of the record's budget up again in "
                                   "another edition, re-evaluate, and print the change in value and "
                                   "uncertainty.")
    p.add_argument("record", help="record file (JSON)")
    p.add_argument("--codata", type=int, required=True, metavar="YEAR", help="CODATA edition, e.g. 2018")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    return p


def run(args: argparse.Namespace) -> int:
    comparison = compare_editions(load_record(args.record), args.codata)
    if args.json:
        print(json.dumps(comparison.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(comparison.report())
    return 0
