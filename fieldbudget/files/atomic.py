"""Atomic file writes: nothing is lost when a save fails part way.

The text goes to a temporary file in the same folder, is flushed and synced to
disk, and then renamed over the target (``os.replace`` is atomic on POSIX and
Windows for files on one file system); the folder is synced after the rename
so that the new name survives a power cut.  A failure or a kill before the
rename leaves the old file byte-identical, and every error path removes the
temporary file.  Errors name the path as the caller gave it, never the
temporary file.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import OutputError

__all__ = ["atomic_write_text", "atomic_write_bytes"]


def _fsync_folder(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:  # pragma: no cover - e.g. Windows cannot open folders
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover - some file systems refuse fsync on folders
        pass
    finally:
        os.close(fd)


def _why(err: OSError) -> str:
    if isinstance(err, PermissionError):
        return "cannot be written there (permission denied)"
    return f"cannot be written ({err.strerror or type(err).__name__})"


def atomic_write_bytes(path: str | os.PathLike, data: bytes, *, mode: int | None = None) -> Path:
    """Write ``data`` to ``path`` atomically and return the path.

    ``mode`` sets the file's permission bits (e.g. 0o600 for a private key);
    by default an existing file keeps its mode and a new one gets the usual one.
    """
    shown = str(path)
    if shown == "":
        raise OutputError("", "an empty path names no file; give the file to write")
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if target.is_dir():
        raise OutputError(shown, "is a folder; give the name of a file to write")
    if not folder.is_dir():
        raise OutputError(shown, f"the folder {str(folder)!r} does not exist" if not folder.exists()
                          else f"{str(folder)!r} is not a folder")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as err:
        raise OutputError(shown, _why(err)) from None
    try:
        try:
            if mode is None:
                # mkstemp makes the file private (0600); give it the old file's mode, or the usual one
                try:
                    mode = os.stat(target).st_mode & 0o7777
                except FileNotFoundError:
                    umask = os.umask(0)
                    os.umask(umask)
                    mode = 0o666 & ~umask
            os.chmod(tmp, mode)
            with os.fdopen(fd, "wb") as fh:
                fd = -1
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, target)
        except OSError as err:
            raise OutputError(shown, _why(err)) from None
    except BaseException:
        if fd >= 0:
            os.close(fd)
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    _fsync_folder(folder)
    return target


def atomic_write_text(path: str | os.PathLike, text: str, encoding: str = "utf-8", *, mode: int | None = None) -> Path:
    """Write ``text`` to ``path`` atomically (UTF-8 by default) and return the path."""
    return atomic_write_bytes(path, text.encode(encoding), mode=mode)
