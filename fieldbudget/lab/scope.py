"""The CMC table of the accreditation scope, built from the laboratory's own records.

A scope file (TOML or JSON, ``format = "fieldbudget-cmc-scope/1"``) names the
measurand, the method or type of instrument, the field ranges and the form of
the claim (``absolute``, ``relative`` or ``linear``, as
:func:`fieldbudget.calibration.cmc.build_cmc_table` takes them), and the best
measurements behind it:

- ``records``: measurement records (their reported result: the GUM one, or
  the Monte Carlo one when the GUM result failed its JCGM 101:2008 clause 8
  validation, with U the larger distance from the estimate to an end of the
  coverage interval) and calibration records (each point: the reference
  field and the expanded uncertainty of its error).  Each record's digest is
  checked when it is read; paths are relative to the scope file.
- ``measurements``: best measurements stated by hand, ``{value_T, U_T,
  coverage_probability, source}``.

Example::

    format = "fieldbudget-cmc-scope/1"
    measurand = "magnetic flux density, static field"
    method = "Hall-probe teslameters, comparison with proton NMR"
    form = "linear"
    ranges_T = [[0.05, 0.5], [0.5, 2.0]]
    records = ["records/LMCL-C-2026-0419.record.json"]

Written by hand: the scope file is this kit's own format; the table comes from
:mod:`fieldbudget.calibration.cmc`.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..calibration.cmc import CMC_FORMS, BestMeasurement, CMCTable, build_cmc_table
from ..errors import BudgetFileError, InputError

__all__ = ["SCOPE_FORMAT", "CMCScope", "load_scope"]

SCOPE_FORMAT = "fieldbudget-cmc-scope/1"
_KEYS = {"format", "measurand", "method", "form", "ranges_T", "records", "measurements", "title", "digits"}
_MEASUREMENT_KEYS = {"value_T", "U_T", "coverage_probability", "source"}


@dataclass(frozen=True)
class CMCScope:
    """A scope file read and its CMC table built: ``table`` and the ``sources`` (record path, digest)."""

    path: str
    title: str
    table: CMCTable
    sources: tuple[tuple[str, str], ...]

    def __repr__(self) -> str:
        return f"<CMCScope {self.path}: {len(self.table.entries)} range(s) from {len(self.sources)} record(s)>"

    def to_dict(self) -> dict:
        return {"scope": self.path, "title": self.title, **self.table.to_dict(),
                "records": [{"path": p, "digest": d} for p, d in self.sources]}

    def _repr_html_(self) -> str:
        return self.table._repr_html_()


def _fail(where: str, pointer: str, message: str) -> BudgetFileError:
    return BudgetFileError(where, pointer, message)


def _number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _from_record(path: Path, shown: str, where: str, pointer: str) -> tuple[list[BestMeasurement], str]:
    from ..files import calibration_record as cal
    from ..files.record import load_record

    if not path.is_file():
        raise _fail(where, pointer, f"names {shown!r}, which is not a file (paths are relative to the scope file)")
    if cal.record_kind(path) == cal.CALIBRATION_KIND:
        rec = cal.load_calibration_record(path)
        points = (rec.results.get("summary") or {}).get("points") or []
        best = [BestMeasurement(float(p["reference_T"]), float(p["U_T"]),
                                float(p.get("coverage_probability") or 0.9545),
                                f"{shown}, point {p.get('id', i + 1)}") for i, p in enumerate(points)]
        return best, rec.digest
    rec = load_record(path)
    unit = (rec.gum.get("measurand") or {}).get("unit", "")
    if unit != "T":
        raise _fail(where, pointer, f"names {shown!r}, whose measurand is in {unit or 'no unit'!r}; a CMC record "
                                    "of flux density must state it in T")
    p = float(rec.gum.get("coverage_probability") or 0.9545)
    validation = rec.validation or {}
    if validation.get("validated") is False and rec.monte_carlo:
        y = float(rec.monte_carlo["value"])
        lo, hi = (float(v) for v in rec.monte_carlo["interval"])
        return [BestMeasurement(y, max(y - lo, hi - y), p, f"{shown} (Monte Carlo result)")], rec.digest
    return [BestMeasurement(float(rec.gum["value"]), float(rec.gum["U"]), p, shown)], rec.digest


def load_scope(path: str | os.PathLike) -> CMCScope:
    """Read a scope file, read and check the records it names, and build its CMC table."""
    from .._io import read_object_file

    where = str(path)
    doc = read_object_file(path, what="CMC scope file")
    if doc.get("format") != SCOPE_FORMAT:
        raise _fail(where, "#/format", f"must be {SCOPE_FORMAT!r} (got {doc.get('format')!r})")
    unknown = sorted(set(doc) - _KEYS)
    if unknown:
        raise _fail(where, f"#/{unknown[0]}", f"is not a key of a scope file (allowed: {', '.join(sorted(_KEYS))})")
    for key in ("measurand", "method"):
        if not isinstance(doc.get(key), str) or not doc[key].strip():
            raise _fail(where, f"#/{key}", "must be a text (ILAC P14 asks for the measurand and the method or "
                                            "type of instrument)")
    form = doc.get("form", "linear")
    if form not in CMC_FORMS:
        raise _fail(where, "#/form", f"must be one of {', '.join(map(repr, CMC_FORMS))} (got {form!r})")
    ranges = doc.get("ranges_T")
    if not isinstance(ranges, list) or not ranges or not all(
            isinstance(r, list) and len(r) == 2 and all(_number(x) for x in r) for r in ranges):
        raise _fail(where, "#/ranges_T", "must be a list of [lower, upper] field ranges in T")
    records, stated = doc.get("records", []), doc.get("measurements", [])
    if not isinstance(records, list) or not all(isinstance(r, str) and r for r in records):
        raise _fail(where, "#/records", "must be a list of record file paths")
    if not isinstance(stated, list) or not all(isinstance(m, Mapping) for m in stated):
        raise _fail(where, "#/measurements", "must be a list of tables {value_T, U_T, source}")
    if not records and not stated:
        raise _fail(where, "#", "needs best measurements: 'records', 'measurements' or both")
    base = Path(path).parent
    best: list[BestMeasurement] = []
    sources: list[tuple[str, str]] = []
    for i, name in enumerate(records):
        found, digest = _from_record(base / name, name, where, f"#/records/{i}")
        best += found
        sources.append((name, digest))
    for i, m in enumerate(stated):
        at = f"#/measurements/{i}"
        extra = sorted(set(m) - _MEASUREMENT_KEYS)
        if extra:
            raise _fail(where, f"{at}/{extra[0]}", f"is not a key here (allowed: {', '.join(sorted(_MEASUREMENT_KEYS))})")
        for key in ("value_T", "U_T"):
            if not _number(m.get(key)):
                raise _fail(where, f"{at}/{key}", "must be a finite number (T)")
        p = m.get("coverage_probability", 0.9545)
        if not _number(p):
            raise _fail(where, f"{at}/coverage_probability", "must be a number")
        source = m.get("source", "")
        if not isinstance(source, str) or not source.strip():
            raise _fail(where, f"{at}/source", "must say which budget or measurement it is")
        best.append(BestMeasurement(float(m["value_T"]), float(m["U_T"]), float(p), source))
    digits = doc.get("digits", 2)
    try:
        table = build_cmc_table(best, [tuple(r) for r in ranges], measurand=doc["measurand"], method=doc["method"],
                                unit="T", form=form, digits=digits)
    except InputError as err:  # a range without measurements, overlapping ranges, p not about 95 %, ...
        raise _fail(where, "#", str(err)) from None
    title = doc.get("title", "")
    if not isinstance(title, str):
        raise _fail(where, "#/title", "must be a text")
    return CMCScope(where, title, table, tuple(sources))
