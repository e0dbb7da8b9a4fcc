"""``fieldbudget nmr FILE``: the budget, statement and warnings of an NMR measurement file.

``--json`` prints the object ``fieldbudget evaluate --json`` prints for the
same budget, with ``warnings`` holding the physics warnings too;
``--budget-out`` writes the ordinary budget file built from the measurement,
which ``fieldbudget evaluate`` reproduces exactly.
"""

from __future__ import annotations

import argparse
import json

from ..files.budget_file import save_budget
from ..nmr.measurement import NMRMeasurement

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("nmr", help="evaluate an NMR field measurement file",
                       description="Build the uncertainty budget of an NMR field measurement described in a "
                                   "measurement file (JSON), and print the budget table, the statement and the "
                                   "physics warnings.")
    p.add_argument("file", help="NMR measurement description file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--budget-out", metavar="BUDGET.json", default=None,
                   help="also write the budget file built from the measurement")
    return p


def run(args: argparse.Namespace) -> int:
    from ..files.budget_file import read_json
    from ..files.measurement_record import refuse_other_kind

    refuse_other_kind(read_json(args.file), args.file, ("nmr",), "nmr")
    measurement = NMRMeasurement.from_file(args.file)
    result = measurement.evaluate()
    if args.budget_out:
        save_budget(result.budget, args.budget_out)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(result.report())
    return 0
