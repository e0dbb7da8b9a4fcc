"""The laboratory's archive of records: read-only copies, an SQLite index and a chained log.

Layout of ``<lab>/archive/``::

    records/000001-3f2a9c...record.json   the records, as added, read-only (mode 0444)
    index.sqlite                          what the records say, to search them (stdlib sqlite3)
    chain.log                             one JSON line per addition, append-only

Each addition *n* gets a link

    link_n = SHA-256("fieldbudget-archive/1" LF n LF link_(n-1) LF record digest LF SHA-256 of the file)

with link_0 = 64 zeros, so every entry depends on all before it (a hash
chain, the construction of an append-only log).  :func:`check` recomputes
the chain from the files and compares it with the index and the log:
a changed record (its bytes or its digest no longer match), a removed one
(a missing file or a gap in the numbering), one out of its place (a record
found at another entry's position), a file nobody added, and an index that
disagrees with the log are all reported.  The head link printed by
``archive check`` can be written in the lab's logbook: anyone who rewrote the
whole archive consistently would still change it.

Concurrent writers: an addition takes an exclusive lock on ``archive/.lock``
(``fcntl.flock`` where available) and runs inside one SQLite ``BEGIN
IMMEDIATE`` transaction, so two processes adding at once are serialised and
neither loses its entry.  The index uses SQLite's default rollback journal,
not WAL, so readers on the same machine need no shared memory file.

Written by hand because no library keeps an archive of uncertainty records;
hashing is hashlib, the index sqlite3.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import hashlib
import json
import os
import sqlite3
import stat
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .._display import fmt, html_table, text_table
from .._display import utc_now as _utc_now
from ..errors import FieldbudgetError, InputError, RecordError
from ..files.atomic import atomic_write_bytes
from ..files.record import load_record
from .folder import LabFolder, dict_html

try:  # POSIX
    import fcntl
except ImportError:  # pragma: no cover - Windows: SQLite's own lock serialises the writers
    fcntl = None

__all__ = ["ARCHIVE_FORMAT", "GENESIS", "Archive", "ArchiveCheck", "Entry", "chain_link"]

ARCHIVE_FORMAT = "fieldbudget-archive/1"
GENESIS = "0" * 64
_READ_ONLY = stat.S_IRUSR | stat.S_IRGRP | stat.S_IROTH

_COLUMNS = ("seq", "file", "record_digest", "file_sha256", "prev_link", "link", "added_utc", "added_by",
            "created_utc", "measured", "measurand", "unit", "value", "u_c", "U", "k", "operator", "item",
            "instruments", "title", "record_id", "revision")

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS entries (
    seq INTEGER PRIMARY KEY,
    file TEXT NOT NULL UNIQUE,
    record_digest TEXT NOT NULL UNIQUE,
    file_sha256 TEXT NOT NULL,
    prev_link TEXT NOT NULL,
    link TEXT NOT NULL,
    added_utc TEXT NOT NULL,
    added_by TEXT NOT NULL,
    created_utc TEXT NOT NULL,
    measured TEXT NOT NULL,
    measurand TEXT NOT NULL,
    unit TEXT NOT NULL,
    value REAL,
    u_c REAL,
    U REAL,
    k REAL,
    operator TEXT NOT NULL,
    item TEXT NOT NULL,
    instruments TEXT NOT NULL,
    title TEXT NOT NULL,
    record_id TEXT NOT NULL,
    revision INTEGER NOT NULL
);
CREATE INDEX IF NOT EXISTS entries_measured ON entries (measured);
CREATE INDEX IF NOT EXISTS entries_item ON entries (item);
"""


def chain_link(seq: int, prev_link: str, record_digest: str, file_sha256: str) -> str:
    """The link of entry ``seq`` (see the module docstring)."""
    text = f"{ARCHIVE_FORMAT}\n{seq}\n{prev_link}\n{record_digest}\n{file_sha256}"
    return hashlib.sha256(text.encode("ascii")).hexdigest()


def _num(x: Any) -> float | None:
    return float(x) if isinstance(x, (int, float)) and not isinstance(x, bool) else None


