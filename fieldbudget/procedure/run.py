"""One operator's pass through a lab procedure, in plain Python.

:class:`ProcedureRun` holds which step the operator is on, what the operator
has entered and what the lab fixes, builds the measurement input for the
domain layer from the two (a plain dict, written key path by key path from
each component's ``target``), evaluates it, and checks the procedure's
acceptance limits.  It knows no metrology of its own: the NMR and calibration
layers build and evaluate the budget, and their errors (which name the field)
are passed on.  The guided form in ``fieldbudget.widgets.procedure_view`` is a
thin view over this object.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

from .. import _display
from ..errors import FieldbudgetError, InputError, is_note
from .procedure import AcceptanceLimit, Component, Procedure, Step

__all__ = ["AcceptanceReport", "LimitVerdict", "ProcedureRun", "result_quantities"]

Listener = Callable[["ProcedureRun"], None]
RECORD_PREFIX = "record."
_LATEST = object()
_SPLIT = re.compile(r"[\s,;]+")


def _parse(comp: Component, value: Any, where: str) -> Any:
    """The operator's value (a Python value or the text typed in a box) as the component's kind."""
    kind, unit = comp.kind, f" {comp.unit}" if comp.unit else ""

    def number(x: Any, allowed: str) -> float:
        if isinstance(x, bool):
            raise InputError(comp.id, x, allowed, where)
        try:
            f = float(x.strip()) if isinstance(x, str) else float(x)
        except (TypeError, ValueError):
            raise InputError(comp.id, x, allowed, where) from None
        if not math.isfinite(f):
            raise InputError(comp.id, x, allowed, where)
        return f

    def bounded(f: float, allowed: str, raw: Any) -> float:
        if (comp.minimum is not None and f < comp.minimum) or (comp.maximum is not None and f > comp.maximum):
            raise InputError(comp.id, raw, allowed, where)
        return f

    lo = "" if comp.minimum is None else _display.fmt(comp.minimum)
    hi = "" if comp.maximum is None else _display.fmt(comp.maximum)
    # ">= 0 Hz", "<= 45 degC", "from 5 to 45 degC": no "inf" bound beside the word finite
    span = (f" from {lo} to {hi}{unit}" if lo and hi else f" >= {lo}{unit}" if lo else f" <= {hi}{unit}" if hi
            else f" in{unit}" if unit else "")
    if kind == "number":
        allowed = f"a finite number{span}"
        return bounded(number(value, allowed), allowed, value)
    if kind == "numbers":
        allowed = f"a list of finite numbers{span} (separated by commas, spaces or new lines)"
        items = [t for t in _SPLIT.split(value.strip()) if t] if isinstance(value, str) else value
        if not isinstance(items, (list, tuple)) or not items:
            raise InputError(comp.id, value, allowed, where)
        return tuple(bounded(number(x, allowed), allowed, x) for x in items)
    if kind == "choice":
        allowed = f"one of {', '.join(map(repr, comp.choices))}"
        for c in comp.choices:
            if value == c or (isinstance(value, str) and value.strip() == str(c)):
                return c
        raise InputError(comp.id, value, allowed, where)
    if kind == "boolean":
        if isinstance(value, bool):
            return value
        if isinstance(value, str) and value.strip().lower() in ("true", "false", "yes", "no"):
            return value.strip().lower() in ("true", "yes")
        raise InputError(comp.id, value, "true or false", where)
    if not isinstance(value, str):
        raise InputError(comp.id, value, "text", where)
    return value


def _put(tree: dict, target: str, value: Any) -> None:
    *head, last = target.split(".")
    node = tree
    for key in head:
        node = node.setdefault(key, {})
    node[last] = list(value) if isinstance(value, tuple) else value


def _core(outcome: Any) -> Any:
    """The engine ``BudgetResult`` inside a domain-layer result (or the result itself)."""
    for name in ("result", "budget_result", "gum"):
        inner = getattr(outcome, name, None)
        if inner is not None and hasattr(inner, "standard_uncertainty"):
            return inner
    return outcome


def result_quantities(kind: str, result: Any) -> dict[str, float]:
    """The quantities an acceptance limit may name, read from a domain-layer result.

    ``result`` is what :meth:`ProcedureRun.evaluate` returns for the procedure's
    kind.  Quantities the result does not carry are left out.
    """
    out: dict[str, float] = {}
    # The domain layer's own (physics) warnings when it keeps them apart from the engine's.
    warnings = getattr(result, "nmr_warnings", None)
    if warnings is None:
        warnings = getattr(result, "warnings", ())
    # a note (which documented choice was made, e.g. line noise in the readings) is not a warning to clear
    out["warning_count"] = float(sum(1 for w in warnings or () if not is_note(w)))
    if kind == "nmr-field":
        core = _core(result)
        for name, attr in (("value", "estimate"), ("standard_uncertainty", "standard_uncertainty"),
                           ("expanded_uncertainty", "expanded_uncertainty"),
                           ("coverage_factor", "coverage_factor"), ("effective_dof", "effective_dof")):
            x = getattr(core, attr, None)
            if x is not None:
                out[name] = float(x)
        if "value" in out and "expanded_uncertainty" in out and out["value"] != 0:
            out["relative_expanded_uncertainty"] = out["expanded_uncertainty"] / abs(out["value"])
    else:
        for name in ("max_abs_error", "max_expanded_uncertainty"):
            x = getattr(result, name, None)
            if x is not None:
                out[name] = float(x)
        conformity = getattr(result, "conformity", None)
        if conformity:
            out["nonconforming_points"] = float(sum(1 for c in conformity if not c.accepted))
    return out


@dataclass(frozen=True)
class LimitVerdict:
    """One acceptance limit against the value found: ``passed`` is None when there is no value yet."""

    limit: AcceptanceLimit
    value: float | None
    passed: bool | None

    @property
    def verdict(self) -> str:
        return {True: "met", False: "NOT met", None: "not yet known"}[self.passed]

    def __repr__(self) -> str:
        return f"<LimitVerdict {self.limit.id!r}: {_display.fmt(self.value) or '-'} -> {self.verdict}>"

    def _repr_html_(self) -> str:
        e = _display.escape
        return (f'<span class="fb-proc-verdict">{e(self.limit.text)}: {e(_display.fmt(self.value) or "-")} '
                f"&rarr; {e(self.verdict)}</span>")

    def to_dict(self) -> dict:
        v = self.value if self.value is None or math.isfinite(self.value) else None
        return {"id": self.limit.id, "limit": self.limit.describe(), "text": self.limit.text,
                "value": v, "passed": self.passed}


@dataclass(frozen=True)
class AcceptanceReport:
    """The verdict on every acceptance limit of a procedure for one run."""

    procedure_id: str
    verdicts: tuple[LimitVerdict, ...]
    procedure: Any = field(default=None, repr=False, compare=False)  # for labels and units in _repr_html_

    @property
    def accepted(self) -> bool | None:
        """True when every limit is met, False when any is not, None while any is unknown."""
        if any(v.passed is False for v in self.verdicts):
            return False
        if any(v.passed is None for v in self.verdicts):
            return None
        return True

    @property
    def failures(self) -> tuple[LimitVerdict, ...]:
        return tuple(v for v in self.verdicts if v.passed is False)

    def __repr__(self) -> str:
        word = {True: "accepted", False: "REJECTED", None: "incomplete"}[self.accepted]
        met = sum(v.passed is True for v in self.verdicts)
        return f"<AcceptanceReport {self.procedure_id!r}: {word}, {met}/{len(self.verdicts)} limits met>"

    def to_dict(self) -> dict:
        return {"procedure": self.procedure_id, "accepted": self.accepted,
                "limits": [v.to_dict() for v in self.verdicts]}

    def _repr_html_(self) -> str:
        if self.procedure is not None:
            from .acceptance_html import acceptance_html

            return f'<div class="fb-proc-acceptance">{acceptance_html(self, self.procedure)}</div>'
        rows = [(v.limit.text, v.limit.describe(), _display.fmt(v.value) or "-", v.verdict) for v in self.verdicts]
        word = {True: "Accepted: every limit is met", False: "Not accepted: a limit is not met",
                None: "Incomplete: some limits cannot be judged yet"}[self.accepted]
        return _display.html_table(("limit", "rule", "value", "verdict"), rows, caption=word,
                                   css_class="fb-proc-acceptance")


class ProcedureRun:
    """The state of one pass through ``procedure``: the current step and the values entered.

    Parameters
    ----------
    procedure : Procedure
        The lab's procedure (see :func:`~fieldbudget.procedure.load_procedure`).
    training : bool
        Start with training mode on (the view shows each component's training text).
    entered : mapping, optional
        Operator values to start from, by component id (checked like :meth:`set`).

    Notes
    -----
    Operator components start at their default ``value`` from the procedure
    file when it has one.  After every change of a value the run evaluates the
    measurement again (when nothing required is missing): :attr:`outcome` and
    :attr:`result` hold the last good evaluation, :attr:`current` says whether
    it reflects the latest values and :attr:`errors` says why not.  These are
    the attributes the live budget view reads.  Listeners registered with
    :meth:`subscribe` are called after every change.
    """

    def __init__(self, procedure: Procedure, *, training: bool = False,
                 entered: Mapping[str, Any] | None = None, authorisation: Any = None) -> None:
        self.procedure = procedure
        #: what the lab's competence records said when the run was started (see
        #: fieldbudget.procedure.authorised.start_run); the record keeps its flag
        self.authorisation = authorisation
        self._training = bool(training)
        self._index = 0
        self._listeners: list[Listener] = []
        self._entered: dict[str, Any] = {}
        for comp in procedure.operator_components:
            if comp.value is not None:
                self._entered[comp.id] = _parse(comp, comp.value, self._where)
        for cid, value in (entered or {}).items():
            self._store(cid, value)
        self._outcome: Any = None
        self._current = False
        self._errors: dict[str, str] = {}
        self._reevaluate()

    # ------------------------------------------------------------ listeners
    def subscribe(self, listener: Listener) -> Callable[[], None]:
        """Call ``listener(run)`` after every change; returns a function that unsubscribes it."""
        self._listeners.append(listener)
        return lambda: self._listeners.remove(listener) if listener in self._listeners else None

    def _changed(self, values: bool = False) -> None:
        if values:
            self._reevaluate()
        for fn in tuple(self._listeners):
            fn(self)

    def _reevaluate(self) -> None:
        missing = self.missing()
        if missing:
            self._current = False
            self._errors = {cid: f"{self.procedure.component(cid).label}: still to be entered" for cid in missing}
            return
        try:
            outcome = self.evaluate()
        except FieldbudgetError as err:
            self._current = False
            self._errors = {self._component_for(err): str(err)}
            return
        self._outcome, self._current, self._errors = outcome, True, {}

    def _component_for(self, err: FieldbudgetError) -> str:
        """The id of the component a domain-layer error concerns, else ``"measurement"``.

        A file error's JSON pointer (``#/line/fwhm_Hz``) or an input error's
        field is matched against the components' targets.
        """
        pointer = getattr(err, "pointer", None)
        key = pointer.lstrip("#/").replace("/", ".") if pointer else str(getattr(err, "field", "") or "")
        if key:
            for comp in self.procedure.components:
                if key in (comp.id, comp.target):
                    return comp.id
        return "measurement"

    @property
    def outcome(self) -> Any:
        """The domain layer's result of the last good evaluation (None before the first)."""
        return self._outcome

    @property
    def result(self) -> Any:
        """The engine result (``BudgetResult``) of the last good evaluation, or None."""
        return None if self._outcome is None else _core(self._outcome)

    @property
    def last_budget(self) -> Any:
        """The engine budget of the last good evaluation, or None (what an export saves)."""
        o = self._outcome
        if o is None:
            return None
        inner = getattr(o, "calibration", None)
        return getattr(inner if inner is not None else o, "budget", None)

    @property
    def current(self) -> bool:
        """True when :attr:`result` was evaluated from the values in force now."""
        return self._current

    @property
    def errors(self) -> Mapping[str, str]:
        """Why the latest values could not be evaluated, by field (empty when :attr:`current`)."""
        return MappingProxyType(dict(self._errors))

    # ------------------------------------------------------------ steps
    @property
    def steps(self) -> tuple[Step, ...]:
        return self.procedure.steps

    @property
    def step_index(self) -> int:
        return self._index

    @property
    def step(self) -> Step:
        return self.procedure.steps[self._index]

    @property
    def is_first(self) -> bool:
        return self._index == 0

    @property
    def is_last(self) -> bool:
        return self._index == len(self.procedure.steps) - 1

    def go(self, step: int | str) -> Step:
        """Go to a step by index or id."""
        if isinstance(step, str):
            ids = [s.id for s in self.steps]
            if step not in ids:
                raise InputError("step", step, f"one of {', '.join(map(repr, ids))}", self._where)
            step = ids.index(step)
        if not 0 <= step < len(self.steps):
            raise InputError("step", step, f"a step index from 0 to {len(self.steps) - 1}", self._where)
        if step != self._index:
            self._index = step
            self._changed()
        return self.step

    def next(self) -> Step:
        """Go to the next step (stays on the last one)."""
        return self.go(min(self._index + 1, len(self.steps) - 1))

    def back(self) -> Step:
        """Go to the previous step (stays on the first one)."""
        return self.go(max(self._index - 1, 0))

    def step_components(self, step: Step | None = None) -> tuple[Component, ...]:
        """The components listed in a step (the current one by default), in file order."""
        s = step or self.step
        return tuple(self.procedure.component(cid) for cid in s.components)

    # ------------------------------------------------------------ training
    @property
    def training(self) -> bool:
        return self._training

    def set_training(self, on: bool) -> None:
        """Switch training mode on or off."""
        if bool(on) != self._training:
            self._training = bool(on)
            self._changed()

    # ------------------------------------------------------------ values
    @property
    def _where(self) -> str:
        return f"procedure {self.procedure.id!r}"

    @property
    def _values_where(self) -> str:
        return f"values entered for procedure {self.procedure.id!r}"

    def _store(self, component_id: str, value: Any) -> None:
        try:
            comp = self.procedure.component(component_id)
        except KeyError:
            ids = ", ".join(c.id for c in self.procedure.operator_components)
            raise InputError(component_id, value, f"a component of this procedure ({ids})", self._where) from None
        if comp.fixed:
            raise InputError(comp.id, value, f"left as the lab fixed it ({comp.source})", self._where)
        self._entered[comp.id] = _parse(comp, value, self._where)

    def set(self, component_id: str, value: Any) -> Any:
        """Enter an operator value (a Python value or the text typed in a box); returns the parsed value.

        Raises
        ------
        InputError
            The component is unknown or fixed by the lab, or the value does not
            suit it; ``field`` is the component id.  The previous value stays.
        """
        self._store(component_id, value)
        self._changed(values=True)
        return self._entered[component_id]

    def clear(self, component_id: str) -> None:
        """Forget an operator value."""
        if self._entered.pop(component_id, None) is not None:
            self._changed(values=True)

    def value(self, component_id: str) -> Any:
        """The value in force for a component: the lab's, or the operator's, or None."""
        comp = self.procedure.component(component_id)
        return comp.value if comp.fixed else self._entered.get(comp.id)

    @property
    def entered(self) -> Mapping[str, Any]:
        """What the operator has entered, by component id (read-only)."""
        return MappingProxyType(dict(self._entered))

    @property
    def fixed(self) -> Mapping[str, Any]:
        """What the lab fixes, by component id (read-only)."""
        return MappingProxyType({c.id: c.value for c in self.procedure.fixed_components})

    def missing(self) -> tuple[str, ...]:
        """Required operator components that have no value yet, in step order."""
        order = [cid for s in self.steps for cid in s.components]
        return tuple(cid for cid in order
                     if not self.procedure.component(cid).fixed
                     and self.procedure.component(cid).required and cid not in self._entered)

    @property
    def complete(self) -> bool:
        return not self.missing()

    # ------------------------------------------------------------ building
    def measurement_dict(self) -> dict:
        """The domain layer's input built from the fixed and the entered values.

        Each component's value is written at its ``target`` key path (targets
        under ``record.`` go to :meth:`record_dict` instead).  For an
        ``nmr-field`` procedure this is the dict
        :meth:`fieldbudget.nmr.measurement.NMRMeasurement.from_dict` reads.

        Raises
        ------
        InputError
            A required operator value is missing (``field`` names the first).
        """
        missing = self.missing()
        if missing:
            comp = self.procedure.component(missing[0])
            raise InputError(comp.id, None, f"entered ({comp.label}, step {self._step_of(comp.id)!r})",
                             self._where)
        tree: dict = {}
        for comp in self.procedure.components:
            v = self.value(comp.id)
            if v is not None and not comp.target.startswith(RECORD_PREFIX):
                _put(tree, comp.target, v)
        return tree

    def record_dict(self) -> dict:
        """The values whose target starts with ``record.`` (operator, magnet set-point, ...).

        They describe the run for its record and report; they are not inputs of
        the measurement.
        """
        tree: dict = {}
        for comp in self.procedure.components:
            v = self.value(comp.id)
            if v is not None and comp.target.startswith(RECORD_PREFIX):
                _put(tree, comp.target[len(RECORD_PREFIX):], v)
        return tree

    def _step_of(self, component_id: str) -> str:
        return next((s.title for s in self.steps if component_id in s.components), "")

    def measurement(self) -> Any:
        """The domain-layer object for this run: an ``NMRMeasurement`` or a ``TeslameterCalibration``.

        Relative file paths among the values (a readings CSV) are taken from
        the procedure file's folder.
        """
        d = self.measurement_dict()
        base = Path(self.procedure.path).parent if self.procedure.path else Path(".")
        if self.procedure.kind == "nmr-field":
            from ..nmr.measurement import NMRMeasurement

            return NMRMeasurement.from_dict(d, where=self._values_where, base_dir=base)
        from .teslameter import TeslameterCalibration

        return TeslameterCalibration.from_dict(d, where=self._values_where, base_dir=base)

    def budget(self) -> Any:
        """The engine budget of this run (for a calibration: the merged budget of every point)."""
        m = self.measurement()
        return m.to_budget()

    def evaluate(self) -> Any:
        """Evaluate the measurement (the domain layer's result, with its ``warnings``)."""
        return self.measurement().evaluate()

    def save_measurement(self, path: str | Path) -> Path:
        """Write the measurement description built from this run (JSON, atomic) and return its path."""
        import json

        from ..files.atomic import atomic_write_text

        d = self.measurement_dict()
        return atomic_write_text(path, json.dumps(d, indent=2, ensure_ascii=False) + "\n")

    def make_record(self, *, monte_carlo: Any = None, seed: int | None = None, remarks: str = "",
                    sign: Any = None, passphrase: str | None = None) -> Any:
        """A record of the last good budget naming this procedure, its operator and the acceptance verdict.

        ``monte_carlo`` and ``seed`` are passed to
        :func:`fieldbudget.files.record.make_record` (a number of trials, or None);
        ``sign`` (a signing key or key file, with ``passphrase``) signs it.
        The record carries the identification (operator, procedure, lab and the
        run's ``record.`` values), the acceptance results and the physics
        warnings; for an NMR procedure whose values are current it is the record
        of the measurement itself (its description and the files it names).
        The remark never says every limit was met when a check failed.
        """
        from ..files.record import make_record

        budget = self.last_budget
        if budget is None:
            raise InputError("budget", None, "evaluated first (enter every required value)", self._where)
        acceptance = self.check() if self._current else None
        mc = None
        if monte_carlo is not None and not hasattr(monte_carlo, "to_dict"):
            import secrets

            from ..engine import montecarlo as _mc

            if isinstance(monte_carlo, bool) or not isinstance(monte_carlo, int) or monte_carlo < 1:
                raise InputError("monte_carlo", monte_carlo, "a number of trials >= 1, or None", self._where)
            seed = secrets.randbits(63) if seed is None else seed
            mc = _mc.run(budget, trials=monte_carlo, seed=seed)
        elif monte_carlo is not None:
            mc = monte_carlo
        remark = self._remark(acceptance, budget, mc)
        text = f"{remarks} " if remarks else ""
        record_values = self.record_dict()
        operator = str(record_values.get("operator", ""))
        ident = {k: str(v) for k, v in record_values.items()
                 if k in ("operator", "instrument", "probe", "customer", "item", "date", "id", "title")
                 and isinstance(v, (str, int, float)) and not isinstance(v, bool)}
        if getattr(self.procedure, "lab", ""):
            ident.setdefault("lab", str(self.procedure.lab))
        if self.authorisation is not None:
            a = self.authorisation
            if operator and a.operator and operator != a.operator:
                raise InputError("operator", operator, f"the operator whose authorisation was checked at the start "
                                                       f"({a.operator!r})", self._where)
            ident["operator"] = operator = operator or a.operator
            ident["authorisation"] = a.flag
            if a.supervisor:
                ident["supervisor"] = a.supervisor
            # said in the remark as well, in words, for the reader of the certificate's record
            remark += (f" Operator {operator} not authorised for this procedure: run supervised by {a.supervisor}."
                       if a.flag == "supervised" else f" Operator {operator} authorised for this procedure.")
        details: dict = {"identification": ident}
        if acceptance is not None:
            acc = acceptance.to_dict()
            details["acceptance"] = {"procedure": acc["procedure"], "accepted": acc["accepted"],
                                     "verdicts": acc["limits"]}
        kw = dict(monte_carlo=mc, procedure=self.procedure, operator=operator, remarks=f"{text}{remark}")
        if self.procedure.kind == "teslameter-calibration":
            # a calibration record: points, covariance, curve, conformity and the certificate details
            from ..files.calibration_file import CalibrationFile

            base = Path(self.procedure.path).parent if self.procedure.path else Path(".")
            cal = CalibrationFile.from_dict(
                self.measurement().calibration_file(record_values.get("certificate")),
                where=self._values_where, base_dir=base)
            return make_record(cal, monte_carlo=monte_carlo if isinstance(monte_carlo, int) else None, seed=seed,
                               procedure=self.procedure, operator=operator, remarks=f"{text}{remark}", sign=sign,
                               passphrase=passphrase, details=details)
        kw.update(sign=sign, passphrase=passphrase)
        if self._current and self.procedure.kind == "nmr-field":
            from ..files.measurement_record import make_measurement_record

            base = Path(self.procedure.path).parent if self.procedure.path else Path(".")
            return make_measurement_record(self.measurement_dict(), where=self._values_where, base_dir=base,
                                           details=details, **kw)
        outcome = self._outcome if self._current else None
        details["findings"] = list(getattr(outcome, "warnings", ()) or ())
        return make_record(budget, details=details, **kw)

    def _remark(self, acceptance: AcceptanceReport | None, budget: Any, mc: Any) -> str:
        """The kit's remark on the run: the acceptance verdict, and any check that failed, in words."""
        head = f"Procedure {self.procedure.id} v{self.procedure.version}: "
        if acceptance is None:
            words = "acceptance incomplete"
        else:
            met = sum(v.passed is True for v in acceptance.verdicts)
            n = len(acceptance.verdicts)
            words = {True: "every acceptance limit met", False: f"an acceptance limit NOT met ({met} of {n} met)",
                     None: f"acceptance incomplete ({met} of {n} limits met)"}[acceptance.accepted]
        failed = []
        if mc is not None:
            from ..engine import evaluate, validation

            check = validation.validate(evaluate(budget), mc)
            if not check.passed:
                failed.append("the GUM result did not pass its validation by Monte Carlo (JCGM 101 clause 8), "
                              "so the Monte Carlo result is the one reported")
        outcome = self._outcome if self._current else None
        if any(getattr(w, "severity", "") == "invalid" for w in getattr(outcome, "warnings", ()) or ()):
            failed.append("a physics check says the reading may be invalid")
        if failed and acceptance is not None and acceptance.accepted:
            words = f"the {len(acceptance.verdicts)} acceptance limits of the procedure were met, but "
            return head + words + "; ".join(failed) + "."
        return head + words + ("; " + "; ".join(failed) if failed else "") + "."


    # ------------------------------------------------------------ acceptance
    def check(self, result: Any = _LATEST) -> AcceptanceReport:
        """Judge every acceptance limit.

        Limits on the result use ``result`` (a domain-layer result, as from
        :meth:`evaluate`); by default the latest evaluation when it is
        :attr:`current`, else none, so those limits are "not yet known".  Both
        bounds of a limit are inclusive: a value equal to the limit meets it.
        """
        if result is _LATEST:
            result = self._outcome if self._current else None
        found = result_quantities(self.procedure.kind, result) if result is not None else {}
        verdicts = []
        for lim in self.procedure.acceptance:
            if lim.component is not None:
                v = self.value(lim.component)
                x = None if v is None else float(v)
            else:
                x = found.get(lim.result)
            if x is None or math.isnan(x):
                verdicts.append(LimitVerdict(lim, x, None))
                continue
            ok = (lim.minimum is None or x >= lim.minimum) and (lim.maximum is None or x <= lim.maximum)
            verdicts.append(LimitVerdict(lim, x, ok))
        return AcceptanceReport(self.procedure.id, tuple(verdicts), self.procedure)

    # ------------------------------------------------------------ display
    def to_dict(self) -> dict:
        """The run's state as plain JSON types (procedure id and version, step, entered values)."""
        return {"procedure": self.procedure.id, "version": self.procedure.version,
                "step": self.step.id, "training": self._training,
                "entered": {k: list(v) if isinstance(v, tuple) else v for k, v in self._entered.items()}}

    def __repr__(self) -> str:
        return (f"<ProcedureRun {self.procedure.id!r} step {self._index + 1}/{len(self.steps)} "
                f"{self.step.id!r}, {len(self._entered)} entered, {len(self.missing())} missing"
                f"{', training' if self._training else ''}>")
