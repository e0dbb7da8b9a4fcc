"""CSV of the budget table: one row per input, full float precision (``repr``), UTF-8."""

from __future__ import annotations

import csv
import io

from .tables import ReportData

__all__ = ["CSV_COLUMNS", "render_csv"]

CSV_COLUMNS = ("symbol", "estimate", "unit", "distribution", "stated_as", "stated_value", "divisor", "u_x", "dof",
               "sensitivity", "u_contribution", "variance_share", "source", "reference")


def _num(x) -> str:
    return "" if x is None else repr(float(x))


def render_csv(data: ReportData) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for r in data.rows:
        w.writerow((r.symbol, _num(r.estimate), r.unit, r.distribution, r.how_stated, _num(r.stated),
                    _num(r.divisor), _num(r.u_x), "inf" if r.dof is None else _num(r.dof), _num(r.sensitivity),
                    _num(r.u_contribution), _num(r.share), r.source, r.reference))
    return buf.getvalue()
