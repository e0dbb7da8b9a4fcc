"""The calibration being entered: points, instrument readings, the curve and the conformity decision.

:class:`CalibrationDraft` keeps the text of each box, and on each valid change
builds a :class:`~fieldbudget.calibration.CalibrationSet` (the calibration
layer writes the per-point models and their correlation), evaluates it, fits
the calibration curve and decides conformity of each point's error with the
tolerance (JCGM 106:2012 through :func:`~fieldbudget.calibration.assess_conformity`).
Each point's reference field is entered as its value and standard
uncertainty (from the NMR measurement of that point); an NMR budget can be
given instead through ``reference_budgets``.  Its reading side matches the
other drafts (``budget``, ``result``, ``current``, ``errors``, ``subscribe``),
showing the budget of the selected point.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import Any

from ..errors import FieldbudgetError, InputError
from .field import Field, Observable, message_for, parse_choice, parse_readings, parse_text

_log = logging.getLogger("fieldbudget.drafts")

__all__ = ["POINT_KEYS", "SET_KEYS", "CalibrationDraft"]

Listener = Callable[["CalibrationDraft"], None]


def _number(text: str, name: str) -> float:
    s = text.strip().replace("\u2212", "-")
    try:
        x = float(s) if s else 0.0
    except ValueError:
        raise InputError(name, text, "a finite number (blank for 0)") from None
    if not math.isfinite(x):
        raise InputError(name, text, "a finite number (blank for 0)")
    return x


def _optional(text: str, name: str) -> float | None:
    return None if not text.strip() else _number(text, name)


def _degree(text: str, name: str) -> int:
    s = text.strip()
    if s not in ("0", "1", "2", "3"):
        raise InputError(name, text, "0, 1, 2 or 3")
    return int(s)


#: Point keys -> (CalibrationPoint argument, parser).
POINT_KEYS: dict[str, tuple[str | None, Callable]] = {
    "name": ("name", parse_text),
    "reference_t": (None, _number),
    "u_reference_t": (None, _number),
    "readings_t": ("readings_t", parse_readings),
    "reversed_readings_t": ("reversed_readings_t", parse_readings),
    "temperature_difference_k": ("temperature_difference_k", _number),
    "u_temperature_difference_k": ("u_temperature_difference_k", _number),
    "gradient_t_per_m": ("gradient_t_per_m", _number),
    "u_gradient_t_per_m": ("u_gradient_t_per_m", _number),
}
#: Set-level keys -> (CalibrationSet argument or None, parser).
SET_KEYS: dict[str, tuple[str | None, Callable]] = {
    "instrument": ("instrument", parse_text),
    "resolution_t": ("resolution_t", _number),
    "zero_offset_t": ("zero_offset_t", _number),
    "u_zero_offset_t": ("u_zero_offset_t", _number),
    "temperature_coefficient_per_k": ("temperature_coefficient_per_k", _number),
    "u_temperature_coefficient_per_k": ("u_temperature_coefficient_per_k", _number),
    "tilt_u_rad": ("tilt_u_rad", _number),
    "position_offset_m": ("position_offset_m", _number),
    "u_position_offset_m": ("u_position_offset_m", _number),
    "propagation": (None, parse_choice(("gum", "auto", "monte carlo"))),
    "degree": (None, _degree),
    "tolerance_t": (None, _optional),
    "tolerance_source": (None, parse_text),
    "decision_rule": (None, parse_choice(("simple acceptance", "guarded acceptance"))),
}
_SET_DEFAULTS = {"propagation": "gum", "degree": "1", "decision_rule": "simple acceptance", "resolution_t": "1e-5"}


def _text(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, (list, tuple)):
        return " ".join(_text(x) for x in v)
    if isinstance(v, float):
        s = repr(v)
        return s.removesuffix(".0")
    return str(v)


class CalibrationDraft(Observable):
    """The editable state of one calibration of a field instrument against the NMR reference.

    Parameters
    ----------
    points : iterable of dict
        One dict per point with keys of :data:`POINT_KEYS` (values or texts).
    settings : dict
        Keys of :data:`SET_KEYS` (values or texts).
    reference_budgets : sequence of Budget, optional
        NMR budgets of the points' reference fields, used instead of
        ``reference_t`` / ``u_reference_t`` where given (not None).
    trials, seed : int
        Monte Carlo settings when ``propagation`` asks for it.
    """

    def __init__(self, points: Iterable[Mapping] = (), settings: Mapping | None = None,
                 reference_budgets: Sequence[Any] | None = None, trials: int = 100_000, seed: int = 1) -> None:
        given = {**_SET_DEFAULTS, **{k: _text(v) for k, v in (settings or {}).items()}}
        unknown = sorted(set(given) - set(SET_KEYS))
        if unknown:
            raise InputError(unknown[0], given[unknown[0]], "one of " + ", ".join(SET_KEYS), "calibration")
        self.settings = {k: Field(k, given.get(k, ""), p) for k, (_, p) in SET_KEYS.items()}
        self.points: list[dict[str, Field]] = [self._point_fields(p) for p in points]
        self.reference_budgets = list(reference_budgets or [])
        self.trials, self.seed = trials, seed
        self.selected = 0
        self.calibration: Any = None  # CalibrationResult
        self.curve: Any = None
        self.conformity: tuple = ()
        self.calibration_set: Any = None
        self.last_good_result: Any = None
        self.last_good_budget: Any = None
        self.current = False
        self.general_error: str | None = None
        self._listeners: list[Listener] = []
        self.rebuild()

    @staticmethod
    def _point_fields(values: Mapping) -> dict[str, Field]:
        unknown = sorted(set(values) - set(POINT_KEYS))
        if unknown:
            raise InputError(unknown[0], values[unknown[0]], "one of " + ", ".join(POINT_KEYS), "calibration point")
        return {k: Field(k, _text(values.get(k, "")), p) for k, (_, p) in POINT_KEYS.items()}

    # -- listeners and edits ----------------------------------------------------------
    def _changed(self) -> None:
        self.rebuild()
        self._notify()

    def set(self, point: int | None, key: str, text: object) -> bool:
        """Set a point's field (``point`` = index) or a setting (``point`` = None) from text."""
        if point is None:
            if key not in self.settings:
                raise InputError("setting", key, "one of " + ", ".join(self.settings))
            self.settings[key].set(text)
        else:
            if key not in POINT_KEYS:
                raise InputError("key", key, "one of " + ", ".join(POINT_KEYS))
            try:
                self.points[point][key].set(text)
            except (IndexError, TypeError):
                raise InputError("point", point, f"a point number from 0 to {len(self.points) - 1}") from None
        self._changed()
        return self.current

    def add_point(self, **values: object) -> int:
        self.points.append(self._point_fields(values))
        self._changed()
        return len(self.points) - 1

    def remove_point(self, point: int) -> None:
        del self.points[point]
        if point < len(self.reference_budgets):
            del self.reference_budgets[point]
        self.selected = min(self.selected, max(0, len(self.points) - 1))
        self._changed()

    def select(self, point: int) -> None:
        """Show the budget of this point."""
        self.selected = max(0, min(len(self.points) - 1, int(point)))
        self._changed()

    # -- reading side -----------------------------------------------------------------------
    @property
    def budget(self) -> Any:
        return self.last_good_budget

    @property
    def result(self) -> Any:
        return self.last_good_result

    @property
    def errors(self) -> dict[str, str]:
        out = {k: f.error for k, f in self.settings.items() if f.error}
        for i, p in enumerate(self.points):
            out.update({f"points[{i}].{k}": f.error for k, f in p.items() if f.error})
        if self.general_error:
            out[""] = self.general_error
        return out

    # -- rebuilding ----------------------------------------------------------------------------
    def _reference(self, engine: Any, i: int, p: dict[str, Field]) -> Any:
        if i < len(self.reference_budgets) and self.reference_budgets[i] is not None:
            return self.reference_budgets[i]
        q = engine.InputQuantity.from_dict("B_nmr", {"value": p["reference_t"].value, "u": p["u_reference_t"].value,
                                                     "unit": "T", "source": "NMR reference field of the point"},
                                           where=f"point {i + 1}")
        return engine.Budget(model=engine.Model.from_expression("B_nmr"), inputs=(q,),
                             measurand=engine.Measurand("B_ref", "T"))

    def _place(self, err: Exception, point: int | None) -> None:
        msg = message_for(err)
        name = str(getattr(err, "field", ""))
        fields = self.points[point] if point is not None else {}
        arg = {a: k for k, (a, _) in POINT_KEYS.items() if a}
        key = name if name in fields else arg.get(name)
        if key is None and name in ("value", "u"):
            key = {"value": "reference_t", "u": "u_reference_t"}[name]
        if point is not None and key in fields:
            fields[key].error = msg
            return
        sarg = {a: k for k, (a, _) in SET_KEYS.items() if a}
        skey = name if name in self.settings else sarg.get(name)
        if skey is not None:
            self.settings[skey].error = msg
            return
        self.general_error = msg

    def rebuild(self) -> bool:
        for f in [*self.settings.values(), *(f for p in self.points for f in p.values())]:
            if f.error is not None:
                f.set(f.text)
        self.general_error, self.current = None, False
        if self.errors:
            return False
        if not self.points:
            self.general_error = "add at least one calibration point"
            return False
        from .. import calibration, engine

        points = []
        for i, p in enumerate(self.points):
            kwargs = {a: p[k].value for k, (a, _) in POINT_KEYS.items() if a and p[k].text.strip()}
            kwargs.setdefault("name", f"P{i + 1}")
            kwargs.setdefault("readings_t", ())  # the calibration layer says what is missing
            try:
                points.append(calibration.CalibrationPoint(reference=self._reference(engine, i, p), **kwargs))
            except FieldbudgetError as err:
                self._place(err, i)
                return False
        s = self.settings
        kwargs = {a: s[k].value for k, (a, _) in SET_KEYS.items() if a and s[k].text.strip()}
        try:
            cset = calibration.CalibrationSet(points=tuple(points), **kwargs)
            res = cset.evaluate(s["propagation"].value, trials=self.trials, seed=self.seed)
            degree = min(s["degree"].value, len(points) - 1)
            curve = res.fit(degree) if len(points) >= 2 else None
            conformity = ()
            if s["tolerance_t"].value is not None:
                tol = calibration.Tolerance.symmetric(0.0, abs(s["tolerance_t"].value), "T", s["tolerance_source"].value)
                conformity = tuple(calibration.assess_conformity(
                    tol, estimate=pr.error, standard_uncertainty=pr.u_error, coverage_factor=pr.coverage_factor,
                    rule=s["decision_rule"].value, measurand=f"error at {pr.name}") for pr in res.points)
        except FieldbudgetError as err:
            self._place(err, None)
            return False
        except Exception as err:  # noqa: BLE001 - a defect below: logged, shown, the last good state kept
            _log.exception("internal error while rebuilding %r", self)
            self.general_error = message_for(err)
            return False
        self.selected = min(self.selected, len(points) - 1)
        self.calibration_set, self.calibration, self.curve, self.conformity = cset, res, curve, conformity
        self.last_good_result = res.points[self.selected].gum
        self.last_good_budget = cset.point_budget(self.selected)
        self.current = True
        return True

    def __repr__(self) -> str:
        state = "current" if self.current else f"{len(self.errors)} message(s)"
        return f"<CalibrationDraft {self.settings['instrument'].text or 'instrument'}, {len(self.points)} points, {state}>"
