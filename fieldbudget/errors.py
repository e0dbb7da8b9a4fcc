"""Exceptions and warnings of fieldbudget.

Every user-facing error names the input (``field``), the value given and what
is allowed, so that a form can put the message beside the field it concerns
and the command line can print it on one line.  Each error is also the builtin
exception it resembles (``ValueError``, ``KeyError``, ...), so callers that
catch builtins keep working.
"""

from __future__ import annotations

from types import MappingProxyType

__all__ = [
    "FieldbudgetError",
    "InputError",
    "CorrelationError",
    "ExpressionError",
    "UnknownConstantError",
    "ModelEvaluationError",
    "BudgetFileError",
    "RecordError",
    "OutputError",
    "DigestMismatch",
    "SchemaVersionError",
    "MonteCarloCancelled",
    "ReportToolMissing",
    "Finding",
    "is_note",
    "FieldbudgetWarning",
    "PhysicsWarning",
    "CalibrationRangeWarning",
]


class FieldbudgetError(Exception):
    """Base class of every error fieldbudget raises for a user mistake."""


class InputError(FieldbudgetError, ValueError):
    """A value that is not allowed.

    Parameters
    ----------
    field : str
        Name of the input or field, e.g. ``"u_f"`` or ``"inputs.f.u"``.
    value : object
        The value given.
    allowed : str
        What is allowed, in words (``"a finite number >= 0"``).
    where : str, optional
        Context, e.g. ``"input 'f'"`` or a file name.
    """

    def __init__(self, field: str, value: object, allowed: str, where: str = "") -> None:
        self.field = field
        self.value = value
        self.allowed = allowed
        self.where = where
        super().__init__(field, value, allowed, where)

    def __str__(self) -> str:
        head = f"{self.where}: " if self.where else ""
        return f"{head}{self.field} must be {self.allowed} (got {self.value!r})"

    def __reduce__(self):
        return (type(self), (self.field, self.value, self.allowed, self.where))


class CorrelationError(InputError):
    """A correlation coefficient or matrix that is not allowed; ``pair`` names the inputs."""

    def __init__(self, field: str, value: object, allowed: str, where: str = "",
                 pair: tuple[str, str] | None = None) -> None:
        super().__init__(field, value, allowed, where)
        self.pair = pair

    def __reduce__(self):
        return (type(self), (self.field, self.value, self.allowed, self.where, self.pair))


class ExpressionError(InputError):
    """A model expression that cannot be parsed or uses something not allowed."""

    def __init__(self, field: str, value: object, allowed: str, where: str = "",
                 position: int | None = None) -> None:
        super().__init__(field, value, allowed, where)
        self.position = position

    def __reduce__(self):
        return (type(self), (self.field, self.value, self.allowed, self.where, self.position))


class UnknownConstantError(FieldbudgetError, KeyError):
    """A reference value that is not in the data for the edition asked for."""

    def __init__(self, name: str, edition: object, suggestions: tuple[str, ...] = ()) -> None:
        self.name = name
        self.edition = edition
        self.suggestions = tuple(suggestions)
        super().__init__(name, edition, self.suggestions)

    def __str__(self) -> str:
        tail = f"; did you mean {', '.join(repr(s) for s in self.suggestions)}?" if self.suggestions else ""
        return f"no reference value named {self.name!r} in edition {self.edition}{tail}"

    def __reduce__(self):
        return (type(self), (self.name, self.edition, self.suggestions))


class ModelEvaluationError(FieldbudgetError, ArithmeticError):
    """The model cannot be evaluated at the given values (division by zero, log of a negative, ...)."""


class BudgetFileError(FieldbudgetError, ValueError):
    """A budget, measurement or record file that cannot be read.

    ``path`` is the file, ``pointer`` the JSON pointer of the offending element
    (``#/inputs/T/u``) and ``reason`` what is wrong and what is allowed.
    """

    def __init__(self, path: str, pointer: str, reason: str) -> None:
        self.path = str(path)
        self.pointer = pointer
        self.reason = reason
        super().__init__(self.path, pointer, reason)

    def __str__(self) -> str:
        at = f", at {self.pointer}" if self.pointer else ""
        return f"{self.path}{at}: {self.reason}"

    def __reduce__(self):
        return (type(self), (self.path, self.pointer, self.reason))


class RecordError(FieldbudgetError):
    """A record that cannot be loaded or verified."""


