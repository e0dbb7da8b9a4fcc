"""CSV of the budget table: one row per input, full float precision (``repr``), UTF-8."""

from __future__ import annotations

import csv
import io

from .._display import DOF_DISPLAY_LIMIT, fmt_dof
from .tables import ReportData

__all__ = ["CSV_COLUMNS", "render_csv"]

CSV_COLUMNS = ("symbol", "estimate", "unit", "distribution", "stated_as", "stated_value", "divisor", "u_x", "dof",
               "sensitivity", "sensitivity_unit", "u_contribution", "variance_share", "source", "reference")


def _num(x) -> str:
    return "" if x is None else repr(float(x))


def render_csv(data: ReportData) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for r in data.rows:
        dof = fmt_dof(r.dof) if r.dof is None or r.dof > DOF_DISPLAY_LIMIT else _num(r.dof)  # "> 1000" everywhere
        w.writerow((r.symbol, _num(r.estimate), r.unit, r.distribution, r.how_stated, _num(r.stated),
                    _num(r.divisor), _num(r.u_x), dof, _num(r.sensitivity),
                    r.sensitivity_unit, _num(r.u_contribution), _num(r.share), r.source, r.reference))
    # the correlation and second-order terms and the total, so that the shares add up to 1
    for s in data.summary_rows:
        w.writerow((s.label, "", "", "", "", "", "", "", "", "", "", "", _num(s.share), "", ""))
    # the result rows: the headline first (Monte Carlo when the GUM result failed its validation)
    marked = "" if data.headline_kind == "gum" else " (not validated by Monte Carlo, JCGM 101 clause 8)"
    gum = ("result: GUM" + marked,
           _num(data.value), data.unit, "", "", "", "", _num(data.u), fmt_dof(data.nu_eff),
           "", "", "", "", f"k = {data.k!r}, U = {data.U!r}", "")
    rows = [gum]
    if data.mc_result is not None:
        y, u, lo, hi = data.mc_result
        label = "result: Monte Carlo" + (" (headline)" if data.headline_kind == "monte_carlo" else "")
        mc = (label, _num(y), data.unit, "", "", "", "", _num(u), "", "", "", "", "",
              f"probabilistically symmetric coverage interval [{lo!r}, {hi!r}]", "")
        rows = [mc, gum] if data.headline_kind == "monte_carlo" else [gum, mc]
    for row in rows:
        w.writerow(row)
    # the warnings on the result, each with the measurement-file key it concerns (in the reference column)
    for f in data.findings:
        w.writerow(("warning" if not f.invalid else "warning: the reading may be invalid", "", "", "", "", "", "", "",
                    "", "", "", "", "", f.message, f.key or ""))
    return buf.getvalue()
