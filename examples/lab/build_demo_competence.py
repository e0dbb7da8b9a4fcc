"""Build the demo laboratory's training and authorisation records (examples/lab/competence).

INVENTED FOR THE FIELDBUDGET DEMO: the Larkspur Magnetics Calibration
Laboratory, its staff and every practice answer made here are fictional.

- R. Okafor passed both practice cases of the NMR reference-field procedure
  and is authorised for it by the quality manager, L. Brandt;
- M. Lindqvist passed the routine practice case of the teslameter
  calibration and is authorised for it;
- J. Abara, a new member of staff, passed the routine NMR case but fell for
  the gradient trap (issued a value the gradient made invalid), so is not yet
  authorised: a run of J. Abara's is marked supervised.

Each practice record is signed by the trainee and countersigned by L. Brandt;
each authorisation is signed by L. Brandt.  The keys are made for this build
in a temporary folder and the private keys are thrown away: only the public
keys are kept, in examples/lab/keys/, the folder `settings.toml` names as the
trusted keys.  Run it from anywhere:

    python examples/lab/build_demo_competence.py            # refuses to touch existing records
    python examples/lab/build_demo_competence.py --rebuild  # deletes competence/ and keys/ first
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
from pathlib import Path

from fieldbudget.files import competence_record as cr
from fieldbudget.files.signing import new_key
from fieldbudget.lab.competence import Competence
from fieldbudget.procedure import load_procedure
from fieldbudget.procedure.practice import PracticeSession

LAB = Path(__file__).resolve().parent
TEMPLATES = LAB.parents[1] / "templates"
MANAGER = "L. Brandt (invented)"
# (person, procedure file, practice case, verdict on issuing right?)
PRACTICE = (
    ("R. Okafor (invented)", "nmr-reference-field.toml", "routine-1t", True),
    ("R. Okafor (invented)", "nmr-reference-field.toml", "gradient-trap", True),
    ("M. Lindqvist (invented)", "teslameter-calibration.toml", "routine-sequence", True),
    ("J. Abara (invented)", "nmr-reference-field.toml", "routine-1t", True),
    ("J. Abara (invented)", "nmr-reference-field.toml", "gradient-trap", False),
)
# (person, procedure file, authorised from, until)
AUTHORISED = (
    ("R. Okafor (invented)", "nmr-reference-field.toml", "2026-02-02", "2027-12-31"),
    ("M. Lindqvist (invented)", "teslameter-calibration.toml", "2026-03-16", "2027-12-31"),
)


def _practice(procedure, case: str, trainee: str, right: bool):
    s = PracticeSession(procedure, case, trainee=trainee)
    for d in s.case.decisions:
        s.decide(d.component, d.answer)
    s.decide_issue(s.case.answer.issue if right else not s.case.answer.issue)
    return s.submit()


def build(lab: Path = LAB) -> None:
    procedures = {name: load_procedure(TEMPLATES / name) for name in {p[1] for p in PRACTICE}}
    keys_out = lab / "keys"
    keys_out.mkdir()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        manager = new_key(MANAGER, "approver", folder / "brandt.key")
        own = {who: new_key(who, "operator", folder / f"{who.split()[1].lower()}.key")
               for who in sorted({p[0] for p in PRACTICE})}
        for pub in folder.glob("*.pub"):  # only the public halves are kept
            shutil.copy(pub, keys_out)
        comp = Competence(lab)
        for n, (who, proc, case, right) in enumerate(PRACTICE):
            result = _practice(procedures[proc], case, who, right)
            doc = cr.sign_document(cr.sign_document(cr.make_practice_record(result), own[who]), manager)
            comp.add(cr.save_document(doc, folder / f"practice-{n}.json"))
        for who, proc, start, until in AUTHORISED:
            comp.authorise(who, procedures[proc], key=manager, date_from=start, until=until,
                           remarks="demo authorisation (invented)")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rebuild", action="store_true", help="delete competence/ and keys/ first")
    args = ap.parse_args(argv)
    targets = [LAB / "competence", LAB / "keys"]
    if any(t.exists() for t in targets):
        if not args.rebuild:
            print(f"build_demo_competence: {LAB / 'competence'} exists; pass --rebuild to replace it", file=sys.stderr)
            return 2
        for t in targets:
            shutil.rmtree(t, ignore_errors=True)
    build()
    print(f"wrote {LAB / 'competence'} and {LAB / 'keys'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
