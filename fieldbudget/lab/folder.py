"""The laboratory folder: where its register, archive and settings live."""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError

__all__ = ["LAB_ENV", "LabFolder", "lab_folder"]

#: Environment variable naming the laboratory folder when ``--lab`` is not given.
LAB_ENV = "FIELDBUDGET_LAB"


@dataclass(frozen=True)
class LabFolder:
    """A laboratory folder (nothing is created until something is added)."""

    path: Path

    @property
    def register_dir(self) -> Path:
        return self.path / "register"

    @property
    def archive_dir(self) -> Path:
        return self.path / "archive"

    @property
    def settings_path(self) -> Path:
        return self.path / "settings.toml"

    def settings(self) -> dict[str, Any]:
        """``settings.toml`` as a dict ({} when the file is absent)."""
        p = self.settings_path
        if not p.exists():
            return {}
        try:
            return tomllib.loads(p.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError) as err:
            raise InputError("settings.toml", str(p), f"a readable TOML file ({err})", "laboratory folder") from None
        except tomllib.TOMLDecodeError as err:
            raise InputError("settings.toml", str(p), f"valid TOML ({err})", "laboratory folder") from None

    def table(self, name: str) -> dict[str, Any]:
        """One table of the settings (``{}`` when absent); refuses a key that is not a table."""
        t = self.settings().get(name, {})
        if not isinstance(t, dict):
            raise InputError(f"settings.toml [{name}]", t, "a table", str(self.path))
        return t

    def __repr__(self) -> str:
        return f"<LabFolder {self.path}>"


def lab_folder(path: str | os.PathLike | None = None, *, must_exist: bool = True) -> LabFolder:
    """The laboratory folder ``path``, or the one named by ``FIELDBUDGET_LAB``.

    Raises :class:`~fieldbudget.errors.InputError` naming ``--lab`` when
    neither is given or the folder does not exist.
    """
    raw = path if path not in (None, "") else os.environ.get(LAB_ENV, "")
    if not raw:
        raise InputError("--lab", None, f"a laboratory folder (give --lab DIR or set {LAB_ENV})", "laboratory")
    p = Path(raw).expanduser()
    if must_exist and not p.is_dir():
        raise InputError("--lab", str(raw), "an existing laboratory folder", "laboratory")
    return LabFolder(p)


def dict_html(self: Any) -> str:
    """``_repr_html_`` for the small values of this package: their ``to_dict`` as a two-column table."""
    import json

    from .._display import html_table

    rows = [(k, v if isinstance(v, (str, int, float)) or v is None else json.dumps(v, ensure_ascii=False))
            for k, v in self.to_dict().items()]
    return html_table(("", ""), rows, caption=type(self).__name__, css_class="fb-table fb-lab")
