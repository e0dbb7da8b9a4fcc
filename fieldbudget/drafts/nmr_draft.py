"""The NMR measurement being entered: the measurement description as text fields.

:class:`NMRDraft` keeps one :class:`Field` per key path of the NMR measurement
description (``frequency.readings_Hz``, ``sample.temperature_C``, ...; the
keys of :mod:`fieldbudget.nmr.measurement`).  On each change it writes the
parsed values back into a plain dict, hands it to
:class:`~fieldbudget.nmr.measurement.NMRMeasurement`, which checks it and
builds the budget, and evaluates it.  Errors come back with a JSON pointer
and are shown beside the field they name; the physics warnings of the result
are placed beside the fields they concern.  It has the same reading side as
:class:`~fieldbudget.drafts.BudgetDraft` (``budget``, ``result``, ``current``,
``errors``, ``subscribe``), so the budget view, the Monte Carlo panel and the
export bar work over either.
"""

from __future__ import annotations

import copy
import json
import logging
import math
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import BudgetFileError, FieldbudgetError, InputError
from .field import Field, Observable, message_for, parse_choice, parse_readings, parse_text
from .readings import readings_from_csv

_log = logging.getLogger("fieldbudget.drafts")

__all__ = ["NMR_FIELDS", "SECTIONS", "FieldSpec", "NMRDraft"]


@dataclass(frozen=True)
class FieldSpec:
    """How one key of the measurement description is entered.

    ``kind`` is ``number``, ``quantity`` (a number, or a text with a unit such
    as ``63.871224 MHz``), ``numbers``, ``vector`` (one number or up to three),
    ``choice``, ``boolean``, ``edition`` (a CODATA year) or ``text``; a blank
    box leaves the key out of the description.
    """

    path: str
    label: str
    kind: str = "number"
    section: str = "other"
    unit: str = ""
    help: str = ""
    choices: tuple = ()


def _derived_fields() -> tuple[FieldSpec, ...]:
    """One field per key of the measurement file, from the NMR components' declarations."""
    from ..nmr.components import form_fields

    out = []
    groups = _groups()
    for path, key, _title in form_fields():
        group = groups[path]
        if key.kind == "file":
            subs = ("path", "column", "time_column") if path.startswith("drift.") else ("path", "column")
            for sub in subs:
                out.append(FieldSpec(f"{path}.{sub}", f"{key.label}: {sub.replace('_', ' ')}", "text", group,
                                     help=key.help.replace("`", "")))
            continue
        kind = {"quantity": "quantity", "boolean": "boolean"}.get(key.kind, key.kind)
        choices = ("", *key.choices) if key.kind == "choice" and key.name != "nucleus" else ()
        out.append(FieldSpec(path, key.label, kind, group, key.unit, key.help.replace("`", ""), choices))
    return tuple(out)


def _groups() -> dict[str, str]:
    from ..nmr.components import components

    out = {}
    for c in components():
        for k in c.keys:
            out[k.name if c.section is None else f"{c.section}.{k.name}"] = c.group
    return out


def _sections() -> tuple[str, ...]:
    from ..nmr.components import components

    out: list[str] = []
    for c in components():
        if c.group not in out:
            out.append(c.group)
    return (*out, "other")


SECTIONS = _sections()

#: Every key of the measurement file, derived from ``fieldbudget.nmr.components`` (the form offers them all).
NMR_FIELDS: tuple[FieldSpec, ...] = _derived_fields()

Listener = Callable[["NMRDraft"], None]


def _parse_number_or_blank(text: str, name: str) -> float | None:
    s = text.strip().replace("\u2212", "-")
    if not s:
        return None
    try:
        x = float(s)
    except ValueError:
        raise InputError(name, text, "a finite number, or blank to leave it out") from None
    if not math.isfinite(x):
        raise InputError(name, text, "a finite number, or blank to leave it out")
    return x


def _parse_numbers_or_blank(text: str, name: str) -> tuple[float, ...] | None:
    return parse_readings(text, name) or None


def _parse_vector(text: str, name: str) -> float | tuple[float, ...] | None:
    v = parse_readings(text, name)
    if len(v) > 3:
        raise InputError(name, text, "one number, or three (x y z)")
    return None if not v else v[0] if len(v) == 1 else v


