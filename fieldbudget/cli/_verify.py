"""``fieldbudget verify RECORD``: recompute a record, check its digest and signatures (exit 0 only when all hold)."""

from __future__ import annotations

import argparse
import json

from ..files.record import verify_record

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("verify", help="recompute a record from its inputs, check its digest and signatures",
                       description="Check a record's SHA-256 digest, file form and signatures, re-evaluate its "
                                   "budget with the recorded settings and seed, and compare everything it can "
                                   "recompute: GUM results, statement and warnings to the last digit, Monte Carlo "
                                   "bit for bit with the same seed and numpy version (within this release's own "
                                   "tolerance otherwise), and the validation block. With --trusted, every "
                                   "signature must come from a trusted key. Exit status 0 only when every check "
                                   "passes, 1 when one fails, 2 when the file cannot be read.")
    p.add_argument("record", help="record file (JSON)")
    p.add_argument("--trusted", metavar="KEYS_DIR", default=None,
                   help="folder of trusted public keys (.pub files from `fieldbudget key new`)")
    p.add_argument("--json", action="store_true", help="print the checks as one JSON object")
    return p


def run(args: argparse.Namespace) -> int:
    result = verify_record(args.record, trusted=args.trusted)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(result.report())
    return 0 if result.passed else 1
