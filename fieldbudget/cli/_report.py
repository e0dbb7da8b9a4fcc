"""``fieldbudget report RECORD --to FORMAT -o FILE``: HTML, PDF, Markdown, LaTeX, CSV or XLSX.

A report never replaces a record or the record it reports; an existing
report is replaced only with ``--force``.
"""

from __future__ import annotations

import argparse

from ..files.guard import check_output
from ..files.record import load_record
from ..report import FORMATS, write_report

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("report", help="write a report of a record (html, pdf, md, latex, csv, xlsx)",
                       description="Write a report of a record: model equation, budget table with sources, "
                                   "rounded statement, warnings, traceability chain, software versions and "
                                   "digest. The record's digest is checked first. A record is never "
                                   "overwritten; an existing report only with --force.")
    p.add_argument("record", help="record file (JSON)")
    p.add_argument("--to", choices=FORMATS, default=None, help="format (default: from the suffix of -o)")
    p.add_argument("-o", "--output", required=True, metavar="FILE", help="report file to write")
    p.add_argument("--force", action="store_true", help="replace an existing report (never a record)")
    return p


def run(args: argparse.Namespace) -> int:
    check_output(args.output, inputs=(("record", args.record),), force=args.force, what="report")
    rec = load_record(args.record)
    path = write_report(rec, args.output, to=args.to)
    print(f"{path}: {args.to or path.suffix.lstrip('.')} report of record {rec.digest[:12]}")
    return 0