def _describe(record) -> dict:
    """The searchable fields of a record (missing ones are empty)."""
    budget_md = record.budget.get("metadata") or {}
    mmd = budget_md.get("measurement_metadata") or {}
    mmd = mmd if isinstance(mmd, Mapping) else {}
    measurand = record.measurand
    instruments = []
    for note in mmd.get("register") or ():
        if isinstance(note, Mapping) and note.get("instrument"):
            instruments.append(str(note["instrument"]))
    for ins in mmd.get("instruments") or ():
        if isinstance(ins, str):
            instruments.append(ins)
    instruments = sorted(set(instruments))
    measured = mmd.get("date") or record.created_utc[:10]
    gum = record.gum
    return {
        "created_utc": record.created_utc,
        "measured": str(measured)[:10],
        "measurand": str(measurand.get("symbol", "")),
        "unit": str(measurand.get("unit", "")),
        "value": _num(gum.get("value")), "u_c": _num(gum.get("u")), "U": _num(gum.get("U")), "k": _num(gum.get("k")),
        "operator": record.operator or str(mmd.get("operator", "")),
        "item": str(mmd.get("item", "")),
        # wrapped in commas so that LIKE '%,ID,%' finds exactly one id
        "instruments": "," + ",".join(instruments) + "," if instruments else "",
        "title": str(budget_md.get("title") or record.budget.get("title") or ""),
        "record_id": str(budget_md.get("id", "")),
        "revision": int(record.revision),
    }


@dataclass(frozen=True)
class Entry:
    """One archived record as the index knows it."""

    seq: int
    file: str
    record_digest: str
    file_sha256: str
    prev_link: str
    link: str
    added_utc: str
    added_by: str
    created_utc: str
    measured: str
    measurand: str
    unit: str
    value: float | None
    u_c: float | None
    U: float | None
    k: float | None
    operator: str
    item: str
    instruments: str
    title: str
    record_id: str
    revision: int

    @property
    def instrument_ids(self) -> tuple[str, ...]:
        return tuple(i for i in self.instruments.split(",") if i)

    def __repr__(self) -> str:
        return (f"<Entry {self.seq}: {self.measured} {self.measurand} = {fmt(self.value, 10)} {self.unit}, "
                f"U = {fmt(self.U, 2)}, {self.item or self.title}>")

    def to_dict(self) -> dict:
        d = {c: getattr(self, c) for c in _COLUMNS}
        d["instruments"] = list(self.instrument_ids)
        return d


@dataclass(frozen=True)
class Problem:
    """One thing :func:`Archive.check` found: ``kind`` is changed, removed, reordered, unindexed, log, index
    or recomputed."""

    kind: str
    seq: int | None
    detail: str

    def to_dict(self) -> dict:
        return {"kind": self.kind, "seq": self.seq, "detail": self.detail}


@dataclass(frozen=True)
class ArchiveCheck:
    """The outcome of :meth:`Archive.check`: intact when no problem was found (notes do not count)."""

    entries: int
    head: str
    problems: tuple[Problem, ...] = ()
    notes: tuple[str, ...] = ()

    @property
    def intact(self) -> bool:
        return not self.problems

    def __bool__(self) -> bool:
        return self.intact

    def __repr__(self) -> str:
        word = "intact" if self.intact else f"BROKEN ({len(self.problems)} problems)"
        return f"<ArchiveCheck {word}: {self.entries} entries, head {self.head[:12]}>"

    def report(self) -> str:
        lines = [f"{p.kind.upper()}  entry {p.seq if p.seq is not None else '-'}: {p.detail}" for p in self.problems]
        lines += [f"note: {n}" for n in self.notes]
        lines.append(f"{self.entries} entries; head of the chain {self.head}")
        lines.append("archive intact" if self.intact else "archive NOT intact")
        return "\n".join(lines)

    def to_dict(self) -> dict:
        return {"intact": self.intact, "entries": self.entries, "head": self.head,
                "problems": [p.to_dict() for p in self.problems], "notes": list(self.notes)}

    def _repr_html_(self) -> str:
        rows = [(p.kind, p.seq, p.detail) for p in self.problems] or [("intact", "", f"{self.entries} entries")]
        return html_table(("finding", "entry", "detail"), rows, caption=f"archive check: head {self.head[:16]}...",
                          css_class="fb-table fb-archive-check")


