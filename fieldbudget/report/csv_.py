"""CSV of the budget table: one row per input, full float precision (``repr``), UTF-8.

Text cells are neutralised against formula injection, following the OWASP
"CSV Injection" guidance: a text that begins with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return gets a leading apostrophe and the field is quoted,
so a spreadsheet shows it as text instead of running it.  A field holding a
quote, a comma or a line break (CR or LF) is quoted (RFC 4180).  Number
columns are written by ``repr`` and never prefixed.
"""

from __future__ import annotations

from .tables import ReportData

__all__ = ["CSV_COLUMNS", "render_csv", "csv_text_cell"]

CSV_COLUMNS = ("symbol", "estimate", "unit", "distribution", "stated_as", "stated_value", "divisor", "u_x", "dof",
               "sensitivity", "u_contribution", "variance_share", "source", "reference")

_RISKY_START = ("=", "+", "-", "@", "\t", "\r")


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


def render_csv(data: ReportData) -> str:
    lines = [",".join(CSV_COLUMNS)]
    for r in data.rows:
        lines.append(",".join((
            csv_text_cell(r.symbol), _num(r.estimate), csv_text_cell(r.unit), csv_text_cell(r.distribution),
            csv_text_cell(r.how_stated), _num(r.stated), _num(r.divisor), _num(r.u_x),
            "inf" if r.dof is None else _num(r.dof), _num(r.sensitivity), _num(r.u_contribution), _num(r.share),
            csv_text_cell(r.source), csv_text_cell(r.reference))))
    return "\n".join(lines) + "\n"
