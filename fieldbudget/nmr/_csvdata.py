"""Numeric CSV tables with a header row (traces and field maps), read with the standard csv module.

Lines that start with ``#`` before the header are comments (an instrument's
notes); blank cells are not allowed in the columns that are used.  Every
mistake is a :class:`~fieldbudget.errors.BudgetFileError` naming the file, the
row and column, and what is allowed.  The table's SHA-256 digest (of the
file's bytes) goes with it, so a budget can name the exact data it came from.
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import BudgetFileError

__all__ = ["Table", "digest_of", "read_table"]


@dataclass(frozen=True)
class Table:
    """The numeric columns of a CSV file: ``columns`` maps a header name to a read-only float array."""

    path: str
    columns: dict
    digest: str  # "sha256:<hex>"
    n_rows: int

    def has(self, name: str) -> bool:
        return name in self.columns

    def column(self, name: str) -> np.ndarray:
        return self.columns[name]


def digest_of(raw: bytes) -> str:
    """The ``"sha256:<hex>"`` digest a :class:`Table` of these bytes carries."""
    return "sha256:" + hashlib.sha256(raw).hexdigest()


def read_table(path: str | Path, *, needed: tuple[tuple[str, ...], ...], optional: tuple[str, ...] = (),
               min_rows: int = 1, what: str = "table", data: bytes | None = None) -> Table:
    """Read ``path``; each entry of ``needed`` is a group of alternative column names, one of which must be present.

    ``data``, when given, are the file's bytes already read (by a caller that
    resolved and checked the path); the file is then not read again, and
    ``path`` only names it.  Only the needed and optional columns are converted
    to numbers; others are ignored.  Raises :class:`BudgetFileError` for an
    unreadable file, a missing column, a cell that is not a finite number, or
    too few rows.
    """
    p = Path(path)
    if data is not None:
        raw = data
    else:
        try:
            raw = p.read_bytes()
        except OSError as err:
            raise BudgetFileError(str(p), "", f"cannot be read ({err.strerror or err})") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise BudgetFileError(str(p), "", f"is not UTF-8 text (a CSV {what} was expected)") from None
    lines = text.splitlines()
    first = 0
    while first < len(lines) and (not lines[first].strip() or lines[first].lstrip().startswith("#")):
        first += 1
    if first == len(lines):
        raise BudgetFileError(str(p), "", f"is empty: a CSV {what} with a header row was expected")
    reader = csv.reader(io.StringIO("\n".join(lines[first:])))
    header = [h.strip() for h in next(reader)]
    index = {h: i for i, h in enumerate(header)}
    use: list[str] = []
    for group in needed:
        present = [g for g in group if g in index]
        if not present:
            raise BudgetFileError(str(p), f"header (line {first + 1})",
                                  f"needs a column {' or '.join(repr(g) for g in group)} (columns: {header})")
        if len(present) > 1:
            raise BudgetFileError(str(p), f"header (line {first + 1})",
                                  f"give one of the columns {' or '.join(repr(g) for g in present)}, not both")
        use.append(present[0])
    use += [o for o in optional if o in index and o not in use]
    values: dict[str, list[float]] = {name: [] for name in use}
    line_no = first + 1
    for row in reader:
        line_no += 1
        if not row or all(not c.strip() for c in row):
            continue
        if row[0].lstrip().startswith("#"):
            continue
        for name in use:
            i = index[name]
            cell = row[i].strip() if i < len(row) else ""
            try:
                v = float(cell)
            except ValueError:
                raise BudgetFileError(str(p), f"line {line_no}, column {name!r}",
                                      f"must be a finite number (got {cell!r})") from None
            if not math.isfinite(v):
                raise BudgetFileError(str(p), f"line {line_no}, column {name!r}",
                                      f"must be a finite number (got {cell!r})")
            values[name].append(v)
    n = len(values[use[0]]) if use else 0
    if n < min_rows:
        raise BudgetFileError(str(p), "", f"has {n} data rows; a {what} needs at least {min_rows}")
    columns = {}
    for name in use:
        arr = np.asarray(values[name], dtype=float)
        arr.setflags(write=False)
        columns[name] = arr
    return Table(path=str(p), columns=columns, digest=digest_of(raw), n_rows=n)
