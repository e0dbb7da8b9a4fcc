"""``fieldbudget register list|check|show``: the laboratory's equipment register.

``check`` exits 0 when every instrument in use has a valid certificate on the
day (``--date``, today by default), 1 when one is overdue or has none, and
prints the certificates falling due within ``[register] due_soon_days`` of
``settings.toml`` (30 by default).
"""

from __future__ import annotations

import argparse
import json

from ..errors import InputError
from ..lab.register import DEFAULT_DUE_SOON_DAYS, load_register
from ._labopts import add_lab_option, date_of, lab_of

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("register", help="the laboratory's equipment register (list, check, show)",
                       description="Read the laboratory's equipment register (register/*.toml or *.json, checked "
                                   "against the schema) and report the calibration state of each instrument.")
    verbs = p.add_subparsers(dest="verb", metavar="ACTION")
    verbs.required = True
    for name, text in (("list", "every instrument with its latest certificate and due date"),
                       ("check", "exit 0 only when every instrument in use has a valid certificate")):
        v = verbs.add_parser(name, help=text)
        v.add_argument("--date", metavar="YYYY-MM-DD", help="the day to report on (default: today)")
        v.add_argument("--json", action="store_true", help="print JSON")
        add_lab_option(v)
    s = verbs.add_parser("show", help="one instrument with all its certificates")
    s.add_argument("instrument", help="the instrument's id")
    s.add_argument("--json", action="store_true", help="print JSON")
    add_lab_option(s)
    return p


def _due_soon_days(lab) -> int:
    v = lab.table("register").get("due_soon_days", DEFAULT_DUE_SOON_DAYS)
    if isinstance(v, bool) or not isinstance(v, int) or v < 0:
        raise InputError("[register] due_soon_days", v, "a whole number of days >= 0", str(lab.settings_path))
    return v


def run(args: argparse.Namespace) -> int:
    lab = lab_of(args)
    register = load_register(lab)
    if args.verb == "show":
        ins = register.get(args.instrument, "register show")
        if args.json:
            print(json.dumps(ins.to_dict(), indent=2, ensure_ascii=False))
        else:
            print(f"{ins.label}: {ins.status}" + (f", supplies '{ins.supplies}'" if ins.supplies else ""))
            for c in ins.certificates:
                vals = ", ".join(f"{k} = {v:g}" for k, v in c.values.items())
                print(f"  {c.id}  {c.date} to {c.due}  {c.issuer}" + (f"  [{vals}]" if vals else ""))
        return 0
    day = date_of(args.date)
    soon = _due_soon_days(lab)
    rows = register.status_on(day, soon)
    problems = [r for r in rows if r.problem]
    if args.json:
        doc = {"date": day.isoformat(), "due_soon_days": soon, "instruments": [r.to_dict() for r in rows]}
        if args.verb == "check":
            doc["ok"] = not problems
        print(json.dumps(doc, indent=2, ensure_ascii=False))
    else:
        if args.verb == "list":
            print(register.report(day, soon) if rows else "the register is empty")
        else:
            for r in rows:
                if r.problem or r.state == "due soon":
                    when = f"due {r.due}" if r.due else "no certificate"
                    print(f"{r.state.upper()}: {r.id} ({r.type} s/n {r.serial}), {when}")
            print(f"{len(rows)} instruments on {day}: " + ("every instrument in use has a valid certificate"
                                                           if not problems else f"{len(problems)} need attention"))
    return 1 if args.verb == "check" and problems else 0