class OutputError(FieldbudgetError):
    """An output path that cannot or must not be written; ``path`` is the path as the user gave it."""

    def __init__(self, path: str, reason: str) -> None:
        self.path = str(path)
        self.reason = reason
        super().__init__(self.path, reason)

    def __str__(self) -> str:
        return f"{self.path or repr(self.path)}: {self.reason}"

    def __reduce__(self):
        return (type(self), (self.path, self.reason))


class DigestMismatch(RecordError):
    """The stored SHA-256 digest does not match the record's content."""


class SchemaVersionError(RecordError):
    """A record written under a schema major version this release does not know."""


class MonteCarloCancelled(FieldbudgetError):
    """A Monte Carlo run was cancelled between chunks; ``trials_done`` says how far it got."""

    def __init__(self, trials_done: int = 0) -> None:
        self.trials_done = trials_done
        super().__init__(trials_done)

    def __str__(self) -> str:
        return f"Monte Carlo run cancelled after {self.trials_done} trials"


class ReportToolMissing(FieldbudgetError):
    """A program a report format needs (e.g. chromium for PDF) is not installed."""


class Finding(str):
    """A structured warning: a plain-word message that also carries what it concerns.

    It *is* the message (a ``str``), so code that prints or searches warnings
    keeps working; forms and reports use the attributes instead of matching
    words:

    ``code``
        a stable identifier, e.g. ``"nmr.gradient_invalid"``;
    ``key``
        the input-file key the finding concerns (``"gradient.gradient_T_per_m"``),
        or ``None`` when it concerns the whole result;
    ``values``
        the numbers involved, as a dict of plain JSON values;
    ``severity``
        ``"note"`` (which of two documented choices was made; nothing to act
        on), ``"warning"`` (the result stands, read the caution) or
        ``"invalid"`` (the reading may be invalid).

    ``Finding.from_dict(f.to_dict()) == f`` and the attributes survive.
    """

    __slots__ = ("code", "key", "values", "severity")
    SEVERITIES = ("note", "warning", "invalid")

    def __new__(cls, message: str, code: str = "", key: str | None = None, values: dict | None = None,
                severity: str = "warning") -> Finding:
        if not isinstance(message, str) or not message:
            raise InputError("message", message, "a non-empty text", "finding")
        if severity not in cls.SEVERITIES:
            raise InputError("severity", severity, f"one of {list(cls.SEVERITIES)}", "finding")
        self = super().__new__(cls, message)
        self.code = str(code)
        self.key = key
        self.values = MappingProxyType(dict(values or {}))
        self.severity = severity
        return self

    @property
    def message(self) -> str:
        return str.__str__(self)

    def __setattr__(self, name, value):
        if hasattr(self, "severity"):  # set once in __new__, then frozen
            raise AttributeError(f"Finding is immutable (cannot set {name!r})")
        object.__setattr__(self, name, value)

    def __reduce__(self):
        return (type(self), (self.message, self.code, self.key, dict(self.values), self.severity))

    def __repr__(self) -> str:
        where = f" at {self.key}" if self.key else ""
        return f"<Finding {self.code or 'warning'}{where}: {self.message}>"

    def to_dict(self) -> dict:
        return {"message": self.message, "code": self.code, "key": self.key, "values": dict(self.values),
                "severity": self.severity}

    @classmethod
    def from_dict(cls, d: dict) -> Finding:
        return cls(d["message"], d.get("code", ""), d.get("key"), d.get("values"), d.get("severity", "warning"))

    @classmethod
    def coerce(cls, w: object) -> Finding:
        """A Finding from a Finding, its dict, or a plain message (code ``""``, key ``None``)."""
        if isinstance(w, Finding):
            return w
        if isinstance(w, dict):
            return cls.from_dict(w)
        return cls(str(w))


def is_note(warning: object) -> bool:
    """True for a :class:`Finding` of severity ``"note"``; a plain-text warning is a warning."""
    return getattr(warning, "severity", "warning") == "note"


class FieldbudgetWarning(UserWarning):
    """Base class of fieldbudget's warnings."""


class PhysicsWarning(FieldbudgetWarning):
    """A physics check found a condition that may invalidate a reading."""


class CalibrationRangeWarning(FieldbudgetWarning):
    """A prediction asked for outside the range of the calibration points."""
