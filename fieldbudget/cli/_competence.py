"""``fieldbudget competence list|practice|add|authorise``: training, supervision and authorisation records.

``list`` shows who is authorised for which procedure and what backs it (the
passed practice runs and the supervised measurements kept in the laboratory
folder); ``practice`` scores a practice run from a file of answers and
writes the practice record (sign it with ``fieldbudget sign``, first as the
trainee, then as the supervisor); ``add`` keeps a countersigned practice
record or a supervised measurement record; ``authorise`` writes the signed
authorisation.  These are the records of ISO/IEC 17025:2017 6.2.5 and 6.2.6.
"""

from __future__ import annotations

import argparse
import json

from ._labopts import add_lab_option, date_of, lab_of
from ._passphrase import add_passphrase_option

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("competence", help="training, supervision and authorisation records (list, practice, add, "
                                          "authorise)",
                       description="Keep and show the laboratory's records of who is trained, supervised and "
                                   "authorised for which procedure (ISO/IEC 17025:2017 6.2.5 and 6.2.6).")
    verbs = p.add_subparsers(dest="verb", metavar="ACTION")
    verbs.required = True
    ls = verbs.add_parser("list", help="who is authorised for which procedure, and what backs it")
    ls.add_argument("--person", metavar="NAME", help="only this person")
    ls.add_argument("--date", metavar="YYYY-MM-DD", help="the day to report on (default: today)")
    ls.add_argument("--json", action="store_true", help="print JSON")
    add_lab_option(ls)
    pr = verbs.add_parser("practice", help="score a practice run from a file of answers; write the practice record")
    pr.add_argument("procedure", help="the procedure file (TOML) that holds the practice case")
    pr.add_argument("--case", required=True, metavar="ID", help="the practice case's id")
    pr.add_argument("--trainee", required=True, metavar="NAME", help="the trainee's name (as on their signing key)")
    pr.add_argument("--answers", required=True, metavar="JSON",
                    help='the trainee\'s answers: {"decisions": {"component id": value, ...}, "issue": true|false}')
    pr.add_argument("-o", "--output", required=True, metavar="FILE", help="the practice record to write (new file)")
    ad = verbs.add_parser("add", help="keep a countersigned practice record or a supervised measurement record")
    ad.add_argument("record", help="practice record or measurement record (JSON)")
    add_lab_option(ad)
    au = verbs.add_parser("authorise", help="write the signed authorisation of a person for a procedure")
    au.add_argument("--person", required=True, metavar="NAME")
    au.add_argument("--procedure", required=True, metavar="TOML", help="the procedure file")
    au.add_argument("--until", required=True, metavar="YYYY-MM-DD", help="last day of the authorisation")
    au.add_argument("--from", dest="date_from", metavar="YYYY-MM-DD", help="first day (default: today)")
    au.add_argument("--key", required=True, metavar="KEY", help="the authorising person's key (role approver)")
    au.add_argument("--remarks", default="", help="free text kept in the record")
    add_passphrase_option(au)
    add_lab_option(au)
    return p


def _practice(args: argparse.Namespace) -> int:
    from .._io import read_json_file
    from ..errors import InputError
    from ..files.competence_record import make_practice_record, save_document
    from ..files.guard import check_output
    from ..procedure import load_procedure
    from ..procedure.practice import PracticeSession

    check_output(args.output, inputs=(("procedure file", args.procedure), ("answers file", args.answers)),
                 what="practice record")
    answers = read_json_file(args.answers, what="answers file")
    if not isinstance(answers, dict) or not isinstance(answers.get("decisions"), dict) \
            or not isinstance(answers.get("issue"), bool):
        raise InputError("answers", args.answers, 'a JSON object {"decisions": {...}, "issue": true or false}',
                         "competence practice")
    session = PracticeSession(load_procedure(args.procedure), args.case, trainee=args.trainee)
    for cid, value in answers["decisions"].items():
        session.decide(cid, value)
    session.decide_issue(answers["issue"])
    result = session.submit()
    save_document(make_practice_record(result), args.output)
    print(result.summary_text())
    print(f"{args.output}: practice record written; sign it as the trainee, then as the supervisor "
          f"(fieldbudget sign {args.output} --key KEY)")
    return 0 if result.passed else 1


def run(args: argparse.Namespace) -> int:
    if args.verb == "practice":
        return _practice(args)
    from ..lab.competence import Competence

    competence = Competence(lab_of(args))
    if args.verb == "add":
        path = competence.add(args.record)
        print(f"{args.record}: kept as {path}")
        return 0
    if args.verb == "authorise":
        from ..procedure import load_procedure
        from ._passphrase import load_key

        proc = load_procedure(args.procedure)
        key = load_key(args, args.key)
        path = competence.authorise(args.person, proc, key=key, until=args.until, date_from=args.date_from,
                                    remarks=args.remarks)
        print(f"{path}: {args.person} authorised for {proc.id} until {args.until} by {key.name}")
        return 0
    day = date_of(args.date)
    entries = competence.entries(args.person, day)
    if args.json:
        print(json.dumps({"date": day.isoformat(), "entries": [e.to_dict() for e in entries],
                          "not_counted": competence.not_counted}, indent=2, ensure_ascii=False))
        return 0
    for path, why in competence.not_counted.items():
        print(f"not counted: {path} does not verify ({why})")
    if not entries:
        print(f"no competence records{' for ' + args.person if args.person else ''} in {competence.root}")
        return 0
    for e in entries:
        cases = f" ({', '.join(e.cases_passed)})" if e.cases_passed else ""
        print(f"{e.person}  {e.procedure}  {e.status}; practice passed {e.practice_passed} of {e.practice_total}"
              f"{cases}, supervised measurements {e.supervised}")
    return 0
