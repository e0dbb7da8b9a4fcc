"""The equipment register: instruments, their calibration certificates and due dates (ISO/IEC 17025:2017 6.4).

One file per instrument in the laboratory's ``register/`` folder, TOML
(``*.toml``) or JSON (``*.json``), checked against the shipped JSON Schema
``schemas/instrument-1.json`` with ``jsonschema``.  Each instrument has an
``id``, a ``type``, a ``serial``, a ``status`` and its ``certificates``
(``id``, ``issuer``, ``date``, ``due`` and the ``values`` they certify).

A measurement file may name an instrument instead of typing its values::

    "timebase": {"instrument": "FC-9"}

:func:`resolve_instruments` replaces such a section by the values of the
instrument's certificate in force on the measurement's date, the certificate
as the source, and (for a timebase with an ageing rate) the days since its
calibration.  An expired certificate is refused unless a reason is given; the
reason and what was resolved go into the description's
``metadata.register``, which the NMR budget copies into its metadata and so
into the record.

Written by hand: no library keeps a calibration register; schema checking is
jsonschema and TOML is the standard library's tomllib.
"""

from __future__ import annotations

import copy
import datetime as _dt
import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from types import MappingProxyType
from typing import Any

from .._display import html_table, text_table
from ..errors import BudgetFileError, Finding, InputError
from .folder import LabFolder, dict_html

__all__ = [
    "STATUSES",
    "Certificate",
    "ExpiredCertificate",
    "Instrument",
    "Register",
    "RegisterNote",
    "StatusRow",
    "load_instrument",
    "load_register",
    "measurement_day",
    "parse_date",
    "referring_sections",
    "resolve_instruments",
]

STATUSES = ("in service", "limited use", "out of service", "retired")
#: Statuses under which an instrument may be used for a measurement.
USABLE = ("in service", "limited use")
#: Days before the due date from which a certificate is reported as "due soon" (settings [register] due_soon_days).
DEFAULT_DUE_SOON_DAYS = 30


class ExpiredCertificate(InputError):
    """A certificate that was no longer valid on the measurement's date, and no reason was given to use it."""


def parse_date(value: Any, field_name: str, where: str) -> _dt.date:
    """An ISO 8601 date (or date-time, whose date is taken) as a :class:`datetime.date`."""
    if isinstance(value, _dt.datetime):
        return value.date()
    if isinstance(value, _dt.date):
        return value
    if isinstance(value, str):
        text = value.strip()
        try:
            return _dt.date.fromisoformat(text[:10])
        except ValueError:
            pass
    raise InputError(field_name, value, "a date YYYY-MM-DD", where)


@cache
def _schema() -> dict:
    return json.loads((Path(__file__).with_name("schemas") / "instrument-1.json").read_text(encoding="utf-8"))


def _plain_dates(x: Any) -> Any:
    """TOML dates -> ISO text, so TOML and JSON files validate alike."""
    if isinstance(x, (_dt.date, _dt.datetime)):
        return x.isoformat()
    if isinstance(x, Mapping):
        return {k: _plain_dates(v) for k, v in x.items()}
    if isinstance(x, list):
        return [_plain_dates(v) for v in x]
    return x


@dataclass(frozen=True)
class Certificate:
    """One calibration certificate of an instrument: ``values`` are what it certifies (plain numbers)."""

    id: str
    issuer: str
    date: _dt.date
    due: _dt.date
    values: Mapping = field(default_factory=lambda: MappingProxyType({}))
    file: str = ""
    remarks: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))
        if self.due < self.date:
            raise InputError("due", self.due.isoformat(), f"on or after the certificate's date {self.date}",
                             f"certificate {self.id}")

    def valid_on(self, day: _dt.date) -> bool:
        """True from the calibration date up to and including the due date."""
        return self.date <= day <= self.due

    def __repr__(self) -> str:
        return f"<Certificate {self.id} of {self.date}, due {self.due}, by {self.issuer}>"

    def to_dict(self) -> dict:
        d = {"id": self.id, "issuer": self.issuer, "date": self.date.isoformat(), "due": self.due.isoformat(),
             "values": dict(self.values)}
        if self.file:
            d["file"] = self.file
        if self.remarks:
            d["remarks"] = self.remarks
        return d


