"""The optional parts of a record (schema 1.1): identification, findings, acceptance, measurement.

- ``identification``: what the measurement was and who made it (id, title,
  date, operator, lab, instrument, probe, customer, item), as every report
  shows it (ISO/IEC 17025:2017 7.8.2.1 lists what a report identifies).
- ``findings``: every warning of the evaluation as a structured object
  (:class:`~fieldbudget.errors.Finding`: message, code, the input-file key it
  concerns, the values involved, severity), the engine's and the physics
  checks' alike, so that reports and forms place them by key.
- ``acceptance``: the verdict on a procedure's acceptance limits for the run.
- ``measurement``: the measurement description the budget was built from
  (see :mod:`fieldbudget.files.measurement_record`).

Records of schema 1.0 have none of these keys; the readers here fall back on
what such a record does carry (the GUM warnings, the operator, the budget's
metadata).

Written by hand: this is the layout of fieldbudget's own record.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from ..errors import Finding, InputError

__all__ = ["IDENTIFICATION_KEYS", "acceptance_of", "findings_of", "identification_from_metadata",
           "identification_of", "merge_details"]

#: The identification fields, in the order reports print them.
IDENTIFICATION_KEYS = ("id", "title", "date", "operator", "lab", "instrument", "probe", "customer", "item")
_DETAIL_KEYS = ("identification", "findings", "acceptance", "measurement")


def _findings(items: Iterable[Any]) -> list[Finding]:
    out: list[Finding] = []
    seen: set[str] = set()
    for w in items or ():
        f = Finding.coerce(dict(w) if isinstance(w, Mapping) else w)
        if f.message not in seen:  # the same message from two layers is one finding
            seen.add(f.message)
            out.append(f)
    return out


def _text_fields(d: Mapping, where: str) -> dict[str, str]:
    out = {}
    for k, v in d.items():
        if v is None or v == "":
            continue
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            v = str(v)
        if not isinstance(v, str):
            raise InputError(f"identification.{k}", v, "a text string", where)
        out[str(k)] = v
    return out


def identification_from_metadata(metadata: Mapping | None) -> dict[str, str]:
    """Identification found in a budget's metadata (what ``fieldbudget.nmr`` copies from its file).

    ``id`` and ``title`` of the measurement file, its free ``metadata`` object
    (``measurement_metadata``: lab, operator, instrument, customer, item, date),
    and the probe's name and serial number.
    """
    md = metadata if isinstance(metadata, Mapping) else {}
    out: dict[str, str] = {}
    for key in ("id", "title"):
        if isinstance(md.get(key), str) and md[key]:
            out[key] = md[key]
    free = md.get("measurement_metadata")
    if isinstance(free, Mapping):
        for key in IDENTIFICATION_KEYS:
            v = free.get(key)
            if isinstance(v, (str, int, float)) and not isinstance(v, bool) and v != "":
                out.setdefault(key, str(v))
    probe = " s/n ".join(str(md[k]) for k in ("probe_name", "probe_serial") if md.get(k))
    if probe:
        out.setdefault("probe", probe)
    return out


def merge_details(details: Mapping | None, gum_warnings: Iterable[Any] = (), mc_warnings: Iterable[Any] = (), *,
                  operator: str = "", metadata: Mapping | None = None) -> dict:
    """The extra keys of a new record: ``details`` checked, with the evaluation's warnings as findings."""
    d = dict(details or {})
    unknown = sorted(set(d) - set(_DETAIL_KEYS))
    if unknown:
        raise InputError(f"details.{unknown[0]}", d[unknown[0]], f"one of {list(_DETAIL_KEYS)}", "make_record")
    out: dict = {}
    ident = identification_from_metadata(metadata)
    given = d.get("identification") or {}
    if not isinstance(given, Mapping):
        raise InputError("details.identification", given, "an object of text fields", "make_record")
    ident.update(_text_fields(given, "make_record"))
    if operator:
        ident.setdefault("operator", operator)
    if ident:
        out["identification"] = ident
    findings = _findings([*(d.get("findings") or ()), *gum_warnings, *mc_warnings])
    out["findings"] = [f.to_dict() for f in findings]
    if d.get("acceptance") is not None:
        acc = d["acceptance"]
        acc = acc.to_dict() if hasattr(acc, "to_dict") else dict(acc)
        out["acceptance"] = acc
    if d.get("measurement") is not None:
        out["measurement"] = dict(d["measurement"])
    return out


def findings_of(record) -> tuple[Finding, ...]:
    """The record's findings (schema 1.1), or its GUM and Monte Carlo warnings as findings (1.0)."""
    stored = (record.extra or {}).get("findings")
    if stored is not None:
        return tuple(_findings(stored))
    return tuple(_findings([*(record.gum.get("warnings") or ()),
                            *((record.monte_carlo or {}).get("warnings") or ())]))


def identification_of(record) -> dict[str, str]:
    """The record's identification; for a 1.0 record, what its budget metadata and operator give."""
    stored = (record.extra or {}).get("identification")
    if stored is not None:
        out = {str(k): str(v) for k, v in stored.items()}
    else:
        out = identification_from_metadata(record.budget.get("metadata"))
    if record.operator:
        out.setdefault("operator", record.operator)
    if not out.get("date") and record.created_utc:
        out["date"] = record.created_utc[:10]
    return out


def acceptance_of(record) -> Mapping | None:
    return (record.extra or {}).get("acceptance")
