"""Budget files: the JSON form of a :class:`~fieldbudget.engine.Budget` (format in the README).

Reading never evaluates anything as code: JSON is parsed with the standard
library and the model expression goes through the engine's safe parser.
Writing is atomic (see :mod:`fieldbudget.files.atomic`).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

from ..engine import Budget
from ..errors import BudgetFileError
from .atomic import atomic_write_text

__all__ = ["load_budget", "save_budget", "read_json"]


def read_json(path: str | os.PathLike) -> object:
    """Parse a JSON file; any failure is a :class:`BudgetFileError` naming the file."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise BudgetFileError(str(p), "", "no such file") from None
    except (OSError, UnicodeDecodeError) as err:
        raise BudgetFileError(str(p), "", f"cannot be read ({err})") from None
    try:
        return json.loads(text, parse_constant=_refuse_constant)
    except json.JSONDecodeError as err:
        raise BudgetFileError(str(p), "", f"is not valid JSON (line {err.lineno}, column {err.colno}: {err.msg})") from None
    except ValueError as err:
        raise BudgetFileError(str(p), "", str(err)) from None


def _refuse_constant(name: str) -> float:
    raise ValueError(f"is not valid JSON ({name} is not a number in JSON; write a finite number)")


def load_budget(path: str | os.PathLike, command: str = "evaluate") -> Budget:
    """Read a budget file; another kind of fieldbudget file gets a message saying what it is."""
    from .measurement_record import refuse_other_kind

    doc = read_json(path)
    refuse_other_kind(doc, str(path), ("budget",), command)
    return Budget.from_dict(doc, where=str(path))


def save_budget(budget: Budget, path: str | os.PathLike) -> Path:
    """Write ``budget`` as a budget file (atomic; indented, keys in a stable order)."""
    return atomic_write_text(path, json.dumps(budget.to_dict(), indent=2, ensure_ascii=False) + "\n")