@dataclass(frozen=True)
class Instrument:
    """One instrument of the register; ``certificates`` sorted by date, oldest first."""

    id: str
    type: str
    serial: str
    status: str
    certificates: tuple[Certificate, ...] = ()
    model: str = ""
    manufacturer: str = ""
    location: str = ""
    supplies: str = ""
    review: Mapping | None = None
    notes: str = ""
    path: str = ""

    def __post_init__(self) -> None:
        if self.status not in STATUSES:
            raise InputError("status", self.status, f"one of {', '.join(STATUSES)}", f"instrument {self.id}")
        object.__setattr__(self, "certificates", tuple(sorted(self.certificates, key=lambda c: (c.date, c.id))))
        if self.review is not None:
            object.__setattr__(self, "review", MappingProxyType(dict(self.review)))

    @property
    def latest(self) -> Certificate | None:
        return self.certificates[-1] if self.certificates else None

    def certificate_on(self, day: _dt.date) -> Certificate | None:
        """The newest certificate dated on or before ``day`` (the one in force then), or None."""
        before = [c for c in self.certificates if c.date <= day]
        return before[-1] if before else None

    @property
    def label(self) -> str:
        model = f" {self.model}" if self.model else ""
        return f"{self.type}{model} {self.id} s/n {self.serial}"

    def __repr__(self) -> str:
        last = f", latest certificate {self.latest.id} due {self.latest.due}" if self.latest else ", no certificate"
        return f"<Instrument {self.id}: {self.type} s/n {self.serial}, {self.status}{last}>"

    def to_dict(self) -> dict:
        d: dict[str, Any] = {"format": "fieldbudget-instrument/1", "id": self.id, "type": self.type,
                             "serial": self.serial, "status": self.status,
                             "certificates": [c.to_dict() for c in self.certificates]}
        for key in ("model", "manufacturer", "location", "supplies", "notes"):
            if getattr(self, key):
                d[key] = getattr(self, key)
        if self.review is not None:
            d["review"] = dict(self.review)
        return d


def _pointer(parts) -> str:
    return "#/" + "/".join(str(p) for p in parts) if parts else "#"


def instrument_from_dict(doc: Mapping, where: str = "instrument") -> Instrument:
    """Check ``doc`` against the instrument schema and build the :class:`Instrument`."""
    import jsonschema

    doc = _plain_dates(dict(doc))
    validator = jsonschema.Draft202012Validator(_schema())
    errors = sorted(validator.iter_errors(doc), key=lambda e: list(map(str, e.absolute_path)))
    if errors:
        err = jsonschema.exceptions.best_match(errors)
        raise BudgetFileError(where, _pointer(err.absolute_path), err.message)
    certs = []
    for i, c in enumerate(doc.get("certificates", [])):
        at = f"#/certificates/{i}"
        try:
            certs.append(Certificate(
                id=c["id"], issuer=c["issuer"], date=parse_date(c["date"], "date", where),
                due=parse_date(c["due"], "due", where), values=c.get("values", {}), file=c.get("file", ""),
                remarks=c.get("remarks", "")))
        except InputError as err:
            raise BudgetFileError(where, f"{at}/{err.field}", f"must be {err.allowed} (got {err.value!r})") from None
    ids = [c.id for c in certs]
    dup = sorted({i for i in ids if ids.count(i) > 1})
    if dup:
        raise BudgetFileError(where, "#/certificates", f"certificate id {dup[0]!r} appears twice")
    return Instrument(id=doc["id"], type=doc["type"], serial=doc["serial"], status=doc["status"],
                      certificates=tuple(certs), model=doc.get("model", ""), manufacturer=doc.get("manufacturer", ""),
                      location=doc.get("location", ""), supplies=doc.get("supplies", ""), review=doc.get("review"),
                      notes=doc.get("notes", ""), path=where)


def load_instrument(path: str | Path) -> Instrument:
    """Read one register file (``.toml`` or ``.json``)."""
    from .._io import read_object_file

    doc = read_object_file(path, top="an object (one instrument)")
    return instrument_from_dict(doc, where=str(path))


