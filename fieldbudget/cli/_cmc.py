"""``fieldbudget cmc SCOPE``: the CMC table of the accreditation scope from the laboratory's records."""

from __future__ import annotations

import argparse
import csv
import io
import json

__all__ = ["add_parser", "run"]

FORMATS = ("text", "md", "csv", "json")


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("cmc", help="the CMC table of the accreditation scope, from the lab's best measurements",
                       description="Build the calibration and measurement capability (CMC) table of a scope file "
                                   "(format fieldbudget-cmc-scope/1): for each field range the smallest expanded "
                                   "uncertainty the laboratory can claim that is not below any of its best "
                                   "measurements there (measurement and calibration records, digests checked, or "
                                   "values stated by hand), rounded up to two significant digits, with the ILAC "
                                   "P14 checklist. Prints the table, or writes it with -o.")
    p.add_argument("scope", help="scope file (TOML or JSON)")
    p.add_argument("--to", choices=FORMATS, default="text", help="output format (default text)")
    p.add_argument("-o", "--output", metavar="OUT", default=None, help="file to write (default: print)")
    p.add_argument("--force", action="store_true", help="replace an existing output file")
    return p


def _rows(scope) -> list[tuple[str, ...]]:
    return [e._row() for e in scope.table.entries]


def _text(scope) -> str:
    from .._display import text_table
    from ..calibration.cmc import P14_EDITION

    head = ("measurand", "method / instrument", "range", "U (expanded, about 95 %)", "p")
    checks = [(r, "yes" if m else "NO", d) for r, m, d in scope.table.p14_checklist()]
    out = [scope.title or "Calibration and measurement capability", text_table(head, _rows(scope)), "",
           f"{P14_EDITION} checklist:", text_table(("requirement", "met", "detail"), checks)]
    out += [f"from {p} (SHA-256 {d})" for p, d in scope.sources]
    out += [f"warning: {w}" for w in scope.table.warnings]
    return "\n".join(out) + "\n"


def _md(scope) -> str:
    from ..calibration.cmc import P14_EDITION
    from ..report._env import escape_markdown as esc

    lines = [f"# {esc(scope.title or 'Calibration and measurement capability')}", "",
             "| measurand | method / instrument | range | U (expanded, about 95 %) | p |", "| --- | --- | --- | --- | --- |"]
    lines += ["| " + " | ".join(esc(c) for c in row) + " |" for row in _rows(scope)]
    lines += ["", f"## {esc(P14_EDITION)} checklist", "", "| requirement | met | detail |",
              "| --- | --- | --- |"]
    lines += [f"| {esc(r)} | {'yes' if m else '**NO**'} | {esc(d)} |" for r, m, d in scope.table.p14_checklist()]
    if scope.sources:
        lines += ["", "## Records behind the table", ""]
        lines += [f"- `{p}` (SHA-256 `{d}`)" for p, d in scope.sources]
    lines += [f"\nwarning: {esc(w)}" for w in scope.table.warnings]
    return "\n".join(lines) + "\n"


def _csv(scope) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(("measurand", "method", "lower_T", "upper_T", "form", "a_T", "b", "uncertainty", "coverage_probability",
                "margin_T"))
    for e in scope.table.entries:
        w.writerow((e.measurand, e.method, repr(e.lower), repr(e.upper), e.form, repr(e.a), repr(e.b),
                    e.uncertainty_text, repr(e.coverage_probability), repr(e.margin)))
    return buf.getvalue()


def run(args: argparse.Namespace) -> int:
    from ..files.atomic import atomic_write_text
    from ..files.guard import check_output
    from ..lab.scope import load_scope

    if args.output:
        check_output(args.output, inputs=(("scope file", args.scope),), force=args.force, what="CMC table")
    scope = load_scope(args.scope)
    text = {"text": _text, "md": _md, "csv": _csv,
            "json": lambda s: json.dumps(s.to_dict(), indent=2, ensure_ascii=False) + "\n"}[args.to](scope)
    if args.output:
        atomic_write_text(args.output, text)
        print(f"{args.output}: CMC table, {len(scope.table.entries)} range(s), {args.to}")
    else:
        print(text, end="")
    return 0 if all(m for _, m, _ in scope.table.p14_checklist()) else 1
