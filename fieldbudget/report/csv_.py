"""CSV of the budget table: one row per input, full float precision (``repr``), UTF-8.

Text cells are neutralised against formula injection, following the OWASP
"CSV Injection" guidance: a text that begins with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return gets a leading apostrophe and the field is quoted,
so a spreadsheet shows it as text instead of running it.  A field holding a
quote, a comma or a line break (CR or LF) is quoted (RFC 4180).  Number
columns are written by ``repr`` and never prefixed.
"""

from __future__ import annotations

import io

from .._display import DOF_DISPLAY_LIMIT, fmt_dof
from .tables import ReportData

__all__ = ["CSV_COLUMNS", "render_csv", "csv_text_cell"]

_RISKY_START = ("=", "+", "-", "@", "\t", "\r")

CSV_COLUMNS = ("symbol", "estimate", "unit", "distribution", "stated_as", "stated_value", "divisor", "u_x", "dof",
               "sensitivity", "sensitivity_unit", "u_contribution", "variance_share", "source", "reference")


def _num(x) -> str:
    return "" if x is None else repr(float(x))


def _quote(s: str) -> str:
    return '"' + s.replace('"', '""') + '"'


def csv_text_cell(x: object) -> str:
    """One CSV field for a *text* value: neutralised (apostrophe, quoted) when it could be read as a formula."""
    s = "" if x is None else str(x)
    if s.startswith(_RISKY_START):
        return _quote("'" + s)
    if any(c in s for c in ',"\r\n'):
        return _quote(s)
    return s


def _cell(x: object) -> str:
    """A number written by repr stays as it is; any other text is neutralised."""
    s = "" if x is None else str(x)
    try:
        float(s)
        return s
    except ValueError:
        return csv_text_cell(s)


class _Writer:
    def __init__(self, buf: io.StringIO) -> None:
        self.buf = buf

    def writerow(self, row) -> None:
        self.buf.write(",".join(_cell(c) for c in row) + "\n")


def render_csv(data: ReportData) -> str:
    buf = io.StringIO()
    w = _Writer(buf)
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
    for f in data.notes:  # documented choices, kept apart from the warnings
        w.writerow(("note", "", "", "", "", "", "", "", "", "", "", "", "", f.message, f.key or ""))
    return buf.getvalue()
