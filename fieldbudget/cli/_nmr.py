"""``fieldbudget nmr FILE``: the budget, statement and warnings of an NMR measurement file.

``--json`` prints the object ``fieldbudget evaluate --json`` prints for the
same budget, with ``warnings`` holding the physics warnings too;
``--budget-out`` writes the ordinary budget file built from the measurement,
which ``fieldbudget evaluate`` reproduces exactly.  A section that names an
instrument of the laboratory's register (``{"instrument": "FC-9"}``) takes its
values from the register (``--lab DIR`` or ``FIELDBUDGET_LAB``).
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from .._io import allow_outside_files
from ..files.budget_file import read_json, save_budget
from ..files.guard import check_output
from ..nmr.measurement import NMRMeasurement
from ._labopts import add_register_options, resolve_measurement

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("nmr", help="evaluate an NMR field measurement file",
                       description="Build the uncertainty budget of an NMR field measurement described in a "
                                   "measurement file (JSON), and print the budget table, the statement and the "
                                   "physics warnings.")
    p.add_argument("file", help="NMR measurement description file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--budget-out", metavar="BUDGET.json", default=None,
                   help="also write the budget file built from the measurement (never over a record or the "
                        "measurement file; over another existing file only with --force)")
    p.add_argument("--force", action="store_true", help="let --budget-out replace an existing file (never a record)")
    p.add_argument("--allow-outside-files", action="store_true",
                   help="let the measurement file name CSV files outside its own folder")
    p.add_argument("--record-out", metavar="RECORD.json", default=None,
                   help="also write the record of the evaluation (GUM only; see `fieldbudget record`)")
    p.add_argument("--operator", default="", help="who made the measurement (for --record-out)")
    add_register_options(p)
    return p


def run(args: argparse.Namespace) -> int:
    from ..files.measurement_record import refuse_other_kind

    if args.budget_out is not None:
        check_output(args.budget_out, inputs=(("measurement file", args.file),), force=args.force, what="budget")
    if args.record_out is not None:
        check_output(args.record_out, inputs=(("measurement file", args.file),), what="record")
    description = read_json(args.file)
    refuse_other_kind(description, args.file, ("nmr",), "nmr")
    notes = ()
    if isinstance(description, dict):
        description, notes = resolve_measurement(args, description, args.file)
    with allow_outside_files(args.allow_outside_files):
        measurement = NMRMeasurement.from_dict(description, where=args.file, base_dir=Path(args.file).parent)
    result = measurement.evaluate()
    if args.budget_out is not None:
        save_budget(result.budget, args.budget_out)
    if args.record_out:
        from ..files.measurement_record import make_measurement_record
        from ..files.record import save_record

        if Path(args.record_out).exists():
            from ..errors import InputError

            raise InputError("--record-out", args.record_out, "a file that does not exist yet (records are not "
                             "overwritten)", "fieldbudget nmr")
        remarks = "; ".join(f"{n.section}: {n.instrument} certificate {n.certificate} used after its due date "
                            f"{n.due}: {n.reason}" for n in notes if n.reason)
        with allow_outside_files(args.allow_outside_files):  # the record keeps the measurement and its files
            rec = make_measurement_record(description, where=args.file, base_dir=Path(args.file).parent,
                                          operator=args.operator, remarks=remarks)
        save_record(rec, args.record_out)
    if args.json:
        d = result.to_dict()
        if notes:
            d["register"] = [n.to_dict() for n in notes]
        print(json.dumps(d, indent=2, ensure_ascii=False))
    else:
        print(result.report())
        for n in notes:
            line = (f"register: {n.section} from {n.instrument}, certificate {n.certificate} of {n.calibrated} "
                    f"({n.days_since_calibration} days before the measurement)")
            print(line + (f"; EXPIRED on {n.due}, used because: {n.reason}" if n.reason else ""))
    return 0
