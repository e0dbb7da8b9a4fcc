"""One entry box's state: the text as typed, its parsed value, its message.

A form never loses what the user typed: the raw text stays in
:class:`Field.text` whether it parses or not, and a text that does not parse
leaves ``value`` at its last good value and sets ``error`` to a short message
for display beside the box.  The parsers are small and hand-written because
they only split and convert text; every metrological check stays in the
engine's constructors.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from typing import Any

from ..errors import FieldbudgetError, InputError

__all__ = [
    "Field",
    "message_for",
    "parse_choice",
    "parse_correlation",
    "parse_dof",
    "parse_nonnegative",
    "parse_number",
    "parse_optional_number",
    "parse_positive",
    "parse_readings",
    "parse_symbol",
    "parse_text",
]

Parser = Callable[[str, str], Any]


def message_for(err: Exception) -> str:
    """The short text shown beside a field: what is allowed and what was given."""
    if isinstance(err, InputError):
        return f"{err.field} must be {err.allowed} (got {err.value!r})"
    if isinstance(err, FieldbudgetError):
        return str(err)
    return f"internal error: {type(err).__name__}: {err}"


def parse_text(text: str, name: str) -> str:
    """Free text (a unit, a source): stripped, never rejected."""
    return text.strip()


_IDENT = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def parse_symbol(text: str, name: str) -> str:
    """A symbol usable in a model expression (a Python identifier)."""
    s = text.strip()
    if not _IDENT.match(s):
        raise InputError(name, text, "a symbol of letters, digits and '_' that starts with a letter")
    return s


def _float(text: str, name: str, allowed: str) -> float:
    s = text.strip().replace("\u2212", "-")  # a pasted minus sign
    try:
        x = float(s)
    except ValueError:
        raise InputError(name, text, allowed) from None
    if not math.isfinite(x):
        raise InputError(name, text, allowed)
    return x


def parse_number(text: str, name: str) -> float:
    """A finite number (``1e8``, ``-0.5``)."""
    return _float(text, name, "a finite number")


def parse_optional_number(text: str, name: str) -> float | None:
    """A finite number, or blank for 'not given'."""
    return None if not text.strip() else _float(text, name, "a finite number or blank")


def parse_nonnegative(text: str, name: str) -> float:
    """A finite number >= 0 (an uncertainty, a half-width)."""
    x = _float(text, name, "a finite number >= 0")
    if x < 0:
        raise InputError(name, text, "a finite number >= 0")
    return x


def parse_positive(text: str, name: str) -> float:
    """A finite number > 0 (a coverage factor)."""
    x = _float(text, name, "a finite number > 0")
    if x <= 0:
        raise InputError(name, text, "a finite number > 0")
    return x


def parse_dof(text: str, name: str) -> float:
    """Degrees of freedom: a number > 0, or blank / 'inf' for infinite."""
    s = text.strip().lower()
    if s in ("", "inf", "infinite", "\u221e"):
        return math.inf
    try:
        x = float(s)
    except ValueError:
        raise InputError(name, text, "a number > 0, or blank for infinite") from None
    if math.isnan(x) or x <= 0:
        raise InputError(name, text, "a number > 0, or blank for infinite")
    return x


def parse_correlation(text: str, name: str) -> float:
    """A correlation coefficient in [-1, 1]."""
    x = _float(text, name, "a number in [-1, 1]")
    if not -1.0 <= x <= 1.0:
        raise InputError(name, text, "a number in [-1, 1]")
    return x


_SPLIT = re.compile(r"[\s,;]+")


def parse_readings(text: str, name: str) -> tuple[float, ...]:
    """Readings typed or pasted: numbers separated by spaces, commas, semicolons or new lines."""
    parts = [p for p in _SPLIT.split(text.strip().replace("\u2212", "-")) if p]
    out = []
    for i, p in enumerate(parts, 1):
        try:
            x = float(p)
        except ValueError:
            raise InputError(name, p, f"numbers only (reading {i} is not a number)") from None
        if not math.isfinite(x):
            raise InputError(name, p, f"finite numbers (reading {i})")
        out.append(x)
    return tuple(out)


def parse_choice(choices: Sequence[str]) -> Parser:
    """A parser that accepts one of ``choices``."""
    allowed = "one of " + ", ".join(repr(c) for c in choices)

    def parse(text: str, name: str) -> str:
        s = text.strip()
        if s not in choices:
            raise InputError(name, text, allowed)
        return s

    return parse


class Field:
    """The state of one entry box.

    Parameters
    ----------
    name : str
        The name shown in messages (``"u"``, ``"estimate"``).
    text : str
        The initial text.
    parse : callable(text, name) -> value
        Raises :class:`~fieldbudget.errors.InputError` for text it does not accept.

    Attributes
    ----------
    text : str
        Exactly what was typed.
    value : object
        The last value that parsed (``None`` until one does).
    error : str or None
        Message for display beside the box; ``None`` when the text parses and
        the layers below accepted it.
    """

    __slots__ = ("_parse", "error", "name", "text", "value")

    def __init__(self, name: str, text: str = "", parse: Parser = parse_text) -> None:
        self.name = name
        self._parse = parse
        self.text = ""
        self.value: Any = None
        self.error: str | None = None
        self.set(text)

    def set(self, text: object) -> bool:
        """Store ``text``; parse it; return whether it parsed."""
        self.text = "" if text is None else str(text)
        try:
            self.value = self._parse(self.text, self.name)
        except InputError as err:
            self.error = message_for(err)
            return False
        self.error = None
        return True

    @property
    def ok(self) -> bool:
        return self.error is None

    def __repr__(self) -> str:
        tail = f", error={self.error!r}" if self.error else ""
        return f"<Field {self.name}={self.text!r}{tail}>"


class Observable:
    """Listeners called with the object after each change (the one notification mechanism of the drafts)."""

    _listeners: list[Callable[[Any], None]]

    def subscribe(self, listener: Callable[[Any], None]) -> Callable[[], None]:
        """Call ``listener(self)`` after every change; returns a function that unsubscribes."""
        if not hasattr(self, "_listeners"):
            self._listeners = []
        self._listeners.append(listener)
        return lambda: self._listeners.remove(listener) if listener in self._listeners else None

    def _notify(self) -> None:
        for fn in list(getattr(self, "_listeners", ())):
            fn(self)
