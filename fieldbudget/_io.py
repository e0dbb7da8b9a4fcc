"""Strict reading of the JSON and CSV files a user hands to fieldbudget.

Every loader (budget files, NMR measurement files, records, calibration
files, procedures' data) reads JSON through :func:`parse_json` /
:func:`read_json_file`, so that each refuses the same things with the same
one-line message naming the file and the place in it:

- bytes that are not UTF-8 (the byte offset is named);
- JSON nested deeper than :data:`MAX_DEPTH` (checked before parsing, so the
  parser never recurses that deep);
- a key given twice in one object (named with its JSON pointer; Python's
  ``json`` would silently keep the last one);
- ``NaN``, ``Infinity`` and ``-Infinity`` (not JSON);
- numbers too large for a double (``1e999`` would become infinity).

Files named *by* another file (a CSV of counter readings named in a
measurement file) go through :func:`read_named_text`: UTF-8 only, and inside
the naming file's folder unless the caller allows files outside
(``--allow-outside-files``; :func:`outside_files_allowed`).

Written by hand because the standard library's ``json`` has no depth limit,
no duplicate-key report with a place and no strict number rules, and no
well-kept library adds exactly these; the parsing itself stays the standard
library's.
"""

from __future__ import annotations

import contextlib
import contextvars
import json
import math
import os
import re
from collections.abc import Iterator
from pathlib import Path

from .errors import BudgetFileError

__all__ = [
    "MAX_DEPTH",
    "MAX_BYTES",
    "decode_utf8",
    "parse_json",
    "read_bytes",
    "read_json_file",
    "read_object_file",
    "read_named_text",
    "read_named_file",
    "allow_outside_files",
    "outside_files_allowed",
    "json_pointer",
]

#: Deepest nesting of arrays/objects accepted (a budget needs fewer than 10 levels).
MAX_DEPTH = 64
#: Largest JSON or CSV file read (bytes); a record with a long histogram is well below 1 MB.
MAX_BYTES = 64 * 1024 * 1024

_STRING = re.compile(rb'"(?:[^"\\]|\\.)*"', re.DOTALL)
_BRACKETS = re.compile(rb"[\[\]{}]")


def json_pointer(parts) -> str:
    """``#/a/0/b`` for the path ``("a", 0, "b")`` (RFC 6901 escaping of ``~`` and ``/``)."""
    if not parts:
        return "#"
    return "#/" + "/".join(str(p).replace("~", "~0").replace("/", "~1") for p in parts)


def decode_utf8(data: bytes, where: str, pointer: str = "") -> str:
    """``data`` as text; a byte that is not UTF-8 is refused naming its offset.  A leading BOM is dropped."""
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise BudgetFileError(where, pointer, f"byte {err.start} (0x{data[err.start]:02x}) is not UTF-8 text; "
                              "save the file as UTF-8") from None
    return text[1:] if text.startswith("\ufeff") else text


def _depth(data: bytes) -> int:
    """Deepest bracket nesting outside strings (an upper bound is all the check needs)."""
    stripped = _STRING.sub(b'""', data)
    depth = deepest = 0
    for m in _BRACKETS.finditer(stripped):
        if m.group() in (b"[", b"{"):
            depth += 1
            if depth > deepest:
                deepest = depth
        else:
            depth -= 1
    return deepest


class _Dup(dict):
    """An object in which a key appeared twice (found after parsing, to name its place)."""

    duplicate: str = ""


def _pairs(pairs):
    d = _Dup() if len({k for k, _ in pairs}) != len(pairs) else {}
    for k, v in pairs:
        if k in d and isinstance(d, _Dup) and not d.duplicate:
            d.duplicate = k
        d[k] = v
    return d


def _constant(name: str):
    raise ValueError(f"{name} is not a number in JSON; write a finite number")


def _float(text: str) -> float:
    x = float(text)
    if not math.isfinite(x):
        raise ValueError(f"the number {text} is too large for a double (largest about 1.8e308)")
    return x


def _find_duplicate(doc) -> tuple[str, str] | None:
    stack: list[tuple[object, tuple]] = [(doc, ())]
    while stack:
        node, path = stack.pop()
        if isinstance(node, _Dup):
            return node.duplicate, json_pointer(path)
        if isinstance(node, dict):
            stack.extend((v, (*path, k)) for k, v in reversed(node.items()))
        elif isinstance(node, list):
            stack.extend((v, (*path, i)) for i, v in reversed(list(enumerate(node))))
    return None


def parse_json(data: bytes | str, where: str, *, what: str = "file") -> object:
    """Parse JSON strictly (see the module docstring); every failure is a :class:`BudgetFileError` naming ``where``."""
    raw = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    if len(raw) > MAX_BYTES:
        raise BudgetFileError(where, "", f"the {what} is {len(raw)} bytes; at most {MAX_BYTES} are read")
    text = decode_utf8(raw, where)
    if not text.strip():
        raise BudgetFileError(where, "", f"the {what} is empty (a JSON object was expected)")
    depth = _depth(raw)
    if depth > MAX_DEPTH:
        raise BudgetFileError(where, "", f"JSON nested {depth} levels deep; at most {MAX_DEPTH} levels are allowed")
    try:
        doc = json.loads(text, object_pairs_hook=_pairs, parse_constant=_constant, parse_float=_float)
    except json.JSONDecodeError as err:
        if err.pos >= len(text.rstrip()):
            raise BudgetFileError(where, "", f"is not valid JSON: the {what} ends before the JSON document does "
                                  f"(truncated at line {err.lineno}, column {err.colno})") from None
        raise BudgetFileError(where, "", f"is not valid JSON (line {err.lineno}, column {err.colno}: "
                              f"{err.msg})") from None
    except RecursionError:  # pragma: no cover - the depth check comes first
        raise BudgetFileError(where, "", f"JSON nested too deep; at most {MAX_DEPTH} levels are allowed") from None
    except ValueError as err:
        raise BudgetFileError(where, "", f"is not valid JSON ({err})") from None
    dup = _find_duplicate(doc)
    if dup is not None:
        key, pointer = dup
        raise BudgetFileError(where, pointer, f"duplicate key {key!r} in this object; give each key once")
    return doc