# ----------------------------------------------------------------------------
# the register
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class StatusRow:
    """One line of the register on a given day: where the instrument stands with its calibration."""

    id: str
    type: str
    serial: str
    status: str
    certificate: str
    calibrated: str
    due: str
    days_left: int | None
    state: str  # "valid", "due soon", "overdue", "no certificate", "not in use"

    @property
    def problem(self) -> bool:
        """True when an instrument in use has no valid certificate."""
        return self.state in ("overdue", "no certificate")

    def to_dict(self) -> dict:
        return {"id": self.id, "type": self.type, "serial": self.serial, "status": self.status,
                "certificate": self.certificate, "calibrated": self.calibrated, "due": self.due,
                "days_left": self.days_left, "state": self.state}


@dataclass(frozen=True)
class Register:
    """The instruments of a laboratory (read-only), by id."""

    instruments: tuple[Instrument, ...] = ()
    where: str = ""

    def __post_init__(self) -> None:
        ids = [i.id for i in self.instruments]
        dup = sorted({i for i in ids if ids.count(i) > 1})
        if dup:
            paths = [i.path for i in self.instruments if i.id == dup[0]]
            raise InputError("id", dup[0], "unique in the register (it appears in " + ", ".join(paths) + ")",
                             self.where or "register")
        object.__setattr__(self, "instruments", tuple(sorted(self.instruments, key=lambda i: i.id)))

    def __len__(self) -> int:
        return len(self.instruments)

    def __iter__(self):
        return iter(self.instruments)

    def ids(self) -> tuple[str, ...]:
        return tuple(i.id for i in self.instruments)

    def get(self, instrument_id: str, where: str = "register") -> Instrument:
        for i in self.instruments:
            if i.id == instrument_id:
                return i
        known = ", ".join(self.ids()) or "none registered"
        raise InputError("instrument", instrument_id, f"an instrument of the register ({known})", where)

    def status_on(self, day: _dt.date | None = None, due_soon_days: int = DEFAULT_DUE_SOON_DAYS) -> tuple[StatusRow, ...]:
        """Each instrument's calibration state on ``day`` (today by default)."""
        day = day or _dt.date.today()
        rows = []
        for ins in self.instruments:
            cert = ins.certificate_on(day) or ins.latest
            if cert is None:
                state, left = ("no certificate" if ins.status in USABLE else "not in use"), None
            else:
                left = (cert.due - day).days
                if ins.status not in USABLE:
                    state = "not in use"
                elif cert.date > day:
                    state = "no certificate"  # only a certificate dated after the day asked about
                elif left < 0:
                    state = "overdue"
                elif left <= due_soon_days:
                    state = "due soon"
                else:
                    state = "valid"
            rows.append(StatusRow(ins.id, ins.type, ins.serial, ins.status, cert.id if cert else "",
                                  cert.date.isoformat() if cert else "", cert.due.isoformat() if cert else "",
                                  left, state))
        return tuple(rows)

    def report(self, day: _dt.date | None = None, due_soon_days: int = DEFAULT_DUE_SOON_DAYS) -> str:
        rows = self.status_on(day, due_soon_days)
        return text_table(("id", "type", "serial", "status", "certificate", "calibrated", "due", "days left", "state"),
                          [(r.id, r.type, r.serial, r.status, r.certificate, r.calibrated, r.due,
                            "" if r.days_left is None else r.days_left, r.state) for r in rows])

    def __repr__(self) -> str:
        return f"<Register {len(self)} instruments: {', '.join(self.ids())}>"

    def _repr_html_(self) -> str:
        rows = self.status_on()
        return html_table(("id", "type", "serial", "status", "certificate", "calibrated", "due", "days left", "state"),
                          [(r.id, r.type, r.serial, r.status, r.certificate, r.calibrated, r.due,
                            "" if r.days_left is None else r.days_left, r.state) for r in rows],
                          caption=f"equipment register on {_dt.date.today()}", css_class="fb-table fb-register")

    def to_dict(self) -> dict:
        return {"instruments": [i.to_dict() for i in self.instruments]}


