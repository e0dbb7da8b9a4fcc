"""The budget being edited: rows of inputs as text, rebuilt into a Budget on each valid change.

:class:`BudgetDraft` is the plain-Python state behind the input editor and the
live budget view.  Every edit goes through :meth:`BudgetDraft.set` (or one of
its siblings); the draft stores the text, parses it, and, when every field
parses, builds an ordinary engine :class:`~fieldbudget.engine.Budget` and
evaluates it.  A rejected edit (a negative uncertainty, text in a number box,
an impossible correlation) puts a message on the field it concerns and leaves
``last_good_budget`` / ``last_good_result`` as they were.  No metrology is
done here: the engine's constructors decide what is allowed, and their
errors (which name the field) are routed back to the box they came from.
"""

from __future__ import annotations

import itertools
import logging
import math
import re
from collections.abc import Callable, Iterable
from typing import Any

from ..errors import CorrelationError, ExpressionError, FieldbudgetError, InputError
from .field import (
    Field,
    Observable,
    message_for,
    parse_choice,
    parse_correlation,
    parse_dof,
    parse_nonnegative,
    parse_number,
    parse_positive,
    parse_readings,
    parse_symbol,
    parse_text,
)

_log = logging.getLogger("fieldbudget.drafts")

__all__ = ["DISTRIBUTIONS", "MEANINGS", "ROW_KEYS", "BudgetDraft", "InputRow"]

DISTRIBUTIONS = ("normal", "rectangular", "triangular", "arcsine")
#: What the stated uncertainty means.
MEANINGS = ("standard", "half-width", "expanded", "readings")
ROW_KEYS = ("symbol", "estimate", "unit", "distribution", "uncertainty", "meaning", "k",
            "readings", "dof", "source")

Listener = Callable[["BudgetDraft"], None]
_ids = itertools.count(1)


def _row_fields(symbol: str = "", estimate: str = "0", unit: str = "", distribution: str = "normal",
                uncertainty: str = "0", meaning: str = "standard", k: str = "2", readings: str = "",
                dof: str = "", source: str = "") -> dict[str, Field]:
    return {
        "symbol": Field("symbol", symbol, parse_symbol),
        "estimate": Field("estimate", estimate, parse_number),
        "unit": Field("unit", unit, parse_text),
        "distribution": Field("distribution", distribution, parse_choice(DISTRIBUTIONS)),
        "uncertainty": Field("uncertainty", uncertainty, parse_nonnegative),
        "meaning": Field("meaning", meaning, parse_choice(MEANINGS)),
        "k": Field("k", k, parse_positive),
        "readings": Field("readings", readings, parse_readings),
        "dof": Field("dof", dof, parse_dof),
        "source": Field("source", source, parse_text),
    }


def _num(x: float) -> str:
    """Shortest text that reads back as the same float."""
    s = repr(float(x))
    return s.removesuffix(".0")


class InputRow:
    """One input quantity as the user typed it; ``fields`` maps each of :data:`ROW_KEYS` to a :class:`Field`."""

    __slots__ = ("fields", "id")

    def __init__(self, **texts: str) -> None:
        self.id = next(_ids)
        self.fields = _row_fields(**texts)

    def __getitem__(self, key: str) -> Field:
        return self.fields[key]

    @property
    def symbol(self) -> str:
        return self.fields["symbol"].text.strip()

    def relevant(self) -> tuple[str, ...]:
        """The keys that matter for the current meaning (the others are kept but ignored)."""
        meaning = self.fields["meaning"].value
        if meaning == "readings":
            return ("symbol", "unit", "meaning", "readings", "source")
        keys = ["symbol", "estimate", "unit", "distribution", "uncertainty", "meaning", "dof", "source"]
        if meaning == "expanded":
            keys.insert(6, "k")
        return tuple(keys)

    def errors(self) -> dict[str, str]:
        return {k: f.error for k, f in self.fields.items() if f.error and k in self.relevant()}

    def texts(self) -> dict[str, str]:
        return {k: f.text for k, f in self.fields.items()}

    def __repr__(self) -> str:
        return f"<InputRow {self.id} {self.symbol or '?'}>"


def _engine():
    from .. import (
        engine,  # imported late so that a missing engine shows as a message, not an import error
    )

    return engine


