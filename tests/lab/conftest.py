from __future__ import annotations

import os
import shutil
import stat
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE_LAB = ROOT / "examples" / "lab"


@pytest.fixture
def lab_copy(tmp_path) -> Path:
    """A writable copy of the invented laboratory folder examples/lab."""
    dst = tmp_path / "lab"
    shutil.copytree(EXAMPLE_LAB, dst, ignore=shutil.ignore_patterns("__pycache__", ".lock"))
    for p in (dst / "archive" / "records").iterdir():
        os.chmod(p, stat.S_IRUSR | stat.S_IRGRP | stat.S_IROTH)
    return dst


def make_writable(path: Path) -> None:
    os.chmod(path, stat.S_IRUSR | stat.S_IWUSR)
