"""``fieldbudget demo [--out DIR]``: the demo scenario, headless, without a browser.

Runs the NMR reference-field procedure with the invented lab's data (see
:mod:`fieldbudget.procedure.demo`), checks its acceptance limits, and writes
the measurement description, the budget file, the record (with a seeded Monte
Carlo run and its validation of the GUM result) and the record's report in
every format the report layer can produce here, then prints the paths.
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from ..errors import FieldbudgetError, InputError

__all__ = ["add_parser", "run"]

SEED = 20261118
TRIALS = 200_000
SUFFIX = {"html": "html", "pdf": "pdf", "md": "md", "latex": "tex", "csv": "csv", "xlsx": "xlsx"}


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("demo", help="write the demo's budget, record and reports (no browser)",
                       description="Run the demo NMR procedure of the invented Larkspur Magnetics Calibration "
                                   "Laboratory headless: write its measurement, budget file, record and reports "
                                   "to DIR and print their paths. The data is invented for the demo.")
    p.add_argument("--out", default="fieldbudget-demo", metavar="DIR",
                   help="folder to write into (made if missing; default: ./fieldbudget-demo)")
    p.add_argument("--replace", action="store_true",
                   help="write over the demo files (record included) a previous demo left in DIR")
    p.add_argument("--trials", type=int, default=TRIALS, metavar="M",
                   help=f"Monte Carlo trials for the record (default {TRIALS}; 0 for none)")
    return p


def _json(path: Path, data: object) -> Path:
    from ..files.atomic import atomic_write_text

    return atomic_write_text(path, json.dumps(data, indent=2, ensure_ascii=False) + "\n")


def run(args: argparse.Namespace) -> int:
    from ..files.budget_file import save_budget
    from ..files.record import save_record
    from ..procedure.demo import demo_run
    from ..report import FORMATS, write_report

    if args.trials < 0:
        raise InputError("--trials", args.trials, "a number of trials >= 0", "demo")
    out = Path(args.out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise InputError("--out", str(out), f"a folder that can be written ({err.strerror or err})", "demo") from None

    names = ["demo-measurement.json", "demo-budget.json", "demo-record.json", "demo-acceptance.json"]
    names += [f"demo-report.{SUFFIX.get(fmt, fmt)}" for fmt in FORMATS]
    if not args.replace:
        left = [n for n in names if (out / n).exists()]
        if left:
            raise InputError("--out", str(out), f"a folder without a previous demo's files (it holds {left[0]}"
                             f"{f' and {len(left) - 1} more' if len(left) > 1 else ''}); add --replace to "
                             "write over them", "demo")

    procedure_run = demo_run()
    proc = procedure_run.procedure
    outcome = procedure_run.evaluate()
    acceptance = procedure_run.check(outcome)
    budget = procedure_run.budget()

    written: list[tuple[str, Path]] = []
    written.append(("measurement", procedure_run.save_measurement(out / "demo-measurement.json")))
    written.append(("budget", save_budget(budget, out / "demo-budget.json")))
    record = procedure_run.make_record(monte_carlo=args.trials or None, seed=SEED if args.trials else None,
                                       remarks=f"Demo with invented data ({proc.lab}).")
    written.append(("record", save_record(record, out / "demo-record.json")))
    written.append(("acceptance", _json(out / "demo-acceptance.json", acceptance.to_dict())))
    skipped: list[str] = []
    for fmt in FORMATS:
        path = out / f"demo-report.{SUFFIX.get(fmt, fmt)}"
        try:
            written.append((f"report ({fmt})", write_report(record, path, to=fmt)))
        except (ImportError, OSError, FieldbudgetError) as err:
            # A format whose optional dependency is missing here is reported, not fatal.
            skipped.append(f"{fmt}: {err}")

    print(f"{proc.name} v{proc.version}, {proc.lab}: invented data for the demo")
    print(f"B0 = {outcome.estimate:.10g} T, u_c = {outcome.standard_uncertainty:.3g} T, "
          f"k = {outcome.coverage_factor:.2f}, U = {outcome.expanded_uncertainty:.3g} T")
    for v in acceptance.verdicts:
        print(f"  [{v.verdict}] {v.limit.text}")
    for what, path in written:
        print(f"{what}: {path}")
    for line in skipped:
        print(f"skipped {line}")
    return 0 if acceptance.accepted else 1
