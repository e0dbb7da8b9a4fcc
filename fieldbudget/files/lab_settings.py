"""The laboratory's own checks of the kit's reference data, from its ``settings.toml``.

The laboratory folder (``--lab DIR``, or the ``FIELDBUDGET_LAB`` environment
variable) may hold a ``settings.toml``.  A reference value the laboratory has
checked against the original publication is marked there, by the name the
kit's data uses::

    [reference_checks."proton shielding temperature coefficient in water"]
    by = "Q. Ilves"
    date = "2026-10-14"
    against = "Metrologia 20, 81 (1984), printed paper, p. 83"

All three keys are required text.  Reports list every reference value a
budget uses that has no such entry under "reference data not yet verified by
the laboratory", with the kit's own verification remark.

Parsing is the standard library's ``tomllib``; this module only checks the
one table it defines.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import BudgetFileError

__all__ = ["LAB_ENV", "SETTINGS_FILE", "ReferenceCheck", "lab_folder", "reference_checks"]

LAB_ENV = "FIELDBUDGET_LAB"
SETTINGS_FILE = "settings.toml"
_KEYS = ("by", "date", "against")
_MEANING = {"by": "who checked", "date": "when", "against": "the publication it was checked against"}


@dataclass(frozen=True)
class ReferenceCheck:
    """One reference value checked by the laboratory: who, when, against what."""

    name: str
    by: str
    date: str
    against: str

    def to_dict(self) -> dict:
        return {"name": self.name, "by": self.by, "date": self.date, "against": self.against}


def lab_folder(lab: str | os.PathLike | None = None) -> Path | None:
    """The laboratory folder: ``lab``, else ``$FIELDBUDGET_LAB``, else None."""
    if lab:
        return Path(lab)
    env = os.environ.get(LAB_ENV)
    return Path(env) if env else None


def reference_checks(lab: str | os.PathLike | None = None) -> dict[str, ReferenceCheck]:
    """The ``[reference_checks]`` of the laboratory's ``settings.toml`` by value name ({} without one)."""
    folder = lab_folder(lab)
    if folder is None:
        return {}
    if not folder.is_dir():
        raise BudgetFileError(str(folder), "", "the laboratory folder (--lab or FIELDBUDGET_LAB) does not exist")
    path = folder / SETTINGS_FILE
    if not path.exists():
        return {}
    try:
        with open(path, "rb") as fh:
            raw = tomllib.load(fh)
    except tomllib.TOMLDecodeError as err:
        raise BudgetFileError(str(path), "", f"is not valid TOML ({err})") from None
    except OSError as err:
        raise BudgetFileError(str(path), "", f"cannot be read ({err.strerror or err})") from None
    table = raw.get("reference_checks", {})
    if not isinstance(table, dict):
        raise BudgetFileError(str(path), "reference_checks", "must be a table of [reference_checks.\"<name>\"]")
    out = {}
    for name, entry in table.items():
        where = f'reference_checks."{name}"'
        if not isinstance(entry, dict):
            raise BudgetFileError(str(path), where, "must be a table with by, date and against")
        for key in _KEYS:
            v = entry.get(key)
            if hasattr(v, "isoformat"):  # a TOML date
                v = v.isoformat()
            if not isinstance(v, str) or not v.strip():
                raise BudgetFileError(str(path), f"{where}.{key}", f"must be a non-empty text ({_MEANING[key]})")
            entry = {**entry, key: v}
        extra = sorted(set(entry) - set(_KEYS))
        if extra:
            raise BudgetFileError(str(path), f"{where}.{extra[0]}", f"unknown key: one of {', '.join(_KEYS)}")
        out[name] = ReferenceCheck(name, entry["by"], entry["date"], entry["against"])
    return out