def read_bytes(path: str | os.PathLike, where: str, pointer: str = "") -> bytes:
    """The bytes of a file (at most MAX_BYTES); a missing, unreadable or too large file is a BudgetFileError
    naming ``where`` and ``pointer``."""
    p = Path(path)
    if str(path) == "":
        raise BudgetFileError(where or "''", pointer, "an empty path names no file")
    try:
        if p.is_dir():
            raise BudgetFileError(where, pointer, "is a folder, not a file")
        size = p.stat().st_size
        if size > MAX_BYTES:
            raise BudgetFileError(where, pointer, f"the file is {size} bytes; at most {MAX_BYTES} are read")
        return p.read_bytes()
    except FileNotFoundError:
        raise BudgetFileError(where, pointer, "no such file") from None
    except PermissionError:
        raise BudgetFileError(where, pointer, "cannot be read (permission denied)") from None
    except OSError as err:
        raise BudgetFileError(where, pointer, f"cannot be read ({err.strerror or type(err).__name__})") from None


def read_json_file(path: str | os.PathLike, *, what: str = "file") -> object:
    """Read and parse a JSON file strictly; the error names ``path`` as the user gave it."""
    where = str(path)
    return parse_json(read_bytes(path, where), where, what=what)


def read_object_file(path: str | os.PathLike, *, what: str = "file", top: str = "an object") -> dict:
    """Read a ``.toml`` file (the standard library's tomllib) or else a JSON file (strictly, as
    :func:`read_json_file`) whose top level must be a table/object; ``top`` words what it holds."""
    import tomllib

    where = str(path)
    data = read_bytes(path, where)
    if Path(path).suffix.lower() == ".toml":
        try:
            doc = tomllib.loads(decode_utf8(data, where))
        except tomllib.TOMLDecodeError as err:
            raise BudgetFileError(where, "", f"is not valid TOML ({err})") from None
    else:
        doc = parse_json(data, where, what=what)
    if not isinstance(doc, dict):
        raise BudgetFileError(where, "#", f"the top level must be {top}")
    return doc


_OUTSIDE = contextvars.ContextVar("fieldbudget_allow_outside_files", default=False)


def outside_files_allowed() -> bool:
    """Whether files named by another file may lie outside its folder (``--allow-outside-files``)."""
    return _OUTSIDE.get()


@contextlib.contextmanager
def allow_outside_files(allowed: bool = True) -> Iterator[None]:
    """Within this block, files a file names may lie outside the naming file's folder."""
    token = _OUTSIDE.set(bool(allowed))
    try:
        yield
    finally:
        _OUTSIDE.reset(token)


def read_named_text(name: str, base_dir: str | os.PathLike, where: str, pointer: str, *,
                    allow_outside: bool | None = None) -> tuple[str, Path]:
    """Read the UTF-8 text file ``name`` that the file ``where`` names at ``pointer``.

    ``name`` is taken relative to ``base_dir`` (the naming file's folder) and
    must resolve inside it (symbolic links followed) unless files outside are
    allowed.  Errors name the naming file, the pointer and ``name`` as written,
    never the other file's contents.  Returns ``(text, resolved path)``.
    """
    _, text, target = read_named_file(name, base_dir, where, pointer, allow_outside=allow_outside)
    return text, target


def read_named_file(name: str, base_dir: str | os.PathLike, where: str, pointer: str, *,
                    allow_outside: bool | None = None) -> tuple[bytes, str, Path]:
    """As :func:`read_named_text`, also giving the file's bytes (for a digest of exactly what was read):
    returns ``(bytes, text, resolved path)``, the text without a leading byte-order mark."""
    if not isinstance(name, str) or not name.strip():
        raise BudgetFileError(where, pointer, f"must be the path of a file (text) (got {name!r})")
    base = Path(base_dir).resolve()
    target = (base / name).resolve()
    allowed = outside_files_allowed() if allow_outside is None else allow_outside
    if not allowed and not target.is_relative_to(base):
        raise BudgetFileError(where, pointer, f"{name!r} lies outside the folder of {where}; files a measurement "
                              "file names must be in its folder or below it (or pass --allow-outside-files)")
    try:
        data = read_bytes(target, where, pointer)
    except BudgetFileError as err:
        raise BudgetFileError(where, pointer, f"{name!r}: {err.reason}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise BudgetFileError(where, pointer, f"byte {err.start} of {name!r} is not UTF-8 text; save it as "
                              "UTF-8") from None
    return data, (text[1:] if text.startswith("\ufeff") else text), target
