"""A numbered way of computing something whose numbers a record must reproduce (a sampler, a method).

Each such setting has a current version and the versions still known; a
record names the version it was made with, and re-evaluation runs inside
``setting.use(version)``.  A context variable holds the version in force, so
a verification in one thread does not change another's.
"""

from __future__ import annotations

import contextlib
import contextvars
from collections.abc import Iterator

from ..errors import InputError

__all__ = ["VersionSetting"]


class VersionSetting:
    """The version in force of one numbered computation (``current`` unless :meth:`use` says otherwise)."""

    def __init__(self, name: str, current: int, known: tuple[int, ...], where: str) -> None:
        self.name, self.current, self.known, self.where = name, current, known, where
        self._var: contextvars.ContextVar[int] = contextvars.ContextVar(f"fieldbudget_{name}", default=current)

    def check(self, version: object) -> int:
        """``version`` when it is a known one; else an error naming the setting and the versions allowed."""
        if isinstance(version, bool) or version not in self.known:
            raise InputError(self.name, version, f"one of {list(self.known)}", self.where)
        return int(version)  # type: ignore[arg-type]

    def get(self) -> int:
        return self._var.get()

    @contextlib.contextmanager
    def use(self, version: int) -> Iterator[int]:
        """Within the block, ``version`` is in force."""
        token = self._var.set(self.check(version))
        try:
            yield version
        finally:
            self._var.reset(token)
