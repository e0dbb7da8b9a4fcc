"""Per-point calibration budgets of a field instrument against the NMR reference, and their correlation.

At calibration point i the error of the instrument under calibration is

    E_i = (R_i - R_zero + dres_i + drev_i) / (1 + a_temp * dT_i) - (B_ref,i + G_i * dz_pos) * cos(theta_x_i) * cos(theta_y_i)

and, when asked for, the correction factor

    K_i = (B_ref,i + G_i * dz_pos) * cos(theta_x_i) * cos(theta_y_i) / ((R_i - R_zero + dres_i + drev_i) / (1 + a_temp * dT_i))

with (each term appears in the model only when it is given):

* ``R_i``: mean indication, Type A from the readings (JCGM 100:2008 4.2);
  with readings in the reversed field ``R_i = (mean(R+) - mean(R-)) / 2``, which
  cancels the zero offset (``common practice`` for Hall probes), and ``drev_i``
  is the reversal asymmetry of the field (0 +- u);
* ``R_zero``: zero offset read in a zero-field chamber, shared by all points
  (used only without reversal);
* ``dres_i``: resolution, rectangular with half-width half a digit
  (JCGM 100:2008 F.2.2.1);
* ``a_temp * dT_i``: temperature coefficient of the instrument (shared) times
  the temperature difference from its reference temperature;
* ``cos(theta_x_i) * cos(theta_y_i)``: alignment of the probe to the field.
  A misaligned probe axis is off by two angles (about two axes across the
  field); after the two rotations the component along the field is
  ``B cos(theta_x) cos(theta_y)`` (the z-component of the rotated unit
  vector).  With ``theta_x, theta_y ~ N(0, u^2)`` independent,
  ``E[cos theta_x cos theta_y] = exp(-u^2) ~ 1 - u^2`` and its variance is
  ``((1 + exp(-2u^2))/2)^2 - exp(-2u^2) ~ u^4``: bias and spread both about
  ``u^2`` (normal moments, ``common practice``).  ``tilt_model="one-angle"``
  keeps the single-angle model ``cos(theta_i)`` (bias ``u^2/2``, spread
  ``u^2/sqrt 2``) for a probe guided in one plane.  At ``theta = 0`` the
  first-order sensitivity is zero, so the law of propagation gives this term
  no uncertainty and no bias.  With ``propagation="auto"`` the budget goes
  through Monte Carlo (JCGM 101:2008) when such an input *matters*: when its
  second-order effect (variance ``c2^2/2`` plus squared bias ``(c2/2)^2``,
  with ``c2 = d2E/dx2 u^2``; JCGM 100:2008 5.1.2, note) exceeds 1 % of the
  first-order ``u_c^2`` at some point.  A negligible one leaves the GUM route,
  because Monte Carlo also changes the other inputs' treatment (Type A inputs
  are drawn as t with n - 1 degrees of freedom, JCGM 101:2008 6.4.9);
* ``G_i * dz_pos``: field gradient at the point times the position difference
  between the NMR sample and the Hall element (shared: same fixture);
* ``B_ref,i``: the reference field at the NMR sample.  Given as the NMR
  ``Budget`` of the point, its model and inputs are merged in, with the inputs
  shared by all points (CODATA value, frequency standard, probe perturbation)
  appearing once, so the points' covariance comes out of one several-output
  evaluation (JCGM 100:2008 5.2, H.2).  Given as a ``BudgetResult``, its
  value and uncertainty are carried in and the correlation between points is
  rebuilt from the shared inputs' contributions,
  ``u(B_i, B_j) = sum_k c_ik c_jk u^2(x_k)`` (JCGM 100:2008 eq. (F.2)).

Why hand-written: the model of a Hall-probe comparison and the merging of the
reference budgets are the metrology of this calibration; the propagation
itself is the engine's.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from fieldbudget import _display
from fieldbudget.engine import (
    Budget,
    BudgetResult,
    InputQuantity,
    Measurand,
    Model,
    Normal,
    Rectangular,
    VectorResult,
    evaluate,
)
from fieldbudget.engine.results import correlation_from_covariance
from fieldbudget.errors import InputError

from .curve import CalibrationRangeWarning, CurveFit, fit_polynomial

__all__ = [
    "AUTO_THRESHOLD",
    "CURVE_FORMS",
    "PROPAGATIONS",
    "TILT_MODELS",
    "CalibrationCurve",
    "CalibrationPoint",
    "CalibrationResult",
    "CalibrationSet",
    "FieldPrediction",
    "PointResult",
]

PROPAGATIONS = ("auto", "gum", "monte carlo")
CURVE_FORMS = ("error", "reading")
TILT_MODELS = ("two-angle", "one-angle")
#: Share of the first-order u_c^2 above which a zero-sensitivity input sends "auto" to Monte Carlo.
AUTO_THRESHOLD = 0.01
_WHERE = "calibration"
_SHARED_OWN = ("R_zero", "a_temp", "dz_pos", "theta", "theta_x", "theta_y")


def _num(name: str, v: object, where: str, *, positive: bool = False, nonneg: bool = False) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float, np.floating)) or not math.isfinite(v):
        raise InputError(name, v, "a finite number", where)
    v = float(v)
    if positive and not v > 0:
        raise InputError(name, v, "a finite number > 0", where)
    if nonneg and v < 0:
        raise InputError(name, v, "a finite number >= 0", where)
    return v


def _readings(name: str, values: Sequence[float], where: str) -> tuple[float, ...]:
    try:
        vals = tuple(float(v) for v in values)
    except (TypeError, ValueError):
        raise InputError(name, values, "a list of numbers (T)", where) from None
    if not all(math.isfinite(v) for v in vals):
        raise InputError(name, list(vals), "finite numbers (T)", where)
    return vals


class _Rename(ast.NodeTransformer):
    def __init__(self, mapping: dict[str, str]) -> None:
        self.mapping = mapping

    def visit_Call(self, node: ast.Call) -> ast.AST:
        node.args = [self.visit(a) for a in node.args]  # the function name itself is not a symbol
        return node

    def visit_Name(self, node: ast.Name) -> ast.AST:
        return ast.copy_location(ast.Name(id=self.mapping.get(node.id, node.id), ctx=node.ctx), node)


def _rename_expression(text: str, mapping: dict[str, str]) -> str:
    tree = ast.parse(text, mode="eval")
    return ast.unparse(_Rename(mapping).visit(tree))


# ------------------------------------------------------------------------------------ definitions
@dataclass(frozen=True)
class CalibrationPoint:
    """One calibration point: the reference field and the instrument's readings there.

    Parameters
    ----------
    reference : Budget, BudgetResult or NMR result
        The reference field at the NMR sample (T): the NMR budget of this
        point (preferred: shared inputs are then correlated exactly), or its
        evaluated result (value and uncertainty carried in).  An NMR result
        object is accepted through its ``budget`` (or ``result``) attribute.
    readings_t : sequence of float
        Indications of the instrument, T.  One reading needs ``pooled_sd_t``.
    reversed_readings_t : sequence of float, optional
        Indications with the field reversed (negative numbers), T.
    u_reversal_t : float
        Standard uncertainty of the asymmetry of the field on reversal, T.
    temperature_difference_k, u_temperature_difference_k : float
        Probe temperature minus the instrument's reference temperature, K.
    gradient_t_per_m, u_gradient_t_per_m : float
        Field gradient along the line from the NMR sample to the Hall element, T/m.
    resolution_t : float, optional
        Digit step at this point, T (default: the set's).
    pooled_sd_t, pooled_dof : float, optional
        Standard deviation of one reading from earlier work (T) and its degrees
        of freedom, used instead of the scatter of the readings (JCGM 100:2008 4.2.4).
    name : str
        A label for the point (default ``P1``, ``P2``, ...).
    """

    reference: object
    readings_t: tuple[float, ...]
    reversed_readings_t: tuple[float, ...] = ()
    u_reversal_t: float = 0.0
    temperature_difference_k: float = 0.0
    u_temperature_difference_k: float = 0.0
    gradient_t_per_m: float = 0.0
    u_gradient_t_per_m: float = 0.0
    resolution_t: float | None = None
    pooled_sd_t: float | None = None
    pooled_dof: float | None = None
    name: str = ""

    def __post_init__(self) -> None:
        where = f"calibration point {self.name!r}" if self.name else "calibration point"
        object.__setattr__(self, "readings_t", _readings("readings_t", self.readings_t, where))
        object.__setattr__(self, "reversed_readings_t",
                           _readings("reversed_readings_t", self.reversed_readings_t, where))
        for name in ("u_reversal_t", "u_temperature_difference_k", "u_gradient_t_per_m"):
            object.__setattr__(self, name, _num(name, getattr(self, name), where, nonneg=True))
        for name in ("temperature_difference_k", "gradient_t_per_m"):
            object.__setattr__(self, name, _num(name, getattr(self, name), where))
        if self.resolution_t is not None:
            object.__setattr__(self, "resolution_t", _num("resolution_t", self.resolution_t, where, positive=True))
        if self.pooled_sd_t is not None:
            object.__setattr__(self, "pooled_sd_t", _num("pooled_sd_t", self.pooled_sd_t, where, positive=True))
        if not self.readings_t:
            raise InputError("readings_t", [], "at least one reading (T)", where)
        for name in ("readings_t", "reversed_readings_t"):
            vals = getattr(self, name)
            if len(vals) == 1 and self.pooled_sd_t is None:
                raise InputError(name, list(vals), "at least 2 readings, or one with pooled_sd_t given", where)
        if self.reversed_readings_t and np.mean(self.reversed_readings_t) * np.mean(self.readings_t) > 0:
            raise InputError("reversed_readings_t", list(self.reversed_readings_t),
                             "readings of the reversed field (opposite sign to readings_t)", where)
        if self.u_reversal_t and not self.reversed_readings_t:
            raise InputError("u_reversal_t", self.u_reversal_t, "0 unless reversed_readings_t are given", where)

    def __repr__(self) -> str:
        rev = f", {len(self.reversed_readings_t)} reversed" if self.reversed_readings_t else ""
        return (f"<CalibrationPoint {self.name or '?'}: {len(self.readings_t)} readings{rev}, "
                f"indication {self.indication:.8g} T, reference {type(self.reference).__name__}>")

    @property
    def indication(self) -> float:
        """The indication the curve is fitted against, T: mean reading, or half the reversal difference."""
        if self.reversed_readings_t:
            return 0.5 * (float(np.mean(self.readings_t)) - float(np.mean(self.reversed_readings_t)))
        return float(np.mean(self.readings_t))


def _reference_parts(ref: object, where: str) -> tuple[Budget | None, BudgetResult | None, tuple[str, ...]]:
    """(budget, result, warnings) behind a reference given as Budget, BudgetResult or an NMR result.

    An NMR result (``fieldbudget.nmr.NMRResult``) is merged through its ``budget``, so its inputs can be
    shared between points; its physics warnings are passed on.
    """
    if isinstance(ref, Budget):
        return ref, None, ()
    if isinstance(ref, BudgetResult):
        return None, ref, ()
    notes = tuple(getattr(ref, "nmr_warnings", ()) or ())
    b = getattr(ref, "budget", None)
    if isinstance(b, Budget):
        return b, None, notes
    for attr in ("result", "budget_result"):
        r = getattr(ref, attr, None)
        if isinstance(r, BudgetResult):
            return None, r, notes
    raise InputError("reference", type(ref).__name__, "a Budget, a BudgetResult or an NMR result of the reference "
                     "field", where)


@dataclass(frozen=True)
class CalibrationSet:
    """The calibration points of one instrument and the inputs they share.

    Parameters
    ----------
    points : sequence of CalibrationPoint
    resolution_t : float
        Digit step of the instrument's display, T (rectangular, half a digit).
    instrument : str
        What is calibrated (type, serial number), for the results.
    zero_offset_t, u_zero_offset_t : float
        Zero offset read in a zero-field chamber and its standard uncertainty,
        T; shared by all points; not used at points with reversed readings.
    temperature_coefficient_per_k, u_temperature_coefficient_per_k : float
        Relative temperature coefficient of the indication, 1/K (shared).
    tilt_u_rad : float
        Standard uncertainty of the probe's alignment angle, rad (theta = 0 +- u, normal),
        per axis for the two-angle model.
    tilt_model : ``"two-angle"`` (default) or ``"one-angle"``
        Two independent angles about two axes across the field,
        ``cos(theta_x) cos(theta_y)``, or one angle, ``cos(theta)``.
    tilt_per_point : bool
        True when the probe is re-seated at each point (independent angles);
        False for one mounting for all points (one shared angle).
    position_offset_m, u_position_offset_m : float
        Hall element position minus NMR sample position along the gradient, m (shared).
    shared : sequence of str
        Symbols of the reference budgets shared by all points, in addition to
        the inputs that name a CODATA value (``InputQuantity.reference``),
        e.g. the frequency standard and the probe perturbation.
    correction_factor : bool
        Also give K_i = B_reference / B_indicated at each point.
    """

    points: tuple[CalibrationPoint, ...]
    resolution_t: float
    instrument: str = ""
    zero_offset_t: float = 0.0
    u_zero_offset_t: float = 0.0
    temperature_coefficient_per_k: float = 0.0
    u_temperature_coefficient_per_k: float = 0.0
    tilt_u_rad: float = 0.0
    tilt_per_point: bool = True
    tilt_model: str = "two-angle"
    position_offset_m: float = 0.0
    u_position_offset_m: float = 0.0
    shared: tuple[str, ...] = ()
    correction_factor: bool = False
    _budget: Budget = field(default=None, init=False, repr=False, compare=False)  # type: ignore[assignment]
    _notes: tuple[str, ...] = field(default=(), init=False, repr=False, compare=False)
    _ref_values: tuple[float, ...] = field(default=(), init=False, repr=False, compare=False)
    _ranked_nonlinear: tuple[str, ...] = field(default=(), init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        where = _WHERE
        pts = tuple(self.points)
        if not pts:
            raise InputError("points", 0, "at least one calibration point", where)
        for p in pts:
            if not isinstance(p, CalibrationPoint):
                raise InputError("points", type(p).__name__, "CalibrationPoint objects", where)
        names = [p.name or f"P{i + 1}" for i, p in enumerate(pts)]
        if len(set(names)) != len(names):
            dup = next(n for n in names if names.count(n) > 1)
            raise InputError("points", dup, "points with distinct names", where)
        object.__setattr__(self, "points", tuple(
            p if p.name else _replace_name(p, n) for p, n in zip(pts, names)))
        object.__setattr__(self, "resolution_t", _num("resolution_t", self.resolution_t, where, positive=True))
        for n in ("zero_offset_t", "temperature_coefficient_per_k", "position_offset_m"):
            object.__setattr__(self, n, _num(n, getattr(self, n), where))
        for n in ("u_zero_offset_t", "u_temperature_coefficient_per_k", "tilt_u_rad", "u_position_offset_m"):
            object.__setattr__(self, n, _num(n, getattr(self, n), where, nonneg=True))
        if self.tilt_model not in TILT_MODELS:
            raise InputError("tilt_model", self.tilt_model, f"one of {', '.join(map(repr, TILT_MODELS))}", where)
        if self.tilt_u_rad > 0.5:
            raise InputError("tilt_u_rad", self.tilt_u_rad, "a small angle in radians (<= 0.5 rad)", where)
        object.__setattr__(self, "shared", tuple(self.shared))
        budget, notes = self._build()
        object.__setattr__(self, "_budget", budget)
        object.__setattr__(self, "_notes", tuple(notes))

    def __repr__(self) -> str:
        return (f"<CalibrationSet {self.instrument or 'instrument'}: {len(self.points)} points, "
                f"{len(self._budget.inputs)} inputs>")

    def to_dict(self) -> dict:
        """The merged budget (budget-file form) with the points' names and indications."""
        return {"instrument": self.instrument, "points": [p.name for p in self.points],
                "indications": list(self.indications), "reference_values": list(self.reference_values),
                "budget": self._budget.to_dict(), "warnings": list(self._notes)}

    def _repr_html_(self) -> str:
        rows = [(q.symbol, _display.fmt(q.estimate, 10), q.unit, q.distribution.describe(),
                 _display.fmt(q.standard_uncertainty, 3), q.description or q.source) for q in self._budget.inputs]
        body = (f"<p>{_display.escape(self._budget.model.text())}</p>"
                + _display.html_table(("symbol", "estimate", "unit", "distribution", "u", "what"), rows))
        return _display.html_block(f"Calibration budget of {self.instrument}".strip(), body)

    # -- the multi-output budget ------------------------------------------------------------
    @property
    def budget(self) -> Budget:
        """One engine budget with an output E_i (and K_i) per point and the shared inputs appearing once."""
        return self._budget

    @property
    def indications(self) -> tuple[float, ...]:
        return tuple(p.indication for p in self.points)

    def _build(self) -> tuple[Budget, list[str]]:
        where = _WHERE
        inputs: dict[str, InputQuantity] = {}
        correlations: list[tuple[str, str, float]] = []
        simultaneous: list[tuple[str, ...]] = []
        outputs: dict[str, str] = {}
        measurands: list[Measurand] = []
        notes: list[str] = []
        shared_seen: dict[str, InputQuantity] = {}
        carried: list[tuple[int, str, BudgetResult]] = []
        ref_symbols: set[str] = set()
        ref_values: list[float] = []

        def add(q: InputQuantity) -> None:
            if q.symbol in inputs:
                raise InputError("symbol", q.symbol, "used once in the merged calibration budget (rename the "
                                 "reference budget's input)", where)
            inputs[q.symbol] = q

        if (self.u_zero_offset_t or self.zero_offset_t) and any(not p.reversed_readings_t for p in self.points):
            add(InputQuantity("R_zero", self.zero_offset_t, Normal(u=self.u_zero_offset_t), unit="T",
                              source="zero-field chamber reading", description="zero offset of the instrument"))
        if self.u_temperature_coefficient_per_k or self.temperature_coefficient_per_k:
            add(InputQuantity("a_temp", self.temperature_coefficient_per_k,
                              Normal(u=self.u_temperature_coefficient_per_k), unit="1/K",
                              source="instrument specification", description="temperature coefficient of the "
                                                                              "indication"))
        if self.u_position_offset_m or self.position_offset_m:
            add(InputQuantity("dz_pos", self.position_offset_m, Normal(u=self.u_position_offset_m), unit="m",
                              source="fixture drawing", description="Hall element minus NMR sample position"))
        axes = ("_x", "_y") if self.tilt_model == "two-angle" else ("",)
        if self.tilt_u_rad and not self.tilt_per_point:
            for ax in axes:
                add(InputQuantity(f"theta{ax}", 0.0, Normal(u=self.tilt_u_rad), unit="rad",
                                  description=f"probe alignment angle{ax.replace('_', ' about ')} (one mounting)"))

        for i, p in enumerate(self.points, start=1):
            pw = f"calibration point {p.name!r}"
            rb, rr, ref_notes = _reference_parts(p.reference, pw)
            notes += [f"point {p.name}, reference: {w}" for w in ref_notes]
            if rb is not None and not rb.model.is_expression:
                rr = evaluate(rb)
                rb = None
                notes.append(f"point {p.name}: the reference budget's model is a Python function, so its result "
                             "is carried in instead of its inputs")
            if rb is not None:
                if len(rb.model.outputs) != 1:
                    raise InputError("reference", rb.model.outputs, "a budget with one output (the field)", pw)
                unit = rb.measurands[0].unit
                if unit not in ("", "T"):
                    raise InputError("reference unit", unit, "'T' (give the NMR field in tesla)", pw)
                share = set(self.shared) | {q.symbol for q in rb.inputs if q.reference}
                ref_symbols.update(q.symbol for q in rb.inputs)
                mapping: dict[str, str] = {}
                for q in rb.inputs:
                    if q.symbol in share:
                        if q.symbol in _SHARED_OWN:
                            raise InputError("shared", q.symbol, f"a name other than {_SHARED_OWN}", pw)
                        prev = shared_seen.get(q.symbol)
                        if prev is None:
                            shared_seen[q.symbol] = q
                            add(q)
                        elif (prev.estimate != q.estimate or prev.distribution != q.distribution):
                            raise InputError(f"shared input {q.symbol!r}", repr(q),
                                             f"the same at every point (point 1 has {prev!r})", pw)
                        mapping[q.symbol] = q.symbol
                    else:
                        new = f"{q.symbol}_r{i}"
                        mapping[q.symbol] = new
                        add(q.replace(symbol=new, where=""))
                for a, b, r in rb.correlations:
                    pair = (mapping[a], mapping[b], r)
                    if pair not in correlations:
                        correlations.append(pair)
                for g in rb.simultaneous:
                    gg = tuple(mapping[s] for s in g)
                    if gg not in simultaneous:
                        simultaneous.append(gg)
                bref = "(" + _rename_expression(rb.model.expressions[0].text, mapping) + ")"
                ref_values.append(rb.model.evaluate_float({q.symbol: q.estimate for q in rb.inputs})[0])
            else:
                assert rr is not None
                unit = rr.measurand.unit
                if unit not in ("", "T"):
                    raise InputError("reference unit", unit, "'T' (give the NMR field in tesla)", pw)
                add(InputQuantity(f"Bref_{i}", rr.estimate, Normal(u=rr.standard_uncertainty, dof=rr.effective_dof),
                                  unit="T", source=f"NMR reference result: {rr.measurand.symbol} = "
                                                   f"{rr.estimate:.10g} T, u = {rr.standard_uncertainty:.3g} T",
                                  description=f"reference field at point {p.name}"))
                carried.append((i, f"Bref_{i}", rr))
                ref_symbols.update(c.symbol for c in rr.contributions)
                bref = f"Bref_{i}"
                ref_values.append(rr.estimate)

            # the instrument's side
            res = p.resolution_t or self.resolution_t
            if p.reversed_readings_t:
                add(_reading_input(f"Rp_{i}", p.readings_t, p, "readings, field in normal direction"))
                add(_reading_input(f"Rn_{i}", p.reversed_readings_t, p, "readings, field reversed"))
                ind = f"(Rp_{i} - Rn_{i}) / 2"
            else:
                add(_reading_input(f"R_{i}", p.readings_t, p, "readings"))
                ind = f"R_{i}"
                if "R_zero" in inputs:
                    ind += " - R_zero"
            add(InputQuantity(f"dres_{i}", 0.0, Rectangular(half_width=res / 2), unit="T",
                              source=f"display resolution {res:g} T, half a digit",
                              description="resolution of the indication"))
            ind += f" + dres_{i}"
            if p.u_reversal_t:
                add(InputQuantity(f"drev_{i}", 0.0, Normal(u=p.u_reversal_t), unit="T",
                                  description="asymmetry of the field on reversal"))
                ind += f" + drev_{i}"
            if "a_temp" in inputs and (p.temperature_difference_k or p.u_temperature_difference_k):
                add(InputQuantity(f"dT_{i}", p.temperature_difference_k, Normal(u=p.u_temperature_difference_k),
                                  unit="K", description="probe temperature minus reference temperature"))
                ind = f"({ind}) / (1 + a_temp * dT_{i})"
            elif p.temperature_difference_k or p.u_temperature_difference_k:
                notes.append(f"point {p.name}: a temperature difference is given but no temperature "
                             "coefficient, so it has no effect")
            seen_field = bref
            if "dz_pos" in inputs and (p.gradient_t_per_m or p.u_gradient_t_per_m):
                add(InputQuantity(f"G_{i}", p.gradient_t_per_m, Normal(u=p.u_gradient_t_per_m), unit="T/m",
                                  description="field gradient between NMR sample and Hall element"))
                seen_field = f"({bref} + G_{i} * dz_pos)"
            elif p.gradient_t_per_m or p.u_gradient_t_per_m:
                notes.append(f"point {p.name}: a gradient is given but no position difference between the NMR "
                             "sample and the Hall element, so it has no effect")
            if self.tilt_u_rad:
                for ax in axes:
                    th = f"theta{ax}"
                    if self.tilt_per_point:
                        th = f"theta{ax}_{i}"
                        add(InputQuantity(th, 0.0, Normal(u=self.tilt_u_rad), unit="rad",
                                          description=f"probe alignment angle{ax.replace('_', ' about ')}"))
                    seen_field = f"{seen_field} * cos({th})"
            outputs[f"E_{i}"] = f"({ind}) - {seen_field}"
            measurands.append(Measurand(f"E_{i}", "T", f"error of the indication at point {p.name}"))
            if self.correction_factor:
                outputs[f"K_{i}"] = f"{seen_field} / ({ind})"
                measurands.append(Measurand(f"K_{i}", "", f"correction factor B_ref/B_ind at point {p.name}"))

        if carried and len(carried) < len(self.points):
            # a merged budget and a carried-in result cannot share inputs, so their correlation would be lost
            raise InputError("reference", "budgets and results mixed",
                             "the same kind at every point: all budgets (or NMR results), or all BudgetResults",
                             where)
        unknown = [s for s in self.shared if s not in ref_symbols]
        if unknown:
            raise InputError("shared", unknown[0], f"an input symbol of the reference budgets "
                             f"({', '.join(sorted(ref_symbols))})", where)
        # duplicate reference points (exact equality of the reference field estimates)
        for a in range(len(ref_values)):
            for b in range(a + 1, len(ref_values)):
                if ref_values[a] == ref_values[b]:
                    raise InputError("points", (self.points[a].name, self.points[b].name),
                                     f"distinct reference fields (both are {ref_values[a]:.10g} T)", where)
        correlations += _carried_correlations(carried, self.shared)
        budget = Budget(model=Model.from_expressions(outputs), inputs=tuple(inputs.values()),
                        measurands=tuple(measurands), correlations=tuple(correlations),
                        simultaneous=tuple(simultaneous), title=f"calibration of {self.instrument}".strip(),
                        metadata={"instrument": self.instrument, "points": [p.name for p in self.points]})
        object.__setattr__(self, "_ref_values", tuple(ref_values))
        return budget, notes

    @property
    def reference_values(self) -> tuple[float, ...]:
        """Estimates of the reference field at the points, T."""
        return self._ref_values

    def point_budget(self, index: int) -> Budget:
        """The budget of one point alone (0-based ``index``): outputs E_i (and K_i) with only its inputs."""
        if not 0 <= index < len(self.points):
            raise InputError("index", index, f"0 to {len(self.points) - 1}", _WHERE)
        i = index + 1
        keep = [o for o in self._budget.model.outputs if o in (f"E_{i}", f"K_{i}")]
        exprs = {o: e.text for o, e in zip(self._budget.model.outputs, self._budget.model.expressions)
                 if o in keep}
        model = Model.from_expressions(exprs)
        syms = set(model.symbols)
        inputs = tuple(q for q in self._budget.inputs if q.symbol in syms)
        corr = tuple(c for c in self._budget.correlations if c[0] in syms and c[1] in syms)
        sim = tuple(g for g in self._budget.simultaneous if all(s in syms for s in g))
        ms = tuple(m for m in self._budget.measurands if m.symbol in keep)
        if len(ms) == 1:
            return Budget(model=model, inputs=inputs, measurand=ms[0], correlations=corr, simultaneous=sim)
        return Budget(model=model, inputs=inputs, measurands=ms, correlations=corr, simultaneous=sim)

    def _second_order_share(self, gum_results: Sequence[BudgetResult], nonlinear: Sequence[str]) -> \
            tuple[float, str]:
        """Largest share of u_c^2 (first order) taken by the second-order effect of the ``nonlinear`` inputs.

        For each such input ``c2 = f(x + u) - 2 f(x) + f(x - u)``, which is
        ``d2f/dx2 u^2`` for a function smooth on that scale; its effect is the
        variance ``c2^2 / 2`` of JCGM 100:2008 5.1.2 (note) plus the squared
        bias ``(c2 / 2)^2`` (the second-order shift of the expectation).
        Returns ``(share, output)``; ``(0.0, "")`` without such inputs.
        """
        if not nonlinear:
            return 0.0, ""
        model = self._budget.model
        x0 = {q.symbol: q.estimate for q in self._budget.inputs}
        f0 = np.array(model.evaluate_float(x0), dtype=float)
        uc2 = np.array([r.standard_uncertainty ** 2 for r in gum_results])
        effect = np.zeros(len(f0))
        self_share: dict[str, float] = {}
        for sym in nonlinear:
            u = next(q.standard_uncertainty for q in self._budget.inputs if q.symbol == sym)
            fp = np.array(model.evaluate_float({**x0, sym: x0[sym] + u}), dtype=float)
            fm = np.array(model.evaluate_float({**x0, sym: x0[sym] - u}), dtype=float)
            c2 = fp - 2 * f0 + fm
            e = c2 * c2 / 2 + (c2 / 2) ** 2
            effect += e
            with np.errstate(divide="ignore", invalid="ignore"):
                sh = np.where(uc2 > 0, e / np.where(uc2 > 0, uc2, 1.0), np.where(e > 0, np.inf, 0.0))
            self_share[sym] = float(np.max(sh))
        best, where = 0.0, ""
        for j in range(len(gum_results)):
            share = (math.inf if effect[j] > 0 else 0.0) if uc2[j] == 0 else float(effect[j] / uc2[j])
            if share > best:
                best, where = share, model.outputs[j]
        ranked = sorted(self_share, key=lambda s: -self_share[s])
        object.__setattr__(self, "_ranked_nonlinear", tuple(ranked))
        return best, where

    def evaluate(self, propagation: str = "auto", *, trials: int = 200_000, seed: int | None = None) -> \
            CalibrationResult:
        """Evaluate every point and their covariance.

        ``propagation``: ``"gum"`` (first-order law of propagation),
        ``"monte carlo"`` (JCGM 101; estimates are the means, the covariance
        the sample covariance), or ``"auto"``: Monte Carlo when some input has
        zero first-order sensitivity at its estimate but an uncertainty (the
        probe tilt at theta = 0, a product of two zero estimates) *and* its
        second-order effect is more than :data:`AUTO_THRESHOLD` of ``u_c^2`` at
        some point (see the module docstring), else GUM.  The result's
        ``propagation_reason`` says why the route was taken.
        """
        if propagation not in PROPAGATIONS:
            raise InputError("propagation", propagation, f"one of {', '.join(map(repr, PROPAGATIONS))}", _WHERE)
        gum = evaluate(self._budget)
        gum_results = gum.results if isinstance(gum, VectorResult) else (gum,)
        # each point's own table: the several-output result lists every input under every output
        point_gum = [evaluate(self.point_budget(n)) for n in range(len(self.points))]
        own = [set(e.symbols) for e in self._budget.model.expressions]
        nonlinear = sorted({c.symbol for r, syms in zip(gum_results, own) for c in r.contributions
                            if c.symbol in syms and c.sensitivity == 0 and c.standard_uncertainty > 0})
        share, worst = self._second_order_share(gum_results, nonlinear)
        ranked = list(self._ranked_nonlinear)
        named = ", ".join(ranked[:4]) + (f" and {len(ranked) - 4} more" if len(ranked) > 4 else "")
        outs = self._budget.model.outputs
        if propagation == "monte carlo":
            use_mc, reason = True, "Monte Carlo was asked for (propagation='monte carlo')"
        elif propagation == "gum":
            use_mc, reason = False, "first-order GUM was asked for (propagation='gum')"
        elif not nonlinear:
            use_mc, reason = False, ("auto: every input has a non-zero first-order sensitivity, so the first-order "
                                     "law of propagation applies")
        elif share > AUTO_THRESHOLD:
            use_mc, reason = True, (f"auto: the zero-sensitivity inputs ({named}) matter: their "
                                    f"second-order effect is {100 * share:.3g} % of u_c^2 at {worst} "
                                    f"(> {100 * AUTO_THRESHOLD:g} %), so Monte Carlo (JCGM 101:2008)")
        else:
            use_mc, reason = False, (f"auto: the zero-sensitivity inputs ({named}) are negligible: "
                                     f"their second-order effect is at most {100 * share:.2g} % of u_c^2 "
                                     f"(<= {100 * AUTO_THRESHOLD:g} %), so first-order GUM")
        notes = list(self._notes)
        mc = None
        cov_gum = gum.covariance if isinstance(gum, VectorResult) else np.array([[gum.standard_uncertainty**2]])
        if use_mc:
            from fieldbudget.engine import montecarlo

            mc = montecarlo.run(self._budget, trials, seed)
            mcs = mc.results if hasattr(mc, "results") else (mc,)
            est = np.array([m.estimate for m in mcs])
            s = np.array([m.standard_uncertainty for m in mcs])
            r = np.array(mc.correlation) if hasattr(mc, "results") else np.ones((1, 1))
            cov = r * np.outer(s, s)
            method = f"Monte Carlo (JCGM 101:2008), M = {mcs[0].trials}, seed {mcs[0].seed}"
        else:
            mcs = ()
            est = np.array([g.estimate for g in gum_results])
            cov = cov_gum
            method = "GUM law of propagation, first order (JCGM 100:2008 5.1, 5.2)"
        if nonlinear and share > AUTO_THRESHOLD:
            txt = (f"inputs {named} have zero first-order sensitivity at their estimates: the "
                   "first-order law of propagation underestimates their effect (no bias and no uncertainty from "
                   "them)")
            notes.append(txt + ("; the results are from Monte Carlo" if use_mc else
                                "; use propagation='monte carlo' or 'auto'"))
        if self.tilt_u_rad and share > AUTO_THRESHOLD:
            u = self.tilt_u_rad
            if self.tilt_model == "two-angle":
                var = ((1 + math.exp(-2 * u * u)) / 2) ** 2 - math.exp(-2 * u * u)
                notes.append(f"probe tilt about two axes, each 0 +- {u:g} rad: the mean of cos(theta_x) cos(theta_y) "
                             f"is exp(-u^2) = {math.exp(-u * u):.10g}, below 1 by about u^2 = {u * u:.3g}, with a "
                             f"standard deviation of {math.sqrt(var):.3g} (about u^2), which first-order "
                             "propagation misses; its distribution is one-sided")
            else:
                notes.append(f"probe tilt theta = 0 +- {u:g} rad: the mean of cos(theta) is exp(-u^2/2) = "
                             f"{math.exp(-u * u / 2):.10g}, below 1 by about u^2/2 = {u * u / 2:.3g}, which "
                             "first-order propagation misses; its distribution is one-sided")
        e_idx = [j for j, o in enumerate(outs) if o.startswith("E_")]
        k_idx = [j for j, o in enumerate(outs) if o.startswith("K_")]
        pres = []
        for n, (p, j) in enumerate(zip(self.points, e_idx)):
            kj = k_idx[n] if k_idx else None
            pg = point_gum[n]
            pg_e = pg.results[0] if isinstance(pg, VectorResult) else pg
            u2 = _second_order_u(self.point_budget(n), f"E_{n + 1}") if (own[j] & set(nonlinear)) else None
            if mcs:
                # JCGM 101:2008 clause 8: is the first-order GUM result good enough at this point?
                from fieldbudget.engine.validation import validate

                pg_e = pg_e.with_monte_carlo(mcs[j], validate(pg_e, mcs[j]))
            pres.append(PointResult(
                name=p.name, indication=p.indication, reference=self.reference_values[n],
                error=float(est[j]), u_error=float(math.sqrt(cov[j, j])), gum=pg_e,
                monte_carlo=mcs[j] if mcs else None,
                correction_factor=None if kj is None else float(est[kj]),
                u_correction_factor=None if kj is None else float(math.sqrt(cov[kj, kj])),
                gum_correction_factor=pg.results[1] if isinstance(pg, VectorResult) else None,
                u_second_order=u2,
                warnings=pg_e.warnings + (() if u2 is None else (
                    (f"with the second-order terms of JCGM 100:2008 5.1.2, u(E) = {u2:.3g} T against "
                     f"{pg_e.standard_uncertainty:.3g} T at first order"),)),
            ))
        e_cov = cov[np.ix_(e_idx, e_idx)]
        return CalibrationResult(instrument=self.instrument, points=tuple(pres), propagation=method,
                                 covariance_=tuple(map(tuple, e_cov.tolist())), budget=self._budget, gum=gum,
                                 monte_carlo=mc, resolution_t=self.resolution_t, warnings=tuple(notes),
                                 propagation_reason=reason)


def _second_order_u(budget: Budget, output: str) -> float | None:
    """u(E) with the second-order terms (JCGM 100:2008 5.1.2), or None where they do not apply
    (correlated inputs)."""
    from fieldbudget.engine.second_order import combined_uncertainty

    if budget.has_correlations:
        return None
    try:
        return float(combined_uncertainty(budget, output=output) if len(budget.model.outputs) > 1
                     else combined_uncertainty(budget))
    except InputError:
        return None


def _replace_name(p: CalibrationPoint, name: str) -> CalibrationPoint:
    from dataclasses import replace

    return replace(p, name=name)


def _reading_input(symbol: str, readings: tuple[float, ...], p: CalibrationPoint, what: str) -> InputQuantity:
    if p.pooled_sd_t is not None:
        n = len(readings)
        dof = math.inf if p.pooled_dof is None else p.pooled_dof
        return InputQuantity(symbol, float(np.mean(readings)), Normal(u=p.pooled_sd_t / math.sqrt(n), dof=dof),
                             unit="T", source=f"mean of {n} {what}, pooled s = {p.pooled_sd_t:g} T",
                             description=f"indication ({what})")
    return InputQuantity.from_readings(symbol, readings, unit="T", source=f"mean of {len(readings)} {what}",
                                       description=f"indication ({what})")


def _carried_correlations(carried: list[tuple[int, str, BudgetResult]], shared: Sequence[str]) -> \
        list[tuple[str, str, float]]:
    """Correlations between carried-in reference results from their shared inputs (JCGM 100:2008 F.1.2.3)."""
    out = []
    for a in range(len(carried)):
        for b in range(a + 1, len(carried)):
            _, sa, ra = carried[a]
            _, sb, rb = carried[b]
            share = set(shared)
            for r in (ra, rb):
                share |= {q.symbol for q in r.budget.inputs if q.reference}
            cov = 0.0
            for ca in ra.contributions:
                if ca.symbol not in share:
                    continue
                try:
                    cb = rb.contribution(ca.symbol)
                except KeyError:
                    continue
                if ca.estimate != cb.estimate or ca.standard_uncertainty != cb.standard_uncertainty:
                    raise InputError(f"shared input {ca.symbol!r}", cb.estimate,
                                     f"the same at every point ({ca.estimate!r} +- {ca.standard_uncertainty!r})",
                                     _WHERE)
                cov += ca.sensitivity * cb.sensitivity * ca.standard_uncertainty ** 2
            den = ra.standard_uncertainty * rb.standard_uncertainty
            if cov and den > 0:
                out.append((sa, sb, max(-1.0, min(1.0, cov / den))))
    return out


# ------------------------------------------------------------------------------------ results
@dataclass(frozen=True)
class PointResult:
    """The error (and correction factor) of the instrument at one point, T."""

    name: str
    indication: float
    reference: float
    error: float
    u_error: float
    gum: BudgetResult = field(repr=False)
    monte_carlo: object | None = field(default=None, repr=False)
    correction_factor: float | None = None
    u_correction_factor: float | None = None
    gum_correction_factor: BudgetResult | None = field(default=None, repr=False)
    u_second_order: float | None = None
    warnings: tuple[str, ...] = ()

    # result-like view for conformity and CMC (estimate, standard_uncertainty, coverage_factor, ...)
    @property
    def estimate(self) -> float:
        return self.error

    @property
    def standard_uncertainty(self) -> float:
        return self.u_error

    @property
    def coverage_factor(self) -> float:
        return self.expanded_uncertainty / self.u_error if self.u_error > 0 else self.gum.coverage_factor

    @property
    def effective_dof(self) -> float:
        return self.gum.effective_dof

    @property
    def coverage_probability(self) -> float:
        return self.gum.coverage_probability

    @property
    def propagation(self) -> str:
        """``"monte carlo"`` where the point's E and U come from Monte Carlo, else ``"gum"``."""
        return "gum" if self.monte_carlo is None else "monte carlo"

    @property
    def coverage_interval(self) -> tuple[float, float]:
        """The coverage interval of E, T: Monte Carlo's probabilistically symmetric interval
        (JCGM 101:2008 7.7; off-centre when the alignment term dominates), or ``E +- U``."""
        if self.monte_carlo is not None:
            lo, hi = self.monte_carlo.interval  # type: ignore[attr-defined]
            return float(lo), float(hi)
        u = self.expanded_uncertainty
        return self.error - u, self.error + u

    @property
    def validation(self) -> object | None:
        """JCGM 101:2008 clause 8 comparison of the first-order GUM result with Monte Carlo, if run."""
        return self.gum.validation

    def rounded(self, rule: str = "gum", significant_digits: int = 2) -> object:
        """E and U(E) rounded for the certificate (engine rounding: JCGM 100:2008 7.2.6, or EA-4/02)."""
        from fieldbudget.engine import round_result

        return round_result(self.error, self.expanded_uncertainty, rule, significant_digits)

    @property
    def expanded_uncertainty(self) -> float:
        """k u(E) with the GUM coverage factor of the point (or the Monte Carlo interval's half-width)."""
        if self.monte_carlo is not None:
            lo, hi = self.monte_carlo.interval  # type: ignore[attr-defined]
            return 0.5 * (hi - lo)
        return self.gum.coverage_factor * self.u_error

    def __repr__(self) -> str:
        return (f"<PointResult {self.name}: indication {self.indication:.8g} T, reference {self.reference:.8g} T, "
                f"E = {self.error:.4g} T, u = {self.u_error:.2g} T>")

    def to_dict(self) -> dict:
        return {
            "name": self.name, "indication": self.indication, "reference": self.reference,
            "error": self.error, "u": self.u_error, "U": self.expanded_uncertainty,
            "propagation": self.propagation, "coverage_interval": list(self.coverage_interval),
            "correction_factor": self.correction_factor, "u_correction_factor": self.u_correction_factor,
            "u_second_order": self.u_second_order, "gum": self.gum.to_dict(),
            "mc": None if self.monte_carlo is None else self.monte_carlo.to_dict(),  # type: ignore[attr-defined]
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        rows = [("indication", f"{self.indication:.10g} T"), ("reference field", f"{self.reference:.10g} T"),
                ("error E", f"{_display.fmt(self.error, 6)} T"), ("u(E)", f"{_display.fmt(self.u_error, 3)} T"),
                ("U(E)", f"{_display.fmt(self.expanded_uncertainty, 3)} T"),
                ("from", "Monte Carlo" if self.monte_carlo is not None else "GUM, first order")]
        if self.u_second_order is not None:
            rows.append(("u(E) with second-order terms", f"{_display.fmt(self.u_second_order, 3)} T"))
        if self.correction_factor is not None:
            rows.append(("correction factor K",
                         f"{self.correction_factor:.10g} (u = {_display.fmt(self.u_correction_factor, 3)})"))
        rows += [("warning", w) for w in self.warnings]
        body = _display.html_table(("item", "value"), rows) + self.gum._repr_html_()
        if self.monte_carlo is not None:
            body += self.monte_carlo._repr_html_()  # type: ignore[attr-defined]
        return _display.html_block(f"Calibration point {self.name}", body)


@dataclass(frozen=True)
class CalibrationResult:
    """The evaluated calibration points with the covariance of their errors (T^2)."""

    instrument: str
    points: tuple[PointResult, ...]
    propagation: str
    covariance_: tuple[tuple[float, ...], ...]
    budget: Budget = field(repr=False)
    gum: object = field(repr=False)
    monte_carlo: object | None = field(default=None, repr=False)
    resolution_t: float = 0.0
    warnings: tuple[str, ...] = ()
    propagation_reason: str = ""

    @property
    def covariance(self) -> np.ndarray:
        return np.array(self.covariance_)

    @property
    def correlation(self) -> np.ndarray:
        return correlation_from_covariance(self.covariance)

    @property
    def indications(self) -> tuple[float, ...]:
        return tuple(p.indication for p in self.points)

    def certificate_rows(self, rule: str = "gum") -> list[dict]:
        """One row per point for a calibration certificate: reference, indication, error and U(E),
        rounded (U to two significant digits, the error to match; JCGM 100:2008 7.2.6 or EA-4/02)."""
        rows = []
        for p in self.points:
            r = p.rounded(rule)
            k = p.expanded_uncertainty / p.u_error if p.u_error > 0 else None
            rows.append({"point": p.name, "reference_T": p.reference, "indication_T": p.indication,
                         "error_T": r.value_text, "U_T": r.uncertainty_text,
                         "k": None if k is None else round(k, 2),
                         "correction_factor": p.correction_factor,
                         "gum_validated": None if p.validation is None else p.validation.passed})
        return rows

    @property
    def errors(self) -> tuple[float, ...]:
        return tuple(p.error for p in self.points)

    def fit(self, degree: int = 1, *, form: str = "error", x0: float | str = 0.0, correlated: bool = True,
            scale: str = "never") -> CalibrationCurve:
        """Fit a calibration curve over the points by generalised least squares with their covariance.

        ``form="error"``: the error E as a polynomial in the indication (the
        form of JCGM 100:2008 H.3, correction against the instrument's
        reading); ``form="reading"``: the indication as a polynomial in the
        reference field, ``R = B_ref + E``, inverted for a later reading.  In
        both the points' x is taken as exact and the whole uncertainty of each
        point (reference included) is in the covariance of its error.
        ``correlated=False`` keeps only the variances (weighted least
        squares), to show what the correlation between points changes.
        """
        if form not in CURVE_FORMS:
            raise InputError("form", form, f"one of {', '.join(map(repr, CURVE_FORMS))}", _WHERE)
        cov = self.covariance
        kw = {"covariance": cov} if correlated else {"u_y": np.sqrt(np.diag(cov))}
        if form == "error":
            x, y = self.indications, self.errors
        else:
            x = tuple(p.reference for p in self.points)
            y = tuple(p.reference + p.error for p in self.points)
        nus = tuple(p.effective_dof for p in self.points)
        fit = fit_polynomial(x, y, degree, x0=x0, scale=scale, x_unit="T", y_unit="T", y_dof=nus, **kw)
        return CalibrationCurve(fit=fit, instrument=self.instrument, resolution_t=self.resolution_t, form=form,
                                warnings=self.warnings + fit.warnings)

    def __repr__(self) -> str:
        return f"<CalibrationResult {self.instrument or 'instrument'}: {len(self.points)} points, {self.propagation}>"

    def to_dict(self) -> dict:
        return {
            "instrument": self.instrument,
            "propagation": self.propagation,
            "propagation_reason": self.propagation_reason,
            "model": self.budget.model.text(),
            "points": [p.to_dict() for p in self.points],
            "covariance": [list(r) for r in self.covariance_],
            "correlation": self.correlation.tolist(),
            "certificate_rows": self.certificate_rows(),
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        rows = [(p.name, _display.fmt(p.indication, 8), _display.fmt(p.reference, 10), _display.fmt(p.error, 4),
                 _display.fmt(p.u_error, 2), _display.fmt(p.expanded_uncertainty, 2)) for p in self.points]
        body = _display.html_table(("point", "indication (T)", "reference (T)", "error E (T)", "u(E) (T)",
                                    "U(E) (T)"), rows, caption=self.propagation)
        r = self.correlation
        body += _display.html_table(("", *[p.name for p in self.points]),
                                    [(p.name, *[f"{v:.3f}" for v in row]) for p, row in zip(self.points, r)],
                                    caption="correlation of the errors between points")
        body += "".join(f"<p>{_display.escape(w)}</p>" for w in self.warnings)
        return _display.html_block(f"Calibration of {self.instrument}".strip(), body)


@dataclass(frozen=True)
class FieldPrediction:
    """Corrected field for a later reading: ``B = R - E(R)``, T."""

    reading: float
    corrected: float
    standard_uncertainty: float
    u_curve: float
    u_reading: float
    inside_range: bool
    warnings: tuple[str, ...] = ()
    dof: float = math.inf

    def __repr__(self) -> str:
        flag = "" if self.inside_range else ", outside calibrated range"
        return (f"<FieldPrediction reading {self.reading:.8g} T -> B = {self.corrected:.8g} T, "
                f"u = {self.standard_uncertainty:.2g} T{flag}>")

    def to_dict(self) -> dict:
        return {"reading": self.reading, "corrected": self.corrected, "u": self.standard_uncertainty,
                "u_curve": self.u_curve, "u_reading": self.u_reading, "inside_range": self.inside_range,
                "dof": None if math.isinf(self.dof) else self.dof, "warnings": list(self.warnings)}

    def _repr_html_(self) -> str:
        rows = [("reading", f"{self.reading:.8g} T"), ("corrected field", f"{self.corrected:.8g} T"),
                ("standard uncertainty", f"{self.standard_uncertainty:.2g} T"),
                ("from the curve", f"{self.u_curve:.2g} T"), ("from the reading", f"{self.u_reading:.2g} T"),
                ("effective degrees of freedom", _display.fmt_dof(self.dof)),
                ("inside calibrated range", "yes" if self.inside_range else "no")]
        rows += [("warning", w) for w in self.warnings]
        return _display.html_block("Corrected field", _display.html_table(("item", "value"), rows))


@dataclass(frozen=True)
class CalibrationCurve:
    """Error of the indication as a polynomial in the indication, fitted over the points."""

    fit: CurveFit
    instrument: str = ""
    resolution_t: float = 0.0
    form: str = "error"
    warnings: tuple[str, ...] = ()

    def predict(self, reading_t: float, *, u_reading_t: float | None = None) -> FieldPrediction:
        """Corrected field for a later reading ``reading_t`` (T).

        ``form="error"``: ``B = R - E(R)``, ``u^2 = g^T V(a) g + u_R^2``.
        ``form="reading"``: ``B`` solves ``p(B) = R`` (Newton), and by the
        implicit-function rule ``u^2(B) = (g^T V(a) g + u_R^2) / p'(B)^2``
        (JCGM 100:2008 5.1.2 applied to the inverse).  ``u_reading_t``: the
        standard uncertainty of the new reading itself (T), default the
        resolution alone, ``resolution / (2 sqrt 3)``.  Outside the calibrated
        range a :class:`CalibrationRangeWarning` is raised and the result says so.
        The result's ``dof`` are the effective degrees of freedom of its u
        (Welch-Satterthwaite over the curve and the reading, see
        :meth:`CurveFit._prediction_dof`).
        """
        if not (isinstance(reading_t, (int, float, np.floating)) and math.isfinite(reading_t)):
            raise InputError("reading_t", reading_t, "a finite number (T)", _WHERE)
        u_r = self.resolution_t / (2 * math.sqrt(3)) if u_reading_t is None else u_reading_t
        if not (math.isfinite(u_r) and u_r >= 0):
            raise InputError("u_reading_t", u_reading_t, "a finite number >= 0 (T)", _WHERE)
        r = float(reading_t)
        if self.form == "error":
            p = self.fit.predict(r, u_extra=u_r, _stacklevel=3)
            return FieldPrediction(reading=r, corrected=r - p.value, standard_uncertainty=p.standard_uncertainty,
                                   u_curve=p.uncertainty_from_curve, u_reading=float(u_r),
                                   inside_range=p.inside_range, warnings=p.warnings,
                                   dof=math.inf if p.dof is None else p.dof)
        a = self.fit.coefficient_array
        x0 = self.fit.x0
        da = np.array([j * a[j] for j in range(1, len(a))])

        def slope(b: float) -> float:
            return float(sum(c * (b - x0) ** j for j, c in enumerate(da))) if len(da) else 0.0

        b = r
        for _ in range(100):
            d = slope(b)
            if d == 0:
                raise InputError("reading_t", r, "a reading where the fitted curve is not flat", _WHERE)
            step = (self.fit.value_at(b) - r) / d
            b -= step
            if abs(step) <= 1e-15 * max(1.0, abs(b)):
                break
        else:
            raise InputError("reading_t", r, "a reading the fitted curve reaches (Newton did not converge)",
                             _WHERE)
        d = abs(slope(b))
        p = self.fit.predict(b, _stacklevel=3)
        nu_c = math.inf if p.dof is None else p.dof
        u_tot = math.hypot(p.standard_uncertainty, u_r)
        nu = (math.inf if math.isinf(nu_c) or p.standard_uncertainty == 0
              else nu_c * (u_tot / p.standard_uncertainty) ** 4)  # Welch-Satterthwaite, JCGM 100:2008 G.4.1
        return FieldPrediction(reading=r, corrected=b, standard_uncertainty=u_tot / d,
                               u_curve=p.standard_uncertainty / d, u_reading=float(u_r) / d,
                               inside_range=p.inside_range, warnings=p.warnings, dof=nu)

    def __repr__(self) -> str:
        return f"<CalibrationCurve {self.instrument or 'instrument'} ({self.form} form): {self.fit!r}>"

    def to_dict(self) -> dict:
        return {"instrument": self.instrument, "form": self.form, "fit": self.fit.to_dict(),
                "resolution_t": self.resolution_t, "warnings": list(self.warnings)}

    def _repr_html_(self) -> str:
        return self.fit._repr_html_() + "".join(f"<p>{_display.escape(w)}</p>" for w in self.warnings)


__all__ += ["CalibrationRangeWarning"]