def load_register(lab: LabFolder | str | Path) -> Register:
    """Every ``*.toml`` and ``*.json`` file of the lab's ``register/`` folder (an empty register if none)."""
    folder = lab.register_dir if isinstance(lab, LabFolder) else Path(lab)
    if not folder.is_dir():
        return Register((), where=str(folder))
    files = sorted(p for p in folder.iterdir() if p.suffix in (".toml", ".json") and not p.name.startswith("."))
    return Register(tuple(load_instrument(p) for p in files), where=str(folder))


# ----------------------------------------------------------------------------
# resolving instrument references in a measurement description
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class RegisterNote:
    """What :func:`resolve_instruments` took from the register for one section of a measurement."""

    section: str
    instrument: str
    label: str
    certificate: str
    issuer: str
    calibrated: str
    due: str
    days_since_calibration: int
    values: Mapping
    state: str  # "valid" or "expired, accepted"
    reason: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))

    def finding(self) -> Finding | None:
        """A structured warning for an expired certificate used with a reason (None otherwise)."""
        if self.state == "valid":
            return None
        return Finding(f"{self.section}: certificate {self.certificate} of {self.instrument} was due on {self.due} "
                       f"and was used after that date; reason given: {self.reason}",
                       code="lab.certificate_expired_accepted", key=f"{self.section}.instrument",
                       values={"instrument": self.instrument, "certificate": self.certificate, "due": self.due,
                               "reason": self.reason})

    def __repr__(self) -> str:
        return (f"<RegisterNote {self.section} <- {self.instrument}, certificate {self.certificate}, "
                f"{self.days_since_calibration} days, {self.state}>")

    def to_dict(self) -> dict:
        d = {"section": self.section, "instrument": self.instrument, "label": self.label,
             "certificate": self.certificate, "issuer": self.issuer, "calibrated": self.calibrated, "due": self.due,
             "days_since_calibration": self.days_since_calibration, "values": dict(self.values), "state": self.state}
        if self.reason:
            d["reason"] = self.reason
        return d


def measurement_day(description: Mapping, where: str = "measurement") -> _dt.date | None:
    """The measurement's date from ``metadata.date`` (ISO 8601), or None when it has none."""
    md = description.get("metadata")
    if isinstance(md, Mapping) and md.get("date") not in (None, ""):
        return parse_date(md["date"], "metadata.date", where)
    return None


# the keys through which a section names the document its values come from (the measurement file's own keys)
_IDENTITY_KEYS = {
    "timebase": lambda c: {"certificate": c.id, "issuer": c.issuer, "calibration_date": c.date.isoformat()},
    "probe_perturbation": lambda c: {"report": c.id},
}


def referring_sections(description: Mapping) -> list[str]:
    """The sections of a measurement description that name a register instrument (``metadata`` is free text)."""
    return [k for k, v in description.items() if k != "metadata" and isinstance(v, Mapping) and "instrument" in v]


