"""Output paths: no command silently replaces its own input, a record, or an existing file.

:func:`check_output` is called by every command and widget that writes a
file, before anything is computed or written:

- an output that resolves to one of the command's inputs (the budget file,
  the measurement file, the record being reported) is refused;
- an existing record is never replaced, except by its own next revision
  (``record -o R --previous R``, which the caller allows explicitly);
- any other existing file is replaced only when the caller passes ``force``
  (``--force`` on the command line, a confirmation in a widget).

Messages name the path as the user gave it.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

from ..errors import OutputError

__all__ = ["check_output", "is_record_file", "same_file"]

_RECORD_MARK = b'"kind": "fieldbudget record"'


def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    """True when the two paths name the same file (after links and ``..``), existing or not."""
    pa, pb = Path(a), Path(b)
    try:
        if pa.exists() and pb.exists():
            return os.path.samefile(pa, pb)
    except OSError:
        pass
    return pa.resolve() == pb.resolve()


def is_record_file(path: str | os.PathLike) -> bool:
    """Whether the file at ``path`` is (or claims to be) a fieldbudget record."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(1 << 20)
    except OSError:
        return False
    return _RECORD_MARK in head or b'"kind":"fieldbudget record"' in head


def check_output(path: str | os.PathLike, *, inputs: Iterable[tuple[str, str | os.PathLike | None]] = (),
                 force: bool = False, record_ok: bool = False, what: str = "output") -> Path:
    """Refuse an output path that would silently replace an input, a record or an existing file.

    Parameters
    ----------
    path : the output path as the user gave it.
    inputs : ``(label, path)`` pairs of the command's inputs, e.g. ``("budget file", "b.json")``.
    force : whether an existing non-record file may be replaced (``--force``).
    record_ok : whether an existing record may be replaced (only a record's own next revision).
    what : what is written, for the message ("report", "budget file", ...).
    """
    shown = str(path)
    if shown == "":
        raise OutputError("", f"an empty path names no file; give the {what} file to write")
    for label, inp in inputs:
        if inp is not None and str(inp) != "" and same_file(path, inp):
            raise OutputError(shown, f"is the {label} this command reads ({inp}); write the {what} to another file")
    p = Path(path)
    if p.is_dir():
        raise OutputError(shown, f"is a folder; give the name of the {what} file to write")
    if p.exists():
        if is_record_file(p):
            if not record_ok:
                raise OutputError(shown, "is a record; records are never overwritten (write to another file, or "
                                  "make the next revision with `fieldbudget record ... --previous` onto it)")
        elif not force:
            raise OutputError(shown, "exists already; pass --force to replace it")
    return p