def _field_key(name: str) -> str | None:
    """Map an engine error's ``field`` to a row key."""
    n = name.lower().rsplit(".", 1)[-1].strip()
    table = {
        "symbol": "symbol", "name": "symbol", "estimate": "estimate", "value": "estimate", "x": "estimate",
        "unit": "unit", "distribution": "distribution", "kind": "distribution",
        "u": "uncertainty", "standard uncertainty": "uncertainty", "half_width": "uncertainty",
        "half-width": "uncertainty", "expanded": "uncertainty", "expanded uncertainty": "uncertainty",
        "uncertainty": "uncertainty", "k": "k", "readings": "readings", "dof": "dof", "source": "source",
        "meaning": "meaning", "limit_uncertainty": "uncertainty",
    }
    return table.get(n)


_OPTION_KEYS = ("coverage_probability", "coverage_policy", "coverage_factor", "dof_rounding", "title",
                "metadata", "simultaneous")
_QUOTED = re.compile(r"'([^']+)'")


class BudgetDraft(Observable):
    """The editable state of one budget.

    Parameters
    ----------
    model : str
        The model expression, e.g. ``"f / g"``.
    measurand, measurand_unit : str
        Name and unit of the output quantity.
    rows : iterable of dict, optional
        Initial rows as texts keyed by :data:`ROW_KEYS`.
    correlations : iterable of (str, str, str), optional
        Pairs of symbols and the coefficient as text.

    Attributes
    ----------
    last_good_budget, last_good_result
        The budget and its :class:`~fieldbudget.engine.BudgetResult` from the
        last edit that was accepted; ``None`` until one is.
    current : bool
        Whether ``last_good_result`` reflects every field as now typed.
    general_error : str or None
        A message that concerns no single field (the model cannot be evaluated, say).
    """

    def __init__(self, model: str = "", measurand: str = "Y", measurand_unit: str = "",
                 rows: Iterable[dict] = (), correlations: Iterable[tuple[str, str, str]] = (),
                 options: dict | None = None) -> None:
        self.model = Field("model", model, parse_text)
        self.measurand = Field("measurand", measurand, parse_symbol)
        self.measurand_unit = Field("measurand unit", measurand_unit, parse_text)
        self.rows: list[InputRow] = [InputRow(**r) for r in rows]
        self.correlations: list[tuple[str, str, Field]] = [
            (a, b, Field(f"r({a}, {b})", str(r), parse_correlation)) for a, b, r in correlations]
        #: Budget keyword arguments the editor does not show (coverage policy, title, metadata, ...).
        self.options: dict = dict(options or {})
        self.last_good_budget: Any = None
        self.last_good_result: Any = None
        self.current = False
        self.general_error: str | None = None
        self._listeners: list[Listener] = []
        self._batch = 0
        self.rebuild()

    # -- construction from an engine Budget --------------------------------------
    @classmethod
    def from_budget(cls, budget: Any) -> BudgetDraft:
        """A draft whose fields show ``budget`` (any engine Budget)."""
        rows = [cls._row_texts(q) for q in budget.inputs]
        exprs = getattr(budget.model, "expressions", None)
        model = exprs[0].text if exprs else ""
        ms = budget.measurand
        corr = [(a, b, _num(r)) for a, b, r in (getattr(budget, "correlations", ()) or ())]
        options = {k: getattr(budget, k) for k in _OPTION_KEYS if hasattr(budget, k)}
        return cls(model=model, measurand=getattr(ms, "symbol", "y"), measurand_unit=getattr(ms, "unit", ""),
                   rows=rows, correlations=corr, options=options)

    @staticmethod
    def _row_texts(q: Any) -> dict[str, str]:
        d = q.distribution
        t = {"symbol": q.symbol, "estimate": _num(q.estimate), "unit": getattr(q, "unit", "") or "",
             "source": getattr(q, "source", "") or ""}
        kind = getattr(d, "kind", "normal")
        dof = getattr(d, "dof", math.inf)
        if kind == "type_a":
            t.update(meaning="readings", readings=" ".join(_num(v) for v in d.readings))
            return t
        t["dof"] = "" if math.isinf(dof) else _num(dof)
        if kind == "normal":
            if getattr(d, "expanded", None) is not None:
                t.update(distribution="normal", meaning="expanded", uncertainty=_num(d.expanded), k=_num(d.k))
            else:
                t.update(distribution="normal", meaning="standard", uncertainty=_num(d.u))
        elif kind in DISTRIBUTIONS:
            t.update(distribution=kind, meaning="half-width", uncertainty=_num(d.half_width))
        else:  # a distribution the editor has no row form for: show its standard uncertainty
            t.update(distribution="normal", meaning="standard", uncertainty=_num(d.standard_uncertainty),
                     source=(t["source"] + f" [was {d.describe()}]").strip())
        return t

    # -- listeners -----------------------------------------------------------------
    def _changed(self) -> None:
        if self._batch:
            return
        self.rebuild()
        self._notify()

    # -- edits -----------------------------------------------------------------------
    def _row(self, row: int | InputRow) -> InputRow:
        if isinstance(row, InputRow):
            if row not in self.rows:
                raise InputError("row", row, "a row of this budget")
            return row
        try:
            return self.rows[row]
        except (IndexError, TypeError):
            raise InputError("row", row, f"a row number from 0 to {len(self.rows) - 1}") from None

    def set(self, row: int | InputRow, key: str, text: object) -> bool:
        """Set one field of one row from text; returns whether the budget was rebuilt from it."""
        if key not in ROW_KEYS:
            raise InputError("key", key, "one of " + ", ".join(ROW_KEYS))
        self._row(row).fields[key].set(text)
        self._changed()
        return self.current

    def set_model(self, text: str) -> bool:
        self.model.set(text)
        self._changed()
        return self.current

    def set_measurand(self, name: str | None = None, unit: str | None = None) -> bool:
        if name is not None:
            self.measurand.set(name)
        if unit is not None:
            self.measurand_unit.set(unit)
        self._changed()
        return self.current

    def add_row(self, position: int | None = None, **texts: str) -> InputRow:
        """Insert a new input row (at the end by default) and return it."""
        r = InputRow(**texts)
        self.rows.insert(len(self.rows) if position is None else position, r)
        self._changed()
        return r

    def remove_row(self, row: int | InputRow) -> None:
        r = self._row(row)
        self.rows.remove(r)
        self.correlations = [c for c in self.correlations if r.symbol not in (c[0], c[1])]
        self._changed()

    def move_row(self, row: int | InputRow, offset: int) -> None:
        """Move a row up (offset < 0) or down; moves past either end stop at the end."""
        r = self._row(row)
        i = self.rows.index(r)
        j = max(0, min(len(self.rows) - 1, i + offset))
        self.rows.insert(j, self.rows.pop(i))
        self._changed()

    def set_correlation(self, a: str, b: str, text: object) -> bool:
        """Set r(a, b) from text; blank text removes the pair."""
        key = frozenset((a, b))
        for i, (x, y, f) in enumerate(self.correlations):
            if frozenset((x, y)) == key:
                if str(text).strip() == "":
                    del self.correlations[i]
                else:
                    f.set(text)
                break
        else:
            if str(text).strip():
                self.correlations.append((a, b, Field(f"r({a}, {b})", str(text), parse_correlation)))
        self._changed()
        return self.current

    def correlation_field(self, a: str, b: str) -> Field | None:
        key = frozenset((a, b))
        return next((f for x, y, f in self.correlations if frozenset((x, y)) == key), None)

    def batch(self):
        """Context manager: several edits, one rebuild and one notification."""
        draft = self

        class _Batch:
            def __enter__(self):
                draft._batch += 1
                return draft

            def __exit__(self, *exc):
                draft._batch -= 1
                draft._changed()
                return False

        return _Batch()

    # -- state ------------------------------------------------------------------------
    @property
    def budget(self) -> Any:
        return self.last_good_budget

    @property
    def result(self) -> Any:
        return self.last_good_result

    def fields(self) -> Iterable[tuple[str, Field]]:
        """Every field with a path: ``model``, ``rows[2].uncertainty``, ``r(a, b)``."""
        yield "model", self.model
        yield "measurand", self.measurand
        yield "measurand unit", self.measurand_unit
        for i, r in enumerate(self.rows):
            for k in r.relevant():
                yield f"rows[{i}].{k}", r.fields[k]
        for a, b, f in self.correlations:
            yield f"r({a}, {b})", f

    @property
    def errors(self) -> dict[str, str]:
        """Messages by field path (see :meth:`fields`), plus ``""`` for a general message."""
        out = {p: f.error for p, f in self.fields() if f.error}
        if self.general_error:
            out[""] = self.general_error
        return out

    # -- rebuilding -----------------------------------------------------------------------
    def _clear_downstream_errors(self) -> None:
        """Clear errors the engine put on fields that parse (they are re-checked now)."""
        for _, f in self.fields():
            if f.error is not None:
                f.set(f.text)
        self.general_error = None

    @staticmethod
    def row_dict(row: InputRow) -> dict:
        """The row as a budget-file input object (the engine's own reader checks it)."""
        f = row.fields
        d: dict = {}
        meaning = f["meaning"].value
        if meaning == "readings":
            d["readings"] = list(f["readings"].value)
        else:
            d["value"] = f["estimate"].value
            dist = f["distribution"].value
            if meaning in ("standard", "expanded") and dist != "normal":
                raise InputError("distribution", dist, "normal when the uncertainty is stated as a standard or "
                                 "expanded uncertainty (choose 'half-width a' for rectangular, triangular or "
                                 "arcsine)", f"input {row.symbol!r}")
            if meaning == "half-width" and dist == "normal":
                raise InputError("meaning", "half-width", "used with a rectangular, triangular or arcsine "
                                 "distribution (a normal one is stated by u or by U and k)", f"input {row.symbol!r}")
            if meaning == "expanded":
                d.update(expanded=f["uncertainty"].value, k=f["k"].value)
            elif meaning == "half-width":
                d.update(half_width=f["uncertainty"].value, distribution=dist)
            else:
                d["u"] = f["uncertainty"].value
            if not math.isinf(f["dof"].value):
                d["dof"] = f["dof"].value
        for key in ("unit", "source"):
            if f[key].value:
                d[key] = f[key].value
        return d

    def _input_quantity(self, eng: Any, row: InputRow) -> Any:
        return eng.InputQuantity.from_dict(row.symbol, self.row_dict(row))

    def _place(self, err: Exception, row: InputRow | None = None) -> None:
        """Put an error on the field it concerns, or make it the general message."""
        msg = message_for(err)
        if isinstance(err, CorrelationError) and err.pair:
            f = self.correlation_field(*err.pair)
            if f is not None:
                f.error = msg
                return
        if isinstance(err, ExpressionError):
            self.model.error = msg
            return
        if isinstance(err, InputError):
            if row is None:  # find the row named in the message
                names = _QUOTED.findall(err.where) + [str(err.field).split(".")[-2]
                                                    if str(err.field).count(".") >= 1 else ""]
                row = next((r for r in self.rows if r.symbol and r.symbol in names), None)
            key = _field_key(str(err.field))
            if row is not None and key is not None:
                row.fields[key].error = msg
                return
            if row is not None:
                row.fields["symbol"].error = msg
                return
            if str(err.field).lower() in ("model", "expression"):
                self.model.error = msg
                return
        self.general_error = msg

    def rebuild(self) -> bool:
        """Rebuild and evaluate the budget if every field parses; returns whether it did."""
        self._clear_downstream_errors()
        self.current = False
        if any(f.error for _, f in self.fields()):
            return False
        if not self.rows:
            self.general_error = "add at least one input"
            return False
        symbols = [r.symbol for r in self.rows]
        for r in self.rows:
            if symbols.count(r.symbol) > 1:
                r.fields["symbol"].error = f"symbol must be unique (got {r.symbol!r} twice)"
        if not self.model.value:
            self.model.error = "model must be an expression of the input symbols (got '')"
        if any(f.error for _, f in self.fields()):
            return False
        try:
            eng = _engine()
        except ImportError as err:  # pragma: no cover - the engine ships with the package
            self.general_error = f"the engine is not available ({err})"
            return False
        inputs = []
        for r in self.rows:
            try:
                inputs.append(self._input_quantity(eng, r))
            except FieldbudgetError as err:
                self._place(err, r)
        if len(inputs) < len(self.rows):
            return False
        try:
            model = eng.Model.from_expression(self.model.value)
            kwargs = dict(self.options)
            if kwargs.get("simultaneous"):  # groups of readings; keep those whose inputs still exist
                have = {r.symbol for r in self.rows if r.fields["meaning"].value == "readings"}
                kwargs["simultaneous"] = tuple(g for g in kwargs["simultaneous"] if set(g) <= have)
            budget = eng.Budget(model=model, inputs=tuple(inputs),
                                measurand=eng.Measurand(self.measurand.value, self.measurand_unit.value),
                                correlations=tuple((a, b, f.value) for a, b, f in self.correlations),
                                **kwargs)
            result = eng.evaluate(budget)
        except FieldbudgetError as err:
            self._place(err)
            return False
        except Exception as err:  # noqa: BLE001 - a defect below: logged, shown, the last good state kept
            _log.exception("internal error while rebuilding %r", self)
            self.general_error = message_for(err)
            return False
        self.last_good_budget, self.last_good_result, self.current = budget, result, True
        return True

    def __repr__(self) -> str:
        state = "current" if self.current else f"{len(self.errors)} message(s)"
        return f"<BudgetDraft {self.measurand.text} = {self.model.text!r}, {len(self.rows)} inputs, {state}>"
