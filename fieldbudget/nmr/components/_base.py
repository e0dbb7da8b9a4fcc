"""What a component of the NMR measurement file declares, and the typed reader its build step uses.

A :class:`Component` names the section of the file it reads (``None`` for
top-level keys), declares each of its keys (:class:`Key`: kind, unit, label,
help text, limits) and has a ``build(ctx)`` step that returns a
:class:`Built`: its inputs (``InputQuantity`` with ``role`` and
``provenance``), its term in the model equation (:class:`Term`) and its
warnings (:class:`~fieldbudget.errors.Finding`, each naming its key).

The loader's allowed keys, the JSON Schema, the form's fields and the docs'
key tables are all derived from these declarations (see
``fieldbudget.nmr.components``).  Written by hand: no library knows the file.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from ...engine import InputQuantity
from ...errors import BudgetFileError, Finding

__all__ = ["KINDS", "PLACES", "Built", "Component", "Context", "Key", "Reader", "Term"]

#: Kinds of key: how the file holds it, how the form enters it, and its JSON Schema type.
KINDS = ("number", "numbers", "vector", "choice", "edition", "text", "boolean", "quantity", "file", "object")

#: Where a term goes in the model equation
#: B0 = (sum of "frequency") (1 + sum of "fraction") (1 + "drift") / (product of "denominator")
#:      - (sum of "subtract").
PLACES = ("frequency", "fraction", "drift", "denominator", "subtract")


@dataclass(frozen=True)
class Key:
    """One key of the file.

    ``kind`` is one of :data:`KINDS`; ``quantity`` is a number that may also be
    written as a text with a unit (``"63.871224 MHz"``), converted to ``unit``.
    ``lo``/``hi`` are limits (``lo_open``/``hi_open`` make them strict);
    ``choices`` the allowed values of a ``choice``; ``min_items``/``max_items``
    bound a list.  ``form`` False leaves the key out of the form (a free object).
    """

    name: str
    kind: str
    label: str
    help: str = ""
    unit: str = ""
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    choices: tuple = ()
    min_items: int | None = None
    max_items: int | None = None
    required: bool = False
    form: bool = True

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"Key {self.name!r}: kind must be one of {KINDS} (got {self.kind!r})")

    def limits_text(self) -> str:
        """The limits in words, as the docs and the error messages give them ("> -1", "in [5, 45]")."""
        lo, hi = self.lo, self.hi
        if lo is not None and hi is not None:
            return f"in {'(' if self.lo_open else '['}{lo:g}, {hi:g}{')' if self.hi_open else ']'}"
        if lo is not None:
            return f"{'>' if self.lo_open else '>='} {lo:g}"
        if hi is not None:
            return f"{'<' if self.hi_open else '<='} {hi:g}"
        return ""

    def within(self, v: float) -> bool:
        if self.lo is not None and (v <= self.lo if self.lo_open else v < self.lo):
            return False
        return not (self.hi is not None and (v >= self.hi if self.hi_open else v > self.hi))


@dataclass(frozen=True)
class Term:
    """A component's term: where it goes (:data:`PLACES`) and its expression."""

    place: str
    expr: str

    def __post_init__(self) -> None:
        if self.place not in PLACES:
            raise ValueError(f"Term place must be one of {PLACES} (got {self.place!r})")


@dataclass(frozen=True)
class Built:
    """What one component's build step gives: inputs, terms, findings, metadata entries and correlations."""

    inputs: tuple[InputQuantity, ...] = ()
    terms: tuple[Term, ...] = ()
    findings: tuple[Finding, ...] = ()
    metadata: Mapping = field(default_factory=dict)
    correlations: tuple = ()  # (symbol_a, symbol_b, r) between this component's inputs


@dataclass(frozen=True)
class Component:
    """One component of the NMR measurement file, declared once.

    ``name`` identifies it; ``section`` is the file section it reads (``None``:
    top-level keys); ``title`` and ``summary`` go into the docs and the form;
    ``build(ctx)`` returns a :class:`Built` or ``None`` (nothing to add).
    ``order`` places it among the others (build order and form order);
    ``group`` is the heading the form shows it under.
    """

    name: str
    section: str | None
    title: str
    summary: str
    keys: tuple[Key, ...]
    build: Callable[[Context], Built | None]
    order: int = 100
    group: str = "other"

    def key(self, name: str) -> Key:
        for k in self.keys:
            if k.name == name:
                return k
        raise KeyError(name)


