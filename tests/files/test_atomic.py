"""Atomic writes keep the old file's permissions (or the umask's) instead of mkstemp's private 0600."""

from __future__ import annotations

import os
import stat

from fieldbudget.files.atomic import atomic_write_text


def test_new_file_follows_umask(tmp_path):
    old = os.umask(0o022)
    try:
        p = atomic_write_text(tmp_path / "a.json", "{}")
    finally:
        os.umask(old)
    assert stat.S_IMODE(p.stat().st_mode) == 0o644


def test_existing_file_keeps_its_mode(tmp_path):
    p = tmp_path / "a.json"
    p.write_text("old")
    p.chmod(0o640)
    atomic_write_text(p, "new")
    assert p.read_text() == "new" and stat.S_IMODE(p.stat().st_mode) == 0o640
