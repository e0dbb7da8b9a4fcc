"""Recording a measurement file as itself, and telling apart the kinds of fieldbudget files.

``fieldbudget record`` takes a budget file, an NMR measurement file or a
calibration file, recognised by its ``format`` key.  A record made from an
NMR measurement file keeps, beside the budget built from it (schema 1.1,
key ``measurement``):

- the measurement description as read (drift logs included);
- every file it names (``{"path": ...}`` objects, e.g. ``readings_csv``) with
  its SHA-256 and its text, so the record re-builds without the original
  folder;

and its physics warnings as structured findings.  :func:`check_measurement`
(called by ``verify``) writes the named files to a temporary folder,
re-builds the budget from the description and checks that it equals the
recorded one.

A file of the wrong kind for a command gets a message saying what it is
(:func:`refuse_other_kind`).

Written by hand: the dispatch over fieldbudget's own file formats.
"""

from __future__ import annotations

import hashlib
import json
import tempfile
from collections.abc import Mapping
from pathlib import Path, PurePosixPath
from typing import Any

from ..errors import BudgetFileError, FieldbudgetError, Finding

__all__ = ["KINDS", "check_measurement", "collect_files", "document_kind", "make_measurement_record",
           "record_file", "refuse_other_kind"]

NMR_FORMAT_PREFIX = "fieldbudget-nmr/"
CALIBRATION_FORMAT_PREFIX = "fieldbudget-calibration"

#: kind -> (what it is, in words; the commands that take it)
KINDS = {
    "budget": ("a budget file", "`fieldbudget evaluate` or `fieldbudget record`"),
    "nmr": ("an NMR measurement file", "`fieldbudget nmr` or `fieldbudget record`"),
    "calibration": ("a calibration file", "`fieldbudget calibrate` or `fieldbudget record`"),
    "record": ("a fieldbudget record", "`fieldbudget verify`, `fieldbudget report` or `fieldbudget compare`"),
    "procedure": ("a procedure file", "the procedure templates (fieldbudget.procedure)"),
}


def document_kind(doc: object) -> str:
    """``"budget"``, ``"nmr"``, ``"calibration"``, ``"record"``, ``"procedure"``, or ``""`` when unknown."""
    if not isinstance(doc, Mapping):
        return ""
    if doc.get("kind") == "fieldbudget record" and "schema_version" in doc:
        return "record"
    fmt = doc.get("format")
    if isinstance(fmt, str):
        if fmt.startswith(NMR_FORMAT_PREFIX):
            return "nmr"
        if fmt.startswith(CALIBRATION_FORMAT_PREFIX):
            return "calibration"
        if fmt.startswith("fieldbudget-budget/"):
            return "budget"
        if fmt.startswith("fieldbudget-procedure/"):
            return "procedure"
        return ""
    if "model" in doc:
        return "budget"
    # an NMR measurement file may leave out its (optional) format key; its required key says what it is
    return "nmr" if "frequency" in doc else ""


def refuse_other_kind(doc: object, path: str, wanted: tuple[str, ...], command: str) -> None:
    """Raise a one-line error when ``doc`` is a fieldbudget file of a kind ``command`` does not take."""
    kind = document_kind(doc)
    if kind and kind not in wanted:
        what, use = KINDS[kind]
        raise BudgetFileError(path, "#/format" if kind != "record" else "#/kind",
                              f"this is {what}, not what `fieldbudget {command}` reads: use {use}")


# ----------------------------------------------------------------------------
# files named by a description
# ----------------------------------------------------------------------------

def _named_paths(node: Any, pointer: str = "#") -> list[tuple[str, str]]:
    """(pointer, path) of every ``{"path": "..."}`` object in a description."""
    out: list[tuple[str, str]] = []
    if isinstance(node, Mapping):
        if isinstance(node.get("path"), str):
            out.append((pointer + "/path", node["path"]))
        for k, v in node.items():
            if k != "path":
                out.extend(_named_paths(v, f"{pointer}/{k}"))
    elif isinstance(node, (list, tuple)):
        for i, v in enumerate(node):
            out.extend(_named_paths(v, f"{pointer}/{i}"))
    return out


def _safe_relative(path: str, where: str, pointer: str) -> PurePosixPath:
    p = PurePosixPath(path.replace("\\", "/"))
    if p.is_absolute() or ".." in p.parts or not p.parts:
        raise BudgetFileError(where, pointer, f"a file kept in a record must be named relative to the measurement "
                                              f"file, without '..' (got {path!r})")
    return p


