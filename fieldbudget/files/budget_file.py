"""Budget files: the JSON form of a :class:`~fieldbudget.engine.Budget` (format in the README).

Reading never evaluates anything as code: JSON is parsed with the standard
library and the model expression goes through the engine's safe parser.
Writing is atomic (see :mod:`fieldbudget.files.atomic`).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

from .._io import read_json_file
from ..engine import Budget
from .atomic import atomic_write_text

__all__ = ["load_budget", "save_budget", "read_json"]


def read_json(path: str | os.PathLike) -> object:
    """Parse a JSON file strictly (:func:`fieldbudget._io.read_json_file`); failures name the file and place."""
    return read_json_file(path)


def load_budget(path: str | os.PathLike, command: str = "evaluate") -> Budget:
    """Read a budget file; another kind of fieldbudget file gets a message saying what it is."""
    from .measurement_record import refuse_other_kind

    doc = read_json(path)
    refuse_other_kind(doc, str(path), ("budget",), command)
    return Budget.from_dict(doc, where=str(path))


def save_budget(budget: Budget, path: str | os.PathLike) -> Path:
    """Write ``budget`` as a budget file (atomic; indented, keys in a stable order)."""
    return atomic_write_text(path, json.dumps(budget.to_dict(), indent=2, ensure_ascii=False) + "\n")
