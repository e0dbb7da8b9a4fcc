"""``fieldbudget archive add|list|find|check``: the laboratory's archive of records.

The archive lives in ``<lab>/archive`` (``--lab DIR`` or ``FIELDBUDGET_LAB``);
see :mod:`fieldbudget.lab.archive`.  ``check`` exits 0 only when the archive
is intact, 1 when it is not.
"""

from __future__ import annotations

import argparse
import json

from ..lab.archive import Archive
from ._labopts import add_lab_option, lab_of

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("archive", help="the laboratory's archive of records (add, list, find, check)",
                       description="Keep records in the laboratory's archive: read-only copies, an SQLite index to "
                                   "search them and a hash chain over every addition.")
    verbs = p.add_subparsers(dest="verb", metavar="ACTION")
    verbs.required = True

    a = verbs.add_parser("add", help="copy records into the archive and chain them",
                         description="Copy each record into the archive (read-only), index it and chain its digest "
                                     "to the previous entry. The record files given are left as they are.")
    a.add_argument("records", nargs="+", metavar="RECORD", help="record file(s) (JSON)")
    a.add_argument("--by", default="", help="who adds them (kept in the index)")
    a.add_argument("--json", action="store_true", help="print the new entries as JSON")
    add_lab_option(a)

    ls = verbs.add_parser("list", help="every archived record, in the order added")
    ls.add_argument("--json", action="store_true", help="print a JSON list")
    add_lab_option(ls)

    f = verbs.add_parser("find", help="archived records by measurand, instrument, operator, item or dates")
    f.add_argument("--measurand", help="the measurand's symbol, exactly (e.g. B0)")
    f.add_argument("--instrument", help="an instrument id of the register used by the measurement")
    f.add_argument("--operator", help="part of the operator's name")
    f.add_argument("--item", help="part of the item measured (e.g. a check standard)")
    f.add_argument("--text", help="part of the title, item or measurement id")
    f.add_argument("--from", dest="date_from", metavar="YYYY-MM-DD", help="measured on or after this date")
    f.add_argument("--to", dest="date_to", metavar="YYYY-MM-DD", help="measured on or before this date")
    f.add_argument("--json", action="store_true", help="print a JSON list")
    add_lab_option(f)

    c = verbs.add_parser("check", help="check the archive's chain, files, index and log (exit 0 only if intact)")
    c.add_argument("--head", metavar="LINK", default=None,
                   help="a head link noted earlier: the archive must still contain it")
    c.add_argument("--verify", action="store_true",
                   help="also re-evaluate every record and compare with its recorded results (slower)")
    c.add_argument("--json", action="store_true", help="print the findings as JSON")
    add_lab_option(c)
    return p


def run(args: argparse.Namespace) -> int:
    lab = lab_of(args, must_exist=True)
    archive = Archive(lab)
    if args.verb == "add":
        added = [archive.add(path, added_by=args.by) for path in args.records]
        if args.json:
            print(json.dumps([e.to_dict() for e in added], indent=2, ensure_ascii=False))
        else:
            for e in added:
                print(f"entry {e.seq}: {e.file} (link {e.link[:16]}...)")
        return 0
    if args.verb in ("list", "find"):
        if args.verb == "list":
            entries = archive.entries()
        else:
            entries = archive.find(measurand=args.measurand, instrument=args.instrument, operator=args.operator,
                                   item=args.item, text=args.text, date_from=args.date_from, date_to=args.date_to)
        if args.json:
            print(json.dumps([e.to_dict() for e in entries], indent=2, ensure_ascii=False))
        elif entries:
            print(archive.table(entries))
        else:
            print("no archived record matches" if args.verb == "find" else "the archive is empty")
        return 0
    result = archive.check(head=args.head, recompute=args.verify)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(result.report())
    return 0 if result.intact else 1