class Archive:
    """The archive of a laboratory folder (see the module docstring)."""

    def __init__(self, lab: LabFolder | str | os.PathLike) -> None:
        self.lab = lab if isinstance(lab, LabFolder) else LabFolder(Path(lab))
        self.folder = self.lab.archive_dir
        self.records_dir = self.folder / "records"
        self.index_path = self.folder / "index.sqlite"
        self.log_path = self.folder / "chain.log"
        self.lock_path = self.folder / ".lock"

    def __repr__(self) -> str:
        return f"<Archive {self.folder}>"

    # -- connections ----------------------------------------------------------------
    def _connect(self, write: bool) -> sqlite3.Connection:
        if write:
            self.records_dir.mkdir(parents=True, exist_ok=True)
            con = sqlite3.connect(self.index_path, timeout=60, isolation_level=None)
            con.executescript(_SCHEMA)
            con.execute("INSERT OR IGNORE INTO meta VALUES ('format', ?)", (ARCHIVE_FORMAT,))
        else:
            if not self.index_path.exists():
                raise InputError("archive", str(self.folder), "an archive with at least one record "
                                 "(add one with `fieldbudget archive add`)", "laboratory")
            con = sqlite3.connect(f"file:{self.index_path}?mode=ro", uri=True, timeout=60, isolation_level=None)
        con.row_factory = sqlite3.Row
        return con

    @contextlib.contextmanager
    def _lock(self) -> Iterator[None]:
        self.folder.mkdir(parents=True, exist_ok=True)
        with open(self.lock_path, "a+") as fh:
            if fcntl is not None:
                fcntl.flock(fh, fcntl.LOCK_EX)
            try:
                yield
            finally:
                if fcntl is not None:
                    fcntl.flock(fh, fcntl.LOCK_UN)

    # -- adding ---------------------------------------------------------------------
    def add(self, record_path: str | os.PathLike, *, added_by: str = "", added_utc: str | None = None) -> Entry:
        """Copy the record file into the archive (read-only), index it and chain it; return its entry.

        The record must load and its digest must match its content.  A record
        already in the archive (same digest) is refused.  The source file is
        left as it is.
        """
        src = Path(record_path)
        rec = load_record(src)   # schema and digest checked; raises RecordError
        data = src.read_bytes()
        file_sha = hashlib.sha256(data).hexdigest()
        info = _describe(rec)
        with self._lock():
            try:
                con = self._connect(write=True)
            except sqlite3.DatabaseError as err:
                raise RecordError(f"{self.index_path}: the archive's index cannot be written ({err}); nothing "
                                  "was added") from None
            try:
                con.execute("BEGIN IMMEDIATE")
                dup = con.execute("SELECT seq FROM entries WHERE record_digest = ?", (rec.digest,)).fetchone()
                if dup is not None:
                    raise InputError("record", str(src), f"a record not yet archived (its digest is that of entry "
                                     f"{dup['seq']})", "archive add")
                last = con.execute("SELECT seq, link FROM entries ORDER BY seq DESC LIMIT 1").fetchone()
                seq = (last["seq"] + 1) if last else 1
                prev = last["link"] if last else GENESIS
                link = chain_link(seq, prev, rec.digest, file_sha)
                name = f"{seq:06d}-{rec.digest[:16]}.record.json"
                target = self.records_dir / name
                if target.exists():
                    raise RecordError(f"{target}: already exists but is not in the index; run "
                                      "`fieldbudget archive check`")
                atomic_write_bytes(target, data)
                os.chmod(target, _READ_ONLY)
                row = {"seq": seq, "file": name, "record_digest": rec.digest, "file_sha256": file_sha,
                       "prev_link": prev, "link": link, "added_utc": added_utc or _utc_now(),
                       "added_by": added_by, **info}
                try:
                    con.execute(f"INSERT INTO entries ({', '.join(_COLUMNS)}) VALUES "
                                f"({', '.join('?' for _ in _COLUMNS)})", [row[c] for c in _COLUMNS])
                    line = json.dumps({k: row[k] for k in ("seq", "file", "record_digest", "file_sha256", "prev_link",
                                                           "link", "added_utc")}, sort_keys=True)
                    with open(self.log_path, "a", encoding="utf-8") as log:
                        log.write(line + "\n")
                        log.flush()
                        os.fsync(log.fileno())
                    con.execute("COMMIT")
                except BaseException:
                    with contextlib.suppress(Exception):
                        con.execute("ROLLBACK")
                    with contextlib.suppress(FileNotFoundError):
                        os.chmod(target, stat.S_IWUSR | _READ_ONLY)
                        target.unlink()
                    raise
            except BaseException:
                if con.in_transaction:
                    with contextlib.suppress(Exception):
                        con.execute("ROLLBACK")
                raise
            finally:
                con.close()
        return Entry(**row)

    # -- reading --------------------------------------------------------------------
    def entries(self) -> tuple[Entry, ...]:
        """Every entry, in the order added."""
        return self.find()

    def find(self, *, measurand: str | None = None, instrument: str | None = None, operator: str | None = None,
             item: str | None = None, date_from: str | None = None, date_to: str | None = None,
             text: str | None = None) -> tuple[Entry, ...]:
        """Entries matching every filter given (dates YYYY-MM-DD, inclusive, on the measurement's date).

        ``measurand`` and ``instrument`` match exactly; ``operator``, ``item`` and
        ``text`` (title, item, record id) match a part, ignoring case.
        """
        where, args = [], []
        if measurand:
            where.append("measurand = ?")
            args.append(measurand)
        if instrument:
            where.append("instruments LIKE ?")
            args.append(f"%,{instrument},%")
        if operator:
            where.append("operator LIKE ?")
            args.append(f"%{operator}%")
        if item:
            where.append("item LIKE ?")
            args.append(f"%{item}%")
        if text:
            where.append("(title LIKE ? OR item LIKE ? OR record_id LIKE ?)")
            args += [f"%{text}%"] * 3
        for name, value, op in (("--from", date_from, ">="), ("--to", date_to, "<=")):
            if value:
                try:
                    _dt.date.fromisoformat(value)
                except ValueError:
                    raise InputError(name, value, "a date YYYY-MM-DD", "archive find") from None
                where.append(f"measured {op} ?")
                args.append(value)
        if not self.index_path.exists():
            return ()
        sql = f"SELECT {', '.join(_COLUMNS)} FROM entries"
        if where:
            sql += " WHERE " + " AND ".join(where)
        sql += " ORDER BY seq"
        try:
            con = self._connect(write=False)
            try:
                return tuple(Entry(**dict(r)) for r in con.execute(sql, args))
            finally:
                con.close()
        except sqlite3.DatabaseError as err:
            raise RecordError(f"{self.index_path}: the archive's index cannot be read ({err}); "
                              "run `fieldbudget archive check`") from None

    def path_of(self, entry: Entry) -> Path:
        return self.records_dir / entry.file

    def record(self, entry: Entry):
        """The archived record of ``entry`` (loaded and digest-checked)."""
        return load_record(self.path_of(entry))

    @staticmethod
    def table(entries) -> str:
        return text_table(("#", "measured", "measurand", "value", "U", "k", "operator", "item / title", "file"),
                          [(e.seq, e.measured, e.measurand, f"{fmt(e.value, 10)} {e.unit}".strip(),
                            fmt(e.U, 2), fmt(e.k, 3), e.operator, e.item or e.title, e.file) for e in entries])

    # -- checking -------------------------------------------------------------------
    def check(self, *, head: str | None = None, recompute: bool = False) -> ArchiveCheck:
        """Recompute the chain from the files and compare it with the index and the log.

        ``head``: a link noted earlier (from a previous check, in the logbook); an
        archive that has no entry with that link was rewritten or cut short.
        ``recompute``: also re-evaluate every record (:func:`~fieldbudget.files.record.verify_record`);
        a record whose results this release no longer reproduces is a ``recomputed`` finding.
        """
        problems: list[Problem] = []
        notes: list[str] = []
        if not self.index_path.exists():
            if self.records_dir.exists() and any(self.records_dir.iterdir()):
                problems.append(Problem("index", None, f"{self.index_path} is missing but records are present"))
            return ArchiveCheck(0, GENESIS, tuple(problems), ("the archive is empty",))
        try:
            entries = self.entries()
        except RecordError as err:
            return ArchiveCheck(0, GENESIS, (Problem("index", None, str(err)),))
        by_digest = {e.record_digest: e for e in entries}
        prev = GENESIS
        expected_seq = 1
        writable = []
        for e in entries:
            if e.seq != expected_seq:
                gone = ", ".join(map(str, range(expected_seq, e.seq)))
                problems.append(Problem("removed", expected_seq, f"entry {gone} is missing from the index"))
            expected_seq = e.seq + 1
            if e.prev_link != prev:
                problems.append(Problem("reordered" if e.prev_link in {x.link for x in entries} else "changed",
                                        e.seq, "its link to the previous entry does not match the chain"))
            if chain_link(e.seq, e.prev_link, e.record_digest, e.file_sha256) != e.link:
                problems.append(Problem("changed", e.seq, "the index row does not give its own link"))
            prev = e.link
            path = self.path_of(e)
            if not path.exists():
                problems.append(Problem("removed", e.seq, f"{e.file} is missing from {self.records_dir}"))
                continue
            data = path.read_bytes()
            if path.stat().st_mode & (stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH):
                writable.append(e.file)
            if hashlib.sha256(data).hexdigest() == e.file_sha256:
                if recompute:
                    problems += self._recompute(e, path)
                continue
            try:
                rec = load_record(path, check_digest=False)
            except FieldbudgetError as err:
                problems.append(Problem("changed", e.seq, f"{e.file} is no longer a readable record ({err})"))
                continue
            other = by_digest.get(rec.digest)
            if other is not None and other.seq != e.seq and rec.digest_ok():
                problems.append(Problem("reordered", e.seq, f"{e.file} holds the record of entry {other.seq}"))
            else:
                problems.append(Problem("changed", e.seq, f"{e.file} differs from the file that was added "
                                        "(its SHA-256 does not match)"))
        noted, head = head, prev
        known = {e.file for e in entries}
        if self.records_dir.exists():
            for p in sorted(self.records_dir.iterdir()):
                if p.name not in known and not p.name.startswith("."):
                    problems.append(Problem("unindexed", None, f"{p.name} is in the archive but was never added"))
        problems += self._check_log(entries)
        if noted and noted.strip().lower() not in {e.link for e in entries} | {GENESIS}:
            problems.append(Problem("removed", None, f"no entry has the link noted earlier ({noted.strip()[:16]}...): "
                                    "entries were removed from the end or the archive was rewritten"))
        if writable:
            notes.append(f"{len(writable)} archived file(s) are writable (copied or checked out?); they should be "
                         "read-only, e.g. " + writable[0])
        return ArchiveCheck(len(entries), head, tuple(problems), tuple(notes))

    def _recompute(self, e: Entry, path: Path) -> list[Problem]:
        from ..files.record import verify_record

        try:
            result = verify_record(path)
        except FieldbudgetError as err:
            return [Problem("recomputed", e.seq, f"{e.file} cannot be verified ({err})")]
        return [Problem("recomputed", e.seq, f"{c.name}: {c.detail}") for c in result.failures
                if c.name != "file form"]

    def _check_log(self, entries) -> list[Problem]:
        if not self.log_path.exists():
            return [Problem("log", None, f"{self.log_path.name} is missing")] if entries else []
        lines = [ln for ln in self.log_path.read_text(encoding="utf-8").splitlines() if ln.strip()]
        out = []
        logged = []
        for i, ln in enumerate(lines, 1):
            try:
                logged.append(json.loads(ln))
            except json.JSONDecodeError:
                out.append(Problem("log", None, f"{self.log_path.name} line {i} is not JSON"))
        by_seq = {e.seq: e for e in entries}
        seen = set()
        for item in logged:
            seq = item.get("seq")
            seen.add(seq)
            e = by_seq.get(seq)
            if e is None:
                out.append(Problem("removed", seq, f"the log has entry {seq} ({item.get('file')}), the index does not"))
            elif item.get("link") != e.link or item.get("record_digest") != e.record_digest:
                out.append(Problem("index", seq, "the index and the log disagree about this entry"))
        for seq in sorted(set(by_seq) - seen):
            out.append(Problem("log", seq, "the index has this entry, the log does not"))
        if [x.get("seq") for x in logged] != sorted(x.get("seq") for x in logged if isinstance(x.get("seq"), int)):
            out.append(Problem("reordered", None, "the log's lines are out of order"))
        return out

    # -- series for monitoring ----------------------------------------------------------
    def series(self, *, item: str | None = None, measurand: str | None = None,
               instrument: str | None = None) -> tuple[Entry, ...]:
        """Entries of one monitored quantity, by measurement date then order added."""
        found = self.find(item=item, measurand=measurand, instrument=instrument)
        return tuple(sorted(found, key=lambda e: (e.measured, e.seq)))

    def _repr_html_(self) -> str:
        rows = [(e.seq, e.measured, e.measurand, f"{fmt(e.value, 10)} {e.unit}", fmt(e.U, 2), e.operator,
                 e.item or e.title) for e in self.entries()]
        return html_table(("#", "measured", "measurand", "value", "U", "operator", "item / title"), rows,
                          caption=f"archive {self.folder}", css_class="fb-table fb-archive")


# the small values show their to_dict as a table in a notebook
for _cls in (Entry, Problem):
    _cls._repr_html_ = dict_html
