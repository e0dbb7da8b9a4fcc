"""Frequency readings from a counter's CSV export.

Counters write their readings as CSV with a header line of their own and
sometimes a time-stamp column; this picks the column of readings and
returns the numbers.  Written by hand on top of :mod:`csv` because it only
chooses a column; no metrology here.
"""

from __future__ import annotations

import csv
import io
import math

from ..errors import InputError

__all__ = ["readings_from_csv"]

_HINTS = ("freq", "hz", "reading", "value", "f_")


def _num(text: str) -> float | None:
    try:
        x = float(text.strip().replace("\u2212", "-"))
    except ValueError:
        return None
    return x if math.isfinite(x) else None


def readings_from_csv(content: str | bytes, column: str | int | None = None, where: str = "counter file") -> tuple[float, ...]:
    """The readings in a CSV file.

    Parameters
    ----------
    content : str or bytes
        The file's content (UTF-8 if bytes; a BOM is ignored).
    column : str or int, optional
        The header name or 0-based index of the column; by default the first
        column whose header mentions frequency, Hz or reading, else the last
        column that holds numbers.
    """
    text = content.decode("utf-8-sig") if isinstance(content, bytes) else content.lstrip("\ufeff")
    try:
        dialect = csv.Sniffer().sniff(text[:2048], delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    rows = [r for r in csv.reader(io.StringIO(text), dialect) if any(c.strip() for c in r)]
    if not rows:
        raise InputError("readings", "", "a CSV file with at least 2 readings", where)
    header = rows[0] if any(_num(c) is None for c in rows[0]) else None
    body = rows[1:] if header is not None else rows
    ncol = max(len(r) for r in body) if body else 0
    if isinstance(column, str):
        names = [h.strip().lower() for h in header or []]
        if column.strip().lower() not in names:
            raise InputError("column", column, f"one of the file's columns {header or []}", where)
        idx = names.index(column.strip().lower())
    elif isinstance(column, int):
        idx = column
    else:
        idx = None
        if header is not None:
            idx = next((i for i, h in enumerate(header) if any(k in h.lower() for k in _HINTS)), None)
        if idx is None:
            numeric = [i for i in range(ncol) if all(_num(r[i]) is not None for r in body if i < len(r))]
            if not numeric:
                raise InputError("readings", text[:40], "a CSV file with a column of numbers", where)
            idx = numeric[-1]
    out = []
    for n, r in enumerate(body, 2 if header is not None else 1):
        x = _num(r[idx]) if idx < len(r) else None
        if x is None:
            raise InputError("readings", r[idx] if idx < len(r) else "", f"a number in every row (line {n})", where)
        out.append(x)
    return tuple(out)
