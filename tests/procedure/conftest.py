"""Shared fixtures: the shipped templates, parsed fresh for each test so tests can mutate them."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
TEMPLATES = ROOT / "templates"
NMR_TEMPLATE = TEMPLATES / "nmr-reference-field.toml"


@pytest.fixture
def nmr_data() -> dict:
    """The NMR template as the plain dict tomllib gives (a fresh copy)."""
    return tomllib.loads(NMR_TEMPLATE.read_text("utf-8"))
