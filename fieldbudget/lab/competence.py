"""Who may run which procedure: the laboratory's training and authorisation records.

ISO/IEC 17025:2017 6.2.5 asks a laboratory to keep records of each person's
training, supervision and competence, and 6.2.6 records of who is authorised
for which activity.  The laboratory folder keeps them under ``competence/``:

``competence/practice/``
    practice records (``fieldbudget-practice/1``), signed by the trainee and
    countersigned by the supervisor;
``competence/supervised/``
    measurement and calibration records made under supervision (their
    identification says ``authorisation = "supervised"`` and names the
    supervisor, who signed the record in the role approver);
``competence/authorisations/``
    authorisation records (``fieldbudget-authorisation/1``), signed by the
    person who authorises: by whom, from when, until when, and the records
    behind it.

``settings.toml`` ``[competence]`` chooses what a procedure run does when its
operator is not authorised: ``unauthorised = "supervised"`` (the default: the
run goes on, marked supervised, naming the supervisor) or ``"refuse"``;
``supervised_required`` (default 0) is how many supervised measurements an
authorisation needs besides a passed practice run; ``trusted_keys`` names a
folder of ``.pub`` files every signature must come from.

Written by hand: the layout and the rules are this kit's own; the records
are digested and signed by :mod:`fieldbudget.files.competence_record`.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .._display import escape, html_table
from ..errors import InputError
from ..files import competence_record as cr
from .folder import LabFolder, lab_folder

__all__ = ["UNAUTHORISED_CHOICES", "AuthorisationCheck", "Competence", "CompetenceEntry"]

UNAUTHORISED_CHOICES = ("supervised", "refuse")


def _slug(text: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-") or "x"


def _day(value: Any, field_name: str, where: str) -> _dt.date:
    if isinstance(value, _dt.date):
        return value
    try:
        return _dt.date.fromisoformat(str(value))
    except ValueError:
        raise InputError(field_name, value, "a date as YYYY-MM-DD", where) from None


@dataclass(frozen=True)
class CompetenceEntry:
    """One person and one procedure: the practice runs, supervised measurements and the authorisation."""

    person: str
    procedure: str
    practice_passed: int
    practice_total: int
    supervised: int
    authorised: bool
    authorised_by: str = ""
    date_from: str = ""
    until: str = ""
    lapsed: bool = False  # an authorisation exists but not for the day asked about
    cases_passed: tuple[str, ...] = ()  # the practice cases passed, by id

    @property
    def status(self) -> str:
        if self.authorised:
            return f"authorised until {self.until} (by {self.authorised_by})"
        if self.lapsed:
            return f"NOT authorised (last authorisation ran {self.date_from} to {self.until})"
        return "in training: not authorised"

    def __repr__(self) -> str:
        return f"<CompetenceEntry {self.person} / {self.procedure}: {self.status}>"

    def to_dict(self) -> dict:
        return {"person": self.person, "procedure": self.procedure, "authorised": self.authorised,
                "authorised_by": self.authorised_by, "from": self.date_from, "until": self.until,
                "status": self.status,
                "backed_by": {"practice_passed": self.practice_passed, "practice_total": self.practice_total,
                              "cases_passed": list(self.cases_passed), "supervised_measurements": self.supervised}}

    def _repr_html_(self) -> str:
        return html_table(("person", "procedure", "status", "practice passed", "supervised"),
                          [(self.person, self.procedure, self.status, f"{self.practice_passed}/{self.practice_total}",
                            self.supervised)], css_class="fb-table fb-competence")


@dataclass(frozen=True)
class AuthorisationCheck:
    """What the kit found when a run was started: ``status`` is "authorised", "supervised" or "refused"."""

    operator: str
    procedure: str
    status: str
    supervisor: str = ""
    authorised_by: str = ""
    until: str = ""
    message: str = ""

    @property
    def flag(self) -> str:
        """The words a record keeps: ``authorised`` or ``supervised``."""
        return self.status

    def __repr__(self) -> str:
        return f"<AuthorisationCheck {self.operator or '(nobody)'} / {self.procedure}: {self.status}>"

    def to_dict(self) -> dict:
        return {"operator": self.operator, "procedure": self.procedure, "status": self.status,
                "supervisor": self.supervisor, "authorised_by": self.authorised_by, "until": self.until,
                "message": self.message}

    def _repr_html_(self) -> str:
        cls = {"authorised": "fb-verdict-pass", "supervised": "fb-verdict-open"}.get(self.status, "fb-verdict-fail")
        # the mark comes from the stylesheet (fieldbudget.css), the words from the message
        return f'<div class="fb-authorisation {cls}">{escape(self.message)}</div>'


class Competence:
    """The competence records of a laboratory folder (nothing is written until something is added)."""

    def __init__(self, lab: LabFolder | str | Path) -> None:
        self.lab = lab if isinstance(lab, LabFolder) else lab_folder(lab)
        self.root = self.lab.path / "competence"
        settings = self.lab.table("competence")
        self.where = f"{self.lab.settings_path} [competence]"
        self.unauthorised = settings.get("unauthorised", "supervised")
        if self.unauthorised not in UNAUTHORISED_CHOICES:
            raise InputError("unauthorised", self.unauthorised, f"one of {', '.join(map(repr, UNAUTHORISED_CHOICES))}",
                             self.where)
        self.supervised_required = settings.get("supervised_required", 0)
        if isinstance(self.supervised_required, bool) or not isinstance(self.supervised_required, int) \
                or self.supervised_required < 0:
            raise InputError("supervised_required", self.supervised_required, "a whole number >= 0", self.where)
        keys = settings.get("trusted_keys")
        self.trusted = None if keys is None else self.lab.path / str(keys)
        #: files in the competence folders that did not verify when read, with the reason (path -> text)
        self.not_counted: dict[str, str] = {}

    def __repr__(self) -> str:
        return f"<Competence of {self.lab.path}: unauthorised operators are {self.unauthorised}>"

    # ------------------------------------------------------------ reading
    def _files(self, sub: str) -> list[Path]:
        folder = self.root / sub
        return sorted(folder.glob("*.json")) if folder.is_dir() else []

    def _kept(self, sub: str) -> list[cr.SignedDocument]:
        """The documents of ``sub`` that verify (digest, signatures and who signed in which role, against the
        trusted keys when the settings name them).  A file placed there by hand that does not verify counts
        for nothing; it is listed in :attr:`not_counted` with the reason."""
        out = []
        for path in self._files(sub):
            doc = cr.load_document(path, check=False)
            result = cr.verify_document(doc, trusted=self.trusted)
            if result.passed:
                out.append(doc)
            else:
                failed = result.failures[0]
                self.not_counted[str(path)] = f"{failed.name}: {failed.detail}"
        return out

    def practice_records(self, person: str | None = None) -> tuple[cr.SignedDocument, ...]:
        """The practice records kept that verify (see :meth:`_kept`)."""
        docs = self._kept("practice")
        return tuple(d for d in docs if person is None or d.content["practice"]["trainee"] == person)

    def authorisations(self, person: str | None = None, *, practice: Any = None,
                       supervised: Any = None) -> tuple[cr.SignedDocument, ...]:
        """The authorisations kept that verify: an unsigned or wrongly signed one authorises nobody, and nor
        does one whose practice records or supervised measurements (``backed_by``, by digest) are no longer
        among those kept that check.  ``practice`` and ``supervised`` are those records when the caller
        has read them already."""
        if practice is None:
            practice = self.practice_records()
        if supervised is None:
            supervised = self.supervised_records()
        kept = {"practice": {d.digest for d in practice}, "supervised": {d for _, _, d in supervised}}
        out = []
        for doc in self._kept("authorisations"):
            if person is not None and doc.content["person"] != person:
                continue
            backing = doc.content.get("backed_by") or {}
            gone = [(what, digest) for what in ("practice", "supervised") for digest in backing.get(what, ())
                    if digest not in kept[what]]
            if gone:
                what, digest = gone[0]
                self.not_counted[doc.path] = (f"backed_by: the {what} record {digest[:12]} it cites is not among "
                                               f"the kept records that check (competence/{what}/)")
                continue
            out.append(doc)
        return tuple(out)

    def supervised_records(self, person: str | None = None) -> tuple[tuple[str, str, str], ...]:
        """(operator, procedure id, digest) of each supervised measurement or calibration kept.

        Only a record that still checks counts: its digest, its signatures
        (against the trusted keys when the settings name them) and the
        supervisor's own signature in the role approver.  Others are listed in
        :attr:`not_counted` with the reason.
        """
        from ..errors import FieldbudgetError

        out = []
        for p in self._files("supervised"):
            try:
                ident, pid, digest = self._supervised(p)
            except FieldbudgetError as err:
                self.not_counted[str(p)] = str(err)
                continue
            if person is None or ident.get("operator") == person:
                out.append((ident.get("operator", ""), pid, digest))
        return tuple(out)

    def _supervised(self, path: str | Path, where: str = "competence: supervised record") -> tuple[dict, str, str]:
        """(identification, procedure id, digest) of a record made under supervision, after the checks that
        need no re-evaluation: the flag and the names, the digest, every signature, and the supervisor's."""
        from ..files import calibration_record as cal
        from ..files.record import load_record, signature_checks
        from ..files.record_details import identification_of

        if cal.record_kind(path) in cal.KINDS:
            rec = cal.load_calibration_record(path)  # raises when the digest does not match
            ident = {str(k): str(v) for k, v in (rec.document.get("identification") or {}).items()}
            if rec.document.get("operator"):
                ident.setdefault("operator", str(rec.document["operator"]))
            procedure = rec.document.get("procedure") or {}
        else:
            rec = load_record(path)
            ident, procedure = identification_of(rec), rec.procedure or {}
        if ident.get("authorisation") != "supervised" or not ident.get("supervisor"):
            raise InputError("record", str(path), "a measurement or calibration record marked supervised, naming "
                                                  "its supervisor (identification authorisation = 'supervised')",
                             where)
        if not procedure.get("id") or not ident.get("operator"):
            raise InputError("record", str(path), "a record naming its procedure id and its operator", where)
        checks, results = signature_checks(rec.signatures, rec.computed_digest(), self.trusted)
        bad = next((c for c in checks if c.status == "fail"), None)
        if bad is not None:
            raise InputError("record", str(path), f"a record whose signatures all check ({bad.name}: {bad.detail})",
                             where)
        supervisor = ident["supervisor"]
        if not any(r.valid and r.name == supervisor and r.role == "approver" for r in results):
            raise InputError("record", str(path), f"a record signed by its supervisor {supervisor!r} in the role "
                                                  f"approver (`fieldbudget sign RECORD --key SUPERVISOR.key`)", where)
        return ident, str(procedure["id"]), rec.digest

    def _verified(self, doc_or_path: Any, where: str) -> None:
        result = cr.verify_document(doc_or_path, trusted=self.trusted)
        if not result.passed:
            failed = result.failures[0]
            raise InputError("record", where, f"a record that verifies ({failed.name}: {failed.detail})",
                             "competence")

    def entries(self, person: str | None = None, day: _dt.date | str | None = None) -> tuple[CompetenceEntry, ...]:
        """One entry per person and procedure found in the records, on ``day`` (today by default)."""
        on = _day(day, "day", "competence") if day is not None else _dt.date.today()
        practice, supervised = self.practice_records(person), self.supervised_records(person)
        auths = self.authorisations(person, practice=practice, supervised=supervised)
        keys: set[tuple[str, str]] = set()
        keys |= {(d.content["practice"]["trainee"], d.content["practice"]["procedure"]["id"]) for d in practice}
        keys |= {(d.content["person"], d.content["procedure"]["id"]) for d in auths}
        keys |= {(op, pid) for op, pid, _ in supervised}
        out = []
        for who, pid in sorted(keys):
            runs = [d for d in practice if (d.content["practice"]["trainee"], d.content["practice"]["procedure"]["id"])
                    == (who, pid)]
            mine = sorted((d for d in auths if (d.content["person"], d.content["procedure"]["id"]) == (who, pid)),
                          key=lambda d: d.content["from"])
            valid = [d for d in mine if d.content["from"] <= on.isoformat() <= d.content["until"]]
            a = (valid or mine or [None])[-1]
            out.append(CompetenceEntry(
                who, pid, sum(bool(d.content["practice"]["passed"]) for d in runs), len(runs),
                sum(1 for op, p, _ in supervised if (op, p) == (who, pid)), bool(valid),
                a.content["authorised_by"] if a else "", a.content["from"] if a else "",
                a.content["until"] if a else "", lapsed=bool(mine) and not valid,
                cases_passed=tuple(sorted({d.content["practice"]["case"]["id"] for d in runs
                                           if d.content["practice"]["passed"]}))))
        return tuple(out)

    def entry(self, person: str, procedure_id: str, day: Any = None) -> CompetenceEntry | None:
        return next((e for e in self.entries(person, day) if e.procedure == procedure_id), None)

    # ------------------------------------------------------------ adding
    def _copy(self, doc_text: bytes, sub: str, name: str) -> Path:
        from ..files.atomic import atomic_write_bytes

        target = self.root / sub / name
        if target.exists():
            raise InputError("record", name, "a record not kept yet (this one is already in the competence "
                                             "records)", str(target.parent))
        target.parent.mkdir(parents=True, exist_ok=True)
        return atomic_write_bytes(target, doc_text)

    def add_practice(self, path: str | Path) -> Path:
        """Keep a practice record: it must verify and carry the trainee's signature and the countersignature."""
        doc = cr.load_document(path)
        if doc.format != cr.PRACTICE_FORMAT:
            raise InputError("record", str(path), "a practice record (fieldbudget-practice/1)", "competence add")
        self._verified(path, str(path))
        p = doc.content["practice"]
        name = f"{_slug(p['trainee'])}--{p['procedure']['id']}--{p['case']['id']}--{doc.digest[:12]}.practice.json"
        return self._copy(Path(path).read_bytes(), "practice", name)

    def add_supervised(self, path: str | Path) -> Path:
        """Keep a measurement or calibration record made under supervision: its identification says so, the
        supervisor signed it (role approver), and it verifies in full (results recomputed)."""
        from ..files.record import verify_record

        ident, pid, digest = self._supervised(path, "competence add")
        check = verify_record(path, trusted=self.trusted)
        if not check.passed:
            raise InputError("record", str(path), f"a record that verifies ({check.failures[0].name})",
                             "competence add")
        name = f"{_slug(ident['operator'])}--{pid}--{digest[:12]}.record.json"
        return self._copy(Path(path).read_bytes(), "supervised", name)

    def add(self, path: str | Path) -> Path:
        """Keep a practice record or a supervised measurement record, whichever ``path`` is."""
        if cr.document_format(path) == cr.PRACTICE_FORMAT:
            return self.add_practice(path)
        return self.add_supervised(path)

    def authorise(self, person: str, procedure: Any, *, key: Any, until: Any, date_from: Any = None,
                  passphrase: str | None = None, remarks: str = "") -> Path:
        """Write a signed authorisation of ``person`` for ``procedure`` (a Procedure or ``{"id", "version", "name"}``).

        It needs a passed practice run of that procedure in ``person``'s name
        and ``supervised_required`` supervised measurements; ``key`` is the
        authorising person's signing key (role approver).
        """
        from ..files.signing import SigningKey, load_signing_key

        k = key if isinstance(key, SigningKey) else load_signing_key(key, passphrase)
        proc = procedure if isinstance(procedure, dict) else {"id": procedure.id, "version": procedure.version,
                                                              "name": procedure.name}
        where = f"authorisation of {person!r} for {proc['id']!r}"
        start = _day(date_from, "from", where) if date_from is not None else _dt.date.today()
        end = _day(until, "until", where)
        passed = [d for d in self.practice_records(person)
                  if d.content["practice"]["procedure"]["id"] == proc["id"] and d.content["practice"]["passed"]]
        if not passed:
            raise InputError("practice", 0, f"at least one passed, countersigned practice run of {proc['id']!r} "
                                            f"in the competence records (fieldbudget competence add)", where)
        supervised = [d for op, pid, d in self.supervised_records(person) if pid == proc["id"]]
        if len(supervised) < self.supervised_required:
            raise InputError("supervised", len(supervised), f"at least {self.supervised_required} supervised "
                                                            f"measurement(s) (settings [competence])", where)
        doc = cr.make_authorisation(person, proc, authorised_by=k.name, date_from=start.isoformat(),
                                    until=end.isoformat(), practice=tuple(d.digest for d in passed),
                                    supervised=tuple(supervised), remarks=remarks)
        doc = cr.sign_document(doc, k)
        target = self.root / "authorisations" / f"{_slug(person)}--{proc['id']}--{start.isoformat()}.authorisation.json"
        target.parent.mkdir(parents=True, exist_ok=True)
        return cr.save_document(doc, target)

    # ------------------------------------------------------------ checking at use
    def check(self, operator: str, procedure_id: str, *, supervisor: str = "", day: Any = None) -> AuthorisationCheck:
        """Whether ``operator`` may run ``procedure_id`` on ``day``, under the laboratory's settings.

        Authorised: status "authorised".  Not authorised: "supervised" when the
        settings allow it and a supervisor who is authorised for the procedure
        is named, else "refused" (the message says why and what is allowed).
        """
        name = str(operator or "").strip()
        if not name:
            return AuthorisationCheck("", procedure_id, "refused", message=(
                f"Name the operator: only an authorised operator may run {procedure_id} (ISO/IEC 17025:2017 6.2.6)."))
        e = self.entry(name, procedure_id, day)
        if e is not None and e.authorised:
            return AuthorisationCheck(name, procedure_id, "authorised", authorised_by=e.authorised_by, until=e.until,
                                      message=f"{name} is authorised for {procedure_id} until {e.until} "
                                              f"(by {e.authorised_by}).")
        why = f"{name} is NOT authorised for {procedure_id}" + (
            f" (the authorisation ran {e.date_from} to {e.until})" if e is not None and e.lapsed else "")
        if self.unauthorised == "refuse":
            return AuthorisationCheck(name, procedure_id, "refused", message=(
                f"{why}; this laboratory's settings refuse the run. Ask for an authorisation first "
                f"(fieldbudget competence list shows what backs one)."))
        sup = str(supervisor or "").strip()
        s = self.entry(sup, procedure_id, day) if sup else None
        if not sup or s is None or not s.authorised or sup == name:
            got = f" ({sup} is not authorised for it)" if sup and sup != name else ""
            return AuthorisationCheck(name, procedure_id, "refused", supervisor=sup, message=(
                f"{why}; the run may go on only under supervision: name a supervisor who is authorised for "
                f"{procedure_id}{got}."))
        return AuthorisationCheck(name, procedure_id, "supervised", supervisor=sup, message=(
            f"{why}: this run is SUPERVISED by {sup}, and its record says so."))

    def require(self, operator: str, procedure_id: str, *, supervisor: str = "", day: Any = None) -> AuthorisationCheck:
        """:meth:`check`, raising an :class:`~fieldbudget.errors.InputError` (naming ``operator``) when refused."""
        c = self.check(operator, procedure_id, supervisor=supervisor, day=day)
        if c.status == "refused":
            allowed = (f"an operator authorised for {procedure_id}" if self.unauthorised == "refuse" else
                       f"an operator authorised for {procedure_id}, or a run supervised by someone who is")
            raise InputError("operator", operator, allowed + f" ({c.message})", f"procedure {procedure_id!r}")
        return c