def collect_files(description: Mapping, base_dir: str | Path, where: str = "measurement") -> list[dict]:
    """Every file the description names, as ``{"path", "sha256", "text"}`` (UTF-8 text files)."""
    files: dict[str, dict] = {}
    for pointer, path in _named_paths(description):
        rel = _safe_relative(path, where, pointer)
        full = Path(base_dir) / Path(*rel.parts)
        try:
            data = full.read_bytes()
            text = data.decode("utf-8")
        except FileNotFoundError:
            raise BudgetFileError(where, pointer, f"names {path!r}, which does not exist beside it") from None
        except (OSError, UnicodeDecodeError) as err:
            raise BudgetFileError(where, pointer, f"names {path!r}, which cannot be read as UTF-8 text ({err})") \
                from None
        files[str(rel)] = {"path": str(rel), "sha256": hashlib.sha256(data).hexdigest(), "text": text}
    return [files[k] for k in sorted(files)]


# ----------------------------------------------------------------------------
# making and checking
# ----------------------------------------------------------------------------

def _nmr(description: Mapping, where: str, base_dir: str | Path):
    from ..nmr.measurement import NMRMeasurement

    return NMRMeasurement.from_dict(description, where=where, base_dir=base_dir)


def make_measurement_record(description: Mapping, *, where: str = "measurement", base_dir: str | Path = ".",
                            details: Mapping | None = None, **kw):
    """The record of an NMR measurement description (``kw`` as for :func:`~fieldbudget.files.record.make_record`)."""
    from .record import make_record

    m = _nmr(description, where, base_dir)
    result = m.evaluate()
    d = dict(details or {})
    d["measurement"] = {"format": str(description.get("format", "fieldbudget-nmr/1")),
                        "description": m.to_dict(), "files": collect_files(description, base_dir, where)}
    d["findings"] = [*(d.get("findings") or ()), *result.warnings]
    return make_record(result.budget, details=d, **kw)


def record_file(path: str | Path, *, resolve=None, **kw):
    """The record of a budget, NMR measurement or calibration file, recognised by its ``format``.

    ``resolve(description, where) -> (description, notes)`` fills in the register's instruments that an
    NMR measurement file names (see :func:`fieldbudget.lab.register.resolve_instruments`); the record keeps
    the resolved description, so that it verifies without the register.
    """
    from .budget_file import read_json
    from .record import make_record

    doc = read_json(path)
    kind = document_kind(doc)
    if kind == "nmr" and resolve is not None and isinstance(doc, dict):
        doc, _ = resolve(doc, str(path))
    if kind == "nmr":
        return make_measurement_record(doc, where=str(path), base_dir=Path(path).parent, **kw)
    if kind == "calibration":  # recorded with its points, curve and conformity (files.calibration_record)
        from .calibration_file import load_calibration

        return make_record(load_calibration(path), **kw)
    refuse_other_kind(doc, str(path), ("budget",), "record")
    from ..engine import Budget

    return make_record(Budget.from_dict(doc, where=str(path)), **kw)


def _plain(x: Any) -> Any:
    return json.loads(json.dumps(x, sort_keys=True))


def check_measurement(record) -> tuple[str, str] | None:
    """Re-build the budget from the recorded measurement: ``(status, detail)``, or None without one."""
    stored = (record.extra or {}).get("measurement")
    if stored is None:
        return None
    from .record import _thaw

    stored = _thaw(stored)
    with tempfile.TemporaryDirectory(prefix="fieldbudget-verify-") as tmp:
        for f in stored.get("files") or ():
            text = f.get("text", "")
            if hashlib.sha256(text.encode("utf-8")).hexdigest() != f.get("sha256"):
                return "fail", f"the recorded copy of {f.get('path')!r} does not match its SHA-256"
            target = Path(tmp) / Path(*_safe_relative(str(f.get("path")), "record", "#/measurement/files").parts)
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(text.encode("utf-8"))
        try:
            m = _nmr(stored.get("description") or {}, "recorded measurement", tmp)
            again = m.evaluate()
        except FieldbudgetError as err:
            return "fail", f"the recorded measurement no longer builds a budget: {err}"
    if _plain(again.budget.to_dict()) != _plain(_thaw(record.budget)):
        return "fail", "the budget built again from the recorded measurement differs from the recorded budget"
    recorded = {Finding.coerce(dict(f)).message for f in (record.extra or {}).get("findings") or ()}
    lost = [str(w) for w in again.warnings if str(w) not in recorded]
    if lost:
        return "fail", "the measurement gives warnings the record does not carry: " + "; ".join(lost)
    n = len(stored.get("files") or ())
    files = f" and the {n} file(s) it names (SHA-256 checked)" if n else ""
    return "pass", f"the budget built again from the recorded measurement{files} equals the recorded budget"