def resolve_instruments(description: Mapping, register: Register, measurement_date: Any = None, *,
                        accept_expired: Mapping[str, str] | None = None,
                        where: str = "measurement") -> tuple[dict, tuple[RegisterNote, ...]]:
    """Replace each ``{"instrument": ID}`` section of a measurement description by the register's values.

    Parameters
    ----------
    description : mapping
        The measurement description (not changed; a resolved copy is returned).
    register : Register
        The laboratory's register.
    measurement_date : date or ISO text, optional
        The day of the measurement; by default ``metadata.date`` of the description.
    accept_expired : mapping, optional
        ``{instrument id: reason}``: use that instrument's expired certificate anyway.  A
        section may carry its own ``"accept_expired": "reason"`` instead.
    where : str
        Name of the description in messages (its file).

    Returns
    -------
    (dict, tuple of RegisterNote)
        The description with the certificate's values in each referring section, its
        ``source`` naming the certificate, ``days_since_calibration`` for a timebase
        with an ageing rate, and ``metadata.register`` listing the notes; and the notes.

    Raises
    ------
    InputError
        Unknown instrument, an instrument out of service or for another section, no
        certificate dated on or before the measurement, a key given both in the file
        and by the certificate, or a missing date.
    ExpiredCertificate
        The certificate in force was past its due date and no reason was given.
    """
    if not isinstance(description, Mapping):
        raise InputError("description", type(description).__name__, "a measurement description (an object)", where)
    out = copy.deepcopy(_plain_dates(dict(description)))
    sections = referring_sections(out)
    if not sections:
        return out, ()
    day = (parse_date(measurement_date, "measurement date", where) if measurement_date not in (None, "")
           else measurement_day(out, where))
    if day is None:
        raise InputError("metadata.date", None, "the measurement's date (YYYY-MM-DD), needed to choose the "
                         "certificate in force", where)
    overrides = dict(accept_expired or {})
    notes = []
    for section in sections:
        body = dict(out[section])
        ref = body.pop("instrument")
        own_reason = body.pop("accept_expired", None)
        at = f"{where}, {section}.instrument"
        if not isinstance(ref, str) or not ref:
            raise InputError(f"{section}.instrument", ref, "the id of an instrument of the register", where)
        ins = register.get(ref, at)
        if ins.supplies and ins.supplies != section:
            raise InputError(f"{section}.instrument", ref, f"an instrument that supplies '{section}' ({ref} "
                             f"supplies '{ins.supplies}')", where)
        if ins.status not in USABLE:
            raise InputError(f"{section}.instrument", ref, f"an instrument in use ({ref} is '{ins.status}' in the "
                             "register)", where)
        cert = ins.certificate_on(day)
        if cert is None:
            raise InputError(f"{section}.instrument", ref, f"an instrument with a certificate dated on or before "
                             f"the measurement ({day}); the register has none", where)
        reason = overrides.get(ref, own_reason)
        if reason is not None and (not isinstance(reason, str) or not reason.strip()):
            raise InputError(f"{section}.accept_expired", reason, "a reason in words", where)
        state = "valid"
        if day > cert.due:
            if reason is None:
                raise ExpiredCertificate(
                    f"{section}.instrument", ref,
                    f"an instrument with a valid certificate: {cert.id} was due on {cert.due}, the measurement is "
                    f"of {day}; recalibrate, or give a reason to use it anyway (--accept-expired {ref}=REASON, "
                    f"or \"accept_expired\" in the section)", where)
            state = "expired, accepted"
        values = dict(cert.values)
        if not values:
            raise InputError(f"{section}.instrument", ref, f"an instrument whose certificate gives values "
                             f"(certificate {cert.id} has none)", where)
        clash = sorted(set(values) & set(body))
        if clash:
            raise InputError(f"{section}.{clash[0]}", body[clash[0]], f"left out: certificate {cert.id} of {ref} "
                             "gives it", where)
        days = (day - cert.date).days
        body.update(values)
        if section == "timebase" and "ageing_per_day" in values and "days_since_calibration" not in body:
            body["days_since_calibration"] = days
        for key, value in _IDENTITY_KEYS.get(section, lambda c: {})(cert).items():  # for the traceability chain
            body.setdefault(key, value)
        body.setdefault("source", f"{ins.label}, certificate {cert.id} of {cert.date} ({cert.issuer})"
                        + ("" if state == "valid" else f"; used after its due date {cert.due}: {reason.strip()}"))
        out[section] = body
        notes.append(RegisterNote(section=section, instrument=ref, label=ins.label, certificate=cert.id,
                                  issuer=cert.issuer, calibrated=cert.date.isoformat(), due=cert.due.isoformat(),
                                  days_since_calibration=days, values=values, state=state,
                                  reason=reason.strip() if state != "valid" else ""))
    md = out.get("metadata")
    if md is not None and not isinstance(md, dict):
        raise InputError("metadata", md, "an object", where)
    md = dict(md or {})
    md.setdefault("date", day.isoformat())
    md["register"] = [n.to_dict() for n in notes]
    out["metadata"] = md
    return out, tuple(notes)


# the small values show their to_dict as a table in a notebook
for _cls in (Certificate, Instrument, StatusRow, RegisterNote):
    _cls._repr_html_ = dict_html