class Reader:
    """Typed access to one JSON object, raising BudgetFileError with the JSON pointer.

    ``decl`` maps a key name to its :class:`Key`: a number is also checked
    against the declared limits.
    """

    def __init__(self, data: Mapping, path: str, pointer: str = "#", decl: Mapping[str, Key] | None = None) -> None:
        self.data = data
        self.path = path
        self.pointer = pointer
        self.decl = dict(decl or {})

    def at(self, key: str) -> str:
        return f"{self.pointer}/{key}"

    def dotted(self, key: str) -> str:
        """The key's path with dots (``sample.temperature_C``), as findings and the form name it."""
        head = ".".join(p for p in self.pointer.lstrip("#").split("/") if p)
        return f"{head}.{key}" if head else key

    def fail(self, key: str | None, reason: str) -> BudgetFileError:
        return BudgetFileError(self.path, self.at(key) if key else self.pointer, reason)

    def has(self, key: str) -> bool:
        return key in self.data and self.data[key] is not None

    def check_keys(self, allowed) -> None:
        unknown = sorted(set(self.data) - set(allowed))
        if unknown:
            raise self.fail(unknown[0], f"unknown key; allowed keys here: {', '.join(sorted(allowed))}")

    def _declared(self, key: str, v: float) -> float:
        k = self.decl.get(key)
        if k is not None and not k.within(v):
            raise self.fail(key, f"must be a number {k.limits_text()} (got {v!r})")
        return v

    def number(self, key: str, default: float | None = None, *, required: bool = False, positive: bool = False,
               nonnegative: bool = False, lo: float | None = None, hi: float | None = None) -> float | None:
        if not self.has(key):
            if required:
                raise self.fail(key, "missing: " + ("a number > 0" if positive else "a number"))
            return default
        v = self.data[key]
        if isinstance(v, str) and key in self.decl and self.decl[key].kind == "quantity":
            v = self._quantity(key, v)
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise self.fail(key, f"must be a finite number (got {v!r})")
        v = float(v)
        if positive and not v > 0:
            raise self.fail(key, f"must be a number > 0 (got {v!r})")
        if nonnegative and v < 0:
            raise self.fail(key, f"must be a number >= 0 (got {v!r})")
        if (lo is not None and v < lo) or (hi is not None and v > hi):
            raise self.fail(key, f"must lie in [{lo}, {hi}] (got {v!r})")
        return self._declared(key, v)

    def _quantity(self, key: str, text: str) -> float:
        from ... import units
        from ...errors import InputError

        unit = self.decl[key].unit
        try:
            value, given = units.parse_quantity(text, where=self.at(key))
            if given == "1":
                raise InputError("quantity", text, "")
            return units.convert(value, given, unit)
        except InputError:
            raise self.fail(key, f"must be a number in {unit}, or a text with a unit such as '63.871224 MHz' "
                                 f"(got {text!r})") from None

    def numbers(self, key: str, *, min_len: int = 1, max_len: int | None = None, nonnegative: bool = False,
                scalar_ok: bool = False) -> tuple[float, ...] | None:
        if not self.has(key):
            return None
        v = self.data[key]
        if scalar_ok and isinstance(v, (int, float)) and not isinstance(v, bool):
            v = [v]
        if not isinstance(v, (list, tuple)):
            raise self.fail(key, f"must be a list of numbers (got {v!r})")
        if len(v) < min_len or (max_len is not None and len(v) > max_len):
            span = f"{min_len} to {max_len}" if max_len is not None else f"at least {min_len}"
            raise self.fail(key, f"must hold {span} numbers (got {len(v)})")
        out = []
        for i, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
                raise BudgetFileError(self.path, f"{self.at(key)}/{i}", f"must be a finite number (got {x!r})")
            if nonnegative and x < 0:
                raise BudgetFileError(self.path, f"{self.at(key)}/{i}", f"must be a number >= 0 (got {x!r})")
            out.append(float(x))
        return tuple(out)

    def text(self, key: str, default: str = "") -> str:
        if not self.has(key):
            return default
        v = self.data[key]
        if not isinstance(v, str):
            raise self.fail(key, f"must be a text string (got {v!r})")
        return v

    def flag(self, key: str, default: bool) -> bool:
        if not self.has(key):
            return default
        v = self.data[key]
        if not isinstance(v, bool):
            raise self.fail(key, f"must be true or false (got {v!r})")
        return v

    def choice(self, key: str, choices: tuple[str, ...] | None = None, default: str | None = None) -> str | None:
        if choices is None:
            choices = self.decl[key].choices
        if not self.has(key):
            return default
        v = self.data[key]
        if v not in choices:
            raise self.fail(key, f"must be one of {', '.join(repr(c) for c in choices)} (got {v!r})")
        return v


class Context:
    """What the build steps share: the measurement, the readers of its sections, and facts set by earlier steps.

    ``section(name)`` gives the Reader of a section (an empty one when the file
    leaves the section out; ``present(name)`` tells them apart); ``top`` reads
    the top-level keys.  ``facts`` holds what one component tells later ones
    (``"t_sym"``: the sample temperature's symbol; ``"readings"``: whether the
    frequency came from repeated readings; ...).
    """

    def __init__(self, measurement, top: Reader, readers: Mapping[str, Reader], nucleus, codata: int) -> None:
        self.measurement = measurement
        self.top = top
        self._readers = dict(readers)
        self.nucleus = nucleus
        self.codata = codata
        self.facts: dict = {}
        self.decls: dict = {}
        self.inputs: list[InputQuantity] = []

    def present(self, section: str) -> bool:
        return section in self._readers and self._readers[section] is not None

    def section(self, name: str | None) -> Reader:
        if name is None:
            return self.top
        r = self._readers.get(name)
        if r is None:
            return Reader({}, self.top.path, f"#/{name}", self.decls.get(name, {}))
        return r

    def input(self, symbol: str) -> InputQuantity | None:
        return next((q for q in self.inputs if q.symbol == symbol), None)
