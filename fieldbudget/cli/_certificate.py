"""``fieldbudget certificate RECORD --to pdf|html|md -o OUT``: the calibration certificate of a record."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from ..errors import InputError

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("certificate", help="write the calibration certificate of a calibration record",
                       description="Write the calibration certificate of a calibration record (ISO/IEC 17025:2017 "
                                   "7.8.2.1, 7.8.4.1, 7.8.6) as PDF, HTML or Markdown. The record's digest is "
                                   "checked first. A certificate lacking required content is marked 'DRAFT, "
                                   "incomplete' with the list of what is missing. --json prints the checklist.")
    p.add_argument("record", help="calibration record file (JSON)")
    p.add_argument("--to", choices=("pdf", "html", "md"), default=None, help="format (default: from the suffix of -o)")
    p.add_argument("-o", "--output", metavar="OUT", default=None, help="certificate file to write")
    p.add_argument("--json", action="store_true", help="print the checklist (item, clause, present) as JSON")
    return p


def run(args: argparse.Namespace) -> int:
    from ..files.calibration_record import load_calibration_record
    from ..report.certificate import certificate_content, checklist, write_certificate

    if not args.output and not args.json:
        raise InputError("-o", None, "given (the certificate file to write), or --json for the checklist only",
                         "certificate")
    rec = load_calibration_record(args.record)
    content = certificate_content(rec)
    items = checklist(content)
    if args.output:
        out = Path(args.output)
        if out.resolve() == Path(args.record).resolve():
            raise InputError("-o", args.output, "a file other than the record", "certificate")
        write_certificate(rec, out, to=args.to)
    complete = all(i["present"] for i in items)
    if args.json:
        print(json.dumps({"certificate_id": content.certificate_id, "complete": complete,
                          "status": "complete" if complete else "DRAFT, incomplete",
                          "checklist": [{"item": i["item"], "clause": i["clause"], "present": i["present"],
                                         "description": i["description"]} for i in items],
                          "output": args.output}, indent=2, ensure_ascii=False))
    else:
        state = "complete" if complete else "DRAFT, incomplete: " + ", ".join(
            i["item"] for i in items if not i["present"])
        print(f"{args.output}: certificate {content.certificate_id or '(no identification)'}, {state}")
    return 0