def _parse_edition(text: str, name: str) -> int | None:
    s = text.strip()
    if not s:
        return None
    if not s.isdigit():
        raise InputError(name, text, "a CODATA edition year such as 2022")
    return int(s)


def _text_of(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        s = repr(value)
        return s.removesuffix(".0")
    if isinstance(value, (list, tuple)):
        return "\n".join(_text_of(v) for v in value) if len(value) > 3 else " ".join(_text_of(v) for v in value)
    return str(value)


def _spec_for(path: str, value: Any) -> FieldSpec:
    """A field spec for a key the built-in list does not name, from its value's type."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        kind = "number"
    elif isinstance(value, (list, tuple)) and all(isinstance(v, (int, float)) for v in value):
        kind = "numbers"
    else:
        kind = "text"
    head, _, _ = path.partition(".")
    section = next((g for p, g in _groups().items() if p.split(".")[0] == head and "." in p), "other")
    words = path.split(".")[1:] if section != "other" and "." in path else path.split(".")
    return FieldSpec(path, " ".join(words).replace("_", " "), kind, section)


def _parse_quantity_or_blank(text: str, name: str) -> float | str | None:
    """A number, or a text with a unit left for the NMR layer to convert ("63.871224 MHz")."""
    s = text.strip().replace("\u2212", "-")
    if not s:
        return None
    try:
        return _parse_number_or_blank(s, name)
    except InputError:
        if any(c.isalpha() for c in s) and any(c.isdigit() for c in s):
            return s
        raise


def _parse_boolean(text: str, name: str) -> bool | None:
    s = text.strip().lower()
    if not s:
        return None
    if s in ("true", "yes", "1"):
        return True
    if s in ("false", "no", "0"):
        return False
    raise InputError(name, text, "true or false, or blank to leave it out")


def _parser(spec: FieldSpec, choices: Mapping[str, tuple]) -> Callable[[str, str], Any]:
    if spec.kind == "number":
        return _parse_number_or_blank
    if spec.kind == "quantity":
        return _parse_quantity_or_blank
    if spec.kind == "boolean":
        return _parse_boolean
    if spec.kind == "numbers":
        return _parse_numbers_or_blank
    if spec.kind == "vector":
        return _parse_vector
    if spec.kind == "edition":
        return _parse_edition
    if spec.kind == "choice":
        opts = tuple(choices.get(spec.path, spec.choices))
        if not opts:
            return parse_text
        chosen = parse_choice(opts if "" in opts else ("", *opts))  # a blank box leaves the key out
        return lambda text, name: chosen(text, name) or None
    return lambda text, name: text.strip() or None


def _leaves(d: Mapping, prefix: str = "") -> Iterable[tuple[str, Any]]:
    for k, v in d.items():
        p = f"{prefix}{k}"
        if isinstance(v, Mapping):
            yield from _leaves(v, p + ".")
        else:
            yield p, v


def default_choices() -> dict[str, tuple]:
    """Choices offered for the nucleus and the CODATA edition, from the layers that know them."""
    out: dict[str, tuple] = {}
    try:
        from ..nmr.nuclei import nucleus_names

        out["nucleus"] = tuple(nucleus_names())
    except ImportError:  # pragma: no cover - the NMR layer ships with the package
        pass
    try:
        from ..constants import editions

        out["codata"] = tuple(editions())
    except ImportError:  # pragma: no cover
        pass
    return out


class NMRDraft(Observable):
    """The editable state of one NMR measurement description.

    Parameters
    ----------
    measurement : dict
        An NMR measurement description (the keys of the measurement file).
        Keys the form does not show are kept and passed on unchanged.
    fields : sequence of FieldSpec, optional
        The fields offered (default: every key the NMR components declare, as :data:`NMR_FIELDS`).
    base_dir : str or Path
        Where a ``readings_csv`` path in the description is looked up.
    """

    def __init__(self, measurement: Mapping | None = None, fields: Iterable[FieldSpec] | None = None,
                 base_dir: str | Path = ".", choices: Mapping[str, tuple] | None = None,
                 lab: Any = None, accept_expired: Mapping[str, str] | None = None) -> None:
        # a laboratory folder: sections naming a register instrument are resolved before the NMR loader
        self.lab = None
        if lab is not None:
            from ..lab import LabFolder, lab_folder

            self.lab = lab if isinstance(lab, LabFolder) else lab_folder(lab)
        self.accept_expired = dict(accept_expired or {})
        self.register_notes: tuple = ()
        self.base = copy.deepcopy(dict(measurement or {}))
        self.base_dir = str(base_dir)
        self.choices = dict(default_choices() if choices is None else choices)
        leaves = dict(_leaves(self.base))
        if fields is None:  # derived now, so a component registered later is offered too
            fields = _derived_fields()
        specs = {s.path: s for s in fields}
        for path, value in leaves.items():
            if path not in specs and path != "format":
                specs[path] = _spec_for(path, value)
        for path in ("nucleus", "codata"):  # keep a value given in the file selectable
            if path in self.choices and path in leaves and leaves[path] not in self.choices[path]:
                self.choices[path] = (leaves[path], *self.choices[path])
        self.specs: dict[str, FieldSpec] = specs
        self.fields: dict[str, Field] = {
            p: Field(p, _text_of(leaves.get(p)), _parser(s, self.choices)) for p, s in specs.items()}
        self.measurement: Any = None
        self.nmr_result: Any = None
        self.last_good_budget: Any = None
        self.last_good_result: Any = None
        self.current = False
        self.general_error: str | None = None
        self.warnings_by_field: dict[str, list[str]] = {}
        self.other_warnings: list[str] = []
        self._listeners: list[Listener] = []
        self.rebuild()

    @classmethod
    def from_file(cls, path: str | Path) -> NMRDraft:
        p = Path(path)
        from .._io import read_json_file

        return cls(read_json_file(p, what="measurement file"), base_dir=p.parent)

    # -- listeners ---------------------------------------------------------------------
    def _changed(self) -> None:
        self.rebuild()
        self._notify()

    # -- edits ---------------------------------------------------------------------------
    def set(self, path: str, text: object) -> bool:
        """Set the field at ``path`` from text; returns whether the budget was rebuilt from it."""
        if path not in self.fields:
            raise InputError("field", path, "one of " + ", ".join(self.fields))
        self.fields[path].set(text)
        self._changed()
        return self.current

    def set_readings_text(self, text: str) -> bool:
        """Readings typed or pasted into the readings box."""
        return self.set("frequency.readings_Hz", text)

    def load_counter_csv(self, content: str | bytes, column: str | int | None = None,
                         name: str = "counter file") -> bool:
        """Readings from a counter's CSV export.

        They replace the readings box's text, and become the frequency's only
        source: a single reading (``value_Hz``, ``u_Hz``) or a ``readings_csv``
        reference in the description is cleared.
        """
        try:
            readings = readings_from_csv(content, column, where=name)
        except InputError as err:
            self.fields["frequency.readings_Hz"].error = message_for(err)
            self._notify()
            return False
        for path, f in self.fields.items():
            if path in ("frequency.value_Hz", "frequency.u_Hz", "frequency.dof") or \
                    path.startswith("frequency.readings_csv."):
                f.set("")
        self._drop_csv_reference()
        return self.set("frequency.readings_Hz", "\n".join(_text_of(r) for r in readings))

    def _drop_csv_reference(self) -> None:
        freq = self.base.get("frequency")
        if isinstance(freq, dict):
            freq.pop("readings_csv", None)

    # -- reading side ------------------------------------------------------------------------
    @property
    def budget(self) -> Any:
        return self.last_good_budget

    @property
    def result(self) -> Any:
        return self.last_good_result

    @property
    def errors(self) -> dict[str, str]:
        out = {p: f.error for p, f in self.fields.items() if f.error}
        if self.general_error:
            out[""] = self.general_error
        return out

    def sections(self) -> dict[str, list[FieldSpec]]:
        """The field specs grouped by section, in form order."""
        out: dict[str, list[FieldSpec]] = {s: [] for s in SECTIONS}
        for s in self.specs.values():
            out.setdefault(s.section, []).append(s)
        return {k: v for k, v in out.items() if v}

    def description(self) -> dict:
        """The measurement description from the fields as now parsed (blank fields left out)."""
        d = copy.deepcopy(self.base)
        for path, f in self.fields.items():
            keys = path.split(".")
            parent = d
            for k in keys[:-1]:
                parent = parent.setdefault(k, {})
                if not isinstance(parent, dict):
                    break
            else:
                v = f.value
                if v is None or (isinstance(v, str) and not v):
                    parent.pop(keys[-1], None)
                else:
                    parent[keys[-1]] = list(v) if isinstance(v, tuple) else v
        def prune(obj: dict) -> dict:  # sections whose boxes are all blank
            for k in list(obj):
                if isinstance(obj[k], dict):
                    prune(obj[k])
                    if not obj[k]:
                        del obj[k]
            return obj

        return prune(d)

    def save_measurement(self, path: str | Path) -> Path:
        """Write the last good description as a measurement file (atomically)."""
        from ..files.atomic import atomic_write_text

        if self.measurement is None:
            raise InputError("measurement", None, "a description that could be evaluated before saving it")
        return atomic_write_text(path, json.dumps(self.measurement.to_dict(), indent=2) + "\n")

    # -- rebuilding ------------------------------------------------------------------------------
    def _place(self, err: Exception) -> None:
        msg = message_for(err)
        if isinstance(err, BudgetFileError):
            path = ".".join(p for p in err.pointer.lstrip("#").split("/") if p)
            msg = err.reason
            # the field itself, else the first field of the section it names
            target = path if path in self.fields else next(
                (p for p in self.fields if path and p.startswith(path + ".")), None)
            if target is None and path.count("."):
                parent = path.rsplit(".", 1)[0]
                target = parent if parent in self.fields else None
            if target is not None:
                self.fields[target].error = f"{target.rsplit('.', 1)[-1]} {msg}"
                return
        elif isinstance(err, InputError):
            for p in self.fields:
                if p == err.field or p.endswith("." + str(err.field)):
                    self.fields[p].error = msg
                    return
        self.general_error = msg

    def _place_warnings(self, warnings: Iterable[str], findings: Iterable[Any] = ()) -> None:
        """Each finding beside the field its key names; other warnings (and keys the form lacks) below the form."""
        self.warnings_by_field, self.other_warnings = {}, []
        named = {getattr(f, "message", None): getattr(f, "key", None) for f in findings}
        for text in warnings:
            where = named.get(text) or getattr(text, "key", None)
            if where in self.fields:
                self.warnings_by_field.setdefault(where, []).append(text)
            else:
                self.other_warnings.append(text)

    def rebuild(self) -> bool:
        for f in self.fields.values():  # clear what the NMR layer said last time; parse errors come back
            if f.error is not None:
                f.set(f.text)
        self.general_error = None
        self.current = False
        if any(f.error for f in self.fields.values()):
            return False
        try:
            from ..nmr.measurement import NMRMeasurement

            description, notes = self.description(), ()
            if self.lab is not None:
                from ..lab.register import load_register, resolve_instruments

                description, notes = resolve_instruments(description, load_register(self.lab),
                                                         accept_expired=self.accept_expired)
            m = NMRMeasurement.from_dict(description, where="measurement", base_dir=self.base_dir)
            res = m.evaluate()
        except FieldbudgetError as err:
            self._place(err)
            return False
        except Exception as err:  # noqa: BLE001 - a defect below: logged, shown, the last good state kept
            _log.exception("internal error while rebuilding %r", self)
            self.general_error = message_for(err)
            return False
        self.measurement, self.nmr_result, self.register_notes = m, res, notes
        self.last_good_budget, self.last_good_result = res.budget, res.result
        self._place_warnings(res.nmr_warnings, getattr(res, "findings", ()) or ())
        self.current = True
        return True

    def __repr__(self) -> str:
        state = "current" if self.current else f"{len(self.errors)} message(s)"
        nuc = self.fields.get("nucleus")
        return f"<NMRDraft {nuc.text if nuc else '?'}, {len(self.fields)} fields, {state}>"
