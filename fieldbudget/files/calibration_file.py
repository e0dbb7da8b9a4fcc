"""Calibration files (``"format": "fieldbudget-calibration/1"``): one calibration of a field instrument.

A calibration file says who calibrated what for whom and when, how (the
procedure), under which conditions, the points (reference field and the
instrument's readings at each), the settings shared by the points
(resolution, probe alignment, position offset, temperature coefficient, zero
offset or field reversal), the calibration curve to fit, and the tolerance and
decision rule for a conformity statement.  The keys are documented in
docs/calibration.md; unknown keys are errors.

:meth:`CalibrationFile.evaluate` builds the calibration layer's
:class:`~fieldbudget.calibration.CalibrationSet`, evaluates it, fits the curve
and decides conformity (JCGM 106:2012) per point.
:meth:`CalibrationFile.resolved` gives the same content with every file it
names read in (NMR measurement files as their budgets, CSV readings as
lists), so a record can re-evaluate it without the files.

Written by hand: the file's checks and its mapping to the calibration layer
are ours; the propagation is the engine's, the statistics scipy's.
"""

from __future__ import annotations

import copy
import csv
import hashlib
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import BudgetFileError, FieldbudgetError

__all__ = ["FORMAT", "CalibrationFile", "CalibrationOutcome", "load_calibration"]

FORMAT = "fieldbudget-calibration/1"

#: NMR-budget inputs common to every point when the references are NMR measurement files of one
#: probe, counter and sample: merged once, so the points come out correlated.
SHARED_NMR_INPUTS = ("y_tb", "y_age", "d_probe", "alpha_T", "t_ref", "N_d", "chi", "c_chi", "t_chi")

_TOP = {"format", "certificate_id", "title", "lab", "customer", "item", "dates", "environment", "method",
        "traceability", "remarks", "authorised_by", "points", "resolution_T", "tilt", "position_offset",
        "temperature_coefficient", "zero_offset", "field_reversal", "shared", "curve", "tolerance", "decision_rule",
        "propagation",
        "monte_carlo_trials", "monte_carlo_seed"}
_SECTIONS = {
    "lab": {"name", "address", "place_of_calibration", "accreditation"},
    "customer": {"name", "address"},
    "item": {"type", "manufacturer", "model", "serial", "probe", "probe_serial"},
    "dates": {"received", "calibrated", "issued"},
    "environment": {"temperature_C", "u_temperature_C", "humidity_percent"},
    "method": {"procedure", "version", "description"},
    "tilt": {"u_rad", "model", "per_point"},
    "position_offset": {"value_m", "u_m"},
    "temperature_coefficient": {"per_K", "u_per_K", "reference_temperature_C"},
    "zero_offset": {"value_T", "u_T"},
    "curve": {"form", "degree"},
    "tolerance": {"relative", "absolute_T", "source"},
    "decision_rule": {"rule", "guard_band_T"},
}
_POINT = {"id", "reference", "readings_T", "readings_csv", "reversed_readings_T", "u_reversal_T", "temperature_C",
          "u_temperature_C", "gradient_T_per_m", "u_gradient_T_per_m", "resolution_T", "pooled_sd_T", "pooled_dof",
          "field_map"}
_MAP = {"path", "nmr_position_m", "hall_position_m", "order", "nucleus"}
_REF_VALUE = {"value_T", "u_T", "dof", "source"}
_REF_FILE = {"measurement"}
_REF_BUDGET = {"budget", "from", "input_order"}
_CSV = {"path", "column"}


class _At:
    """A JSON object at a pointer of a file, for checks with messages that name the place."""

    def __init__(self, data: Any, pointer: str, where: str) -> None:
        self.data, self.pointer, self.where = data, pointer, where

    def at(self, key: Any) -> str:
        return f"{self.pointer}/{key}"

    def fail(self, key: Any, reason: str) -> BudgetFileError:
        return BudgetFileError(self.where, self.at(key) if key != "" else self.pointer or "#", reason)

    def obj(self, allowed: set[str], what: str) -> _At:
        if not isinstance(self.data, Mapping):
            raise BudgetFileError(self.where, self.pointer or "#",
                                  f"must be an object ({what}) (got {type(self.data).__name__})")
        for k in self.data:
            if k not in allowed:
                raise self.fail(k, f"unknown key; allowed here: {', '.join(sorted(allowed))}")
        return self

    def has(self, key: str) -> bool:
        return key in self.data and self.data[key] is not None

    def sub(self, key: str, allowed: set[str], what: str) -> _At | None:
        if not self.has(key):
            return None
        return _At(self.data[key], self.at(key), self.where).obj(allowed, what)

    def num(self, key: str, default: float | None = None, *, positive: bool = False, nonneg: bool = False,
            what: str = "a number") -> float:
        v = self.data.get(key) if isinstance(self.data, Mapping) else None
        if v is None:
            if default is None:
                raise self.fail(key, f"missing: {what}")
            return float(default)
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise self.fail(key, f"must be a finite number, {what} (got {v!r})")
        v = float(v)
        if positive and not v > 0:
            raise self.fail(key, f"must be > 0, {what} (got {v!r})")
        if nonneg and v < 0:
            raise self.fail(key, f"must be >= 0, {what} (got {v!r})")
        return v

    def text(self, key: str, default: str = "") -> str:
        v = self.data.get(key, default) if isinstance(self.data, Mapping) else default
        if v is None:
            return default
        if not isinstance(v, str):
            raise self.fail(key, f"must be text (got {v!r})")
        return v

    def numbers(self, key: str, what: str) -> list[float]:
        v = self.data.get(key)
        if not isinstance(v, list) or not v:
            raise self.fail(key, f"must be a non-empty list of numbers, {what} (got {v!r})")
        for i, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
                raise BudgetFileError(self.where, f"{self.at(key)}/{i}", f"must be a finite number (got {x!r})")
        return [float(x) for x in v]


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@dataclass(frozen=True)
class CalibrationOutcome:
    """An evaluated calibration file: the points, the curve, the conformity decisions and the warnings."""

    file: CalibrationFile = field(repr=False)
    calibration: Any = field(repr=False)
    curve: Any = field(repr=False)
    conformity: tuple = field(repr=False, default=())
    warnings: tuple[str, ...] = ()

    def __repr__(self) -> str:
        n = len(self.calibration.points)
        curve = f", curve degree {self.curve.fit.degree}" if self.curve is not None else ""
        ok = sum(1 for c in self.conformity if c.accepted)
        conf = f", {ok}/{len(self.conformity)} conform" if self.conformity else ""
        return f"<CalibrationOutcome {self.file.certificate_id or 'calibration'}: {n} points{curve}{conf}>"

    def to_dict(self) -> dict:
        """The summary ``fieldbudget calibrate --json`` prints (documented in docs/calibration.md)."""
        pts = []
        for p in self.calibration.points:
            val = p.validation
            pts.append({
                "id": p.name, "reference_T": p.reference, "indication_T": p.indication, "error_T": p.error,
                "u_T": p.u_error, "dof": None if math.isinf(p.effective_dof) else p.effective_dof,
                "U_T": p.expanded_uncertainty, "k": p.coverage_factor,
                "coverage_probability": p.coverage_probability, "propagation": p.propagation,
                "validated": None if val is None else bool(val.passed),
                "coverage_interval_T": list(p.coverage_interval),
            })
        curve = None
        if self.curve is not None:
            f = self.curve.fit
            curve = {"form": self.curve.form, "degree": f.degree, "x0": f.x0, "coefficients": list(f.coefficients),
                     "covariance": [list(r) for r in f.covariance], "chi2": f.chi_square,
                     "birge_ratio": f.birge_ratio}
        conf = [{"point": p.name, "rule": c.decision_rule, "decision": c.decision,
                 "p_c": c.probability_of_conformity, "guard_band_T": c.guard_band,
                 "tolerance_T": [c.tolerance.lower, c.tolerance.upper], "distribution": c.distribution}
                for p, c in zip(self.calibration.points, self.conformity)]
        return {"points": pts, "correlation": self.calibration.correlation.tolist(), "curve": curve,
                "conformity": conf,
                "propagation_reason": self.calibration.propagation_reason,
                "warnings": [str(w) for w in self.warnings]}

    def _repr_html_(self) -> str:
        from .._display import html_block

        parts = [self.calibration._repr_html_()]
        if self.curve is not None:
            parts.append(self.curve._repr_html_())
        parts += [c._repr_html_() for c in self.conformity]
        return html_block(f"Calibration {self.file.certificate_id}".strip(), "".join(parts))

    def report(self) -> str:
        """Plain-text summary for the command line."""
        lines = [f"calibration {self.file.certificate_id or ''}".rstrip() + f": {self.file.item_text}".rstrip(": "),
                 f"propagation: {self.calibration.propagation} ({self.calibration.propagation_reason})",
                 f"{'point':8} {'reference (T)':>15} {'indication (T)':>15} {'error (T)':>12} {'U (T)':>9} "
                 f"{'k':>5}  route"]
        for p in self.calibration.points:
            lo, hi = p.coverage_interval
            iv = f", interval [{lo:.3e}, {hi:.3e}]" if p.propagation == "monte carlo" else ""
            lines.append(f"{p.name:8} {p.reference:15.9f} {p.indication:15.7f} {p.error:12.3e} "
                         f"{p.expanded_uncertainty:9.2e} {p.coverage_factor:5.2f}  {p.propagation}{iv}")
        if self.curve is not None:
            f = self.curve.fit
            co = ", ".join(f"a{j} = {c:.6g}" for j, c in enumerate(f.coefficients))
            fit = "" if f.birge_ratio is None else f", Birge ratio {f.birge_ratio:.3g}"
            lines.append(f"curve ({self.curve.form} form, degree {f.degree}, about {f.x0:g} T): {co}{fit}")
        for p, c in zip(self.calibration.points, self.conformity):
            lines.append(f"conformity {p.name}: {c.decision} ({c.decision_rule}, p_c = {c.probability_of_conformity:.4f})")
        lines += [f"warning: {w}" for w in self.warnings]
        return "\n".join(lines)


@dataclass(frozen=True)
class CalibrationFile:
    """A checked calibration file (see the module docstring and docs/calibration.md)."""

    content: Mapping = field(repr=False)
    where: str = "calibration"
    base_dir: str = "."

    def __repr__(self) -> str:
        return (f"<CalibrationFile {self.certificate_id or self.where}: {len(self.content.get('points', []))} "
                f"points, {self.item_text or 'item not identified'}>")

    def to_dict(self) -> dict:
        """The file's content (plain JSON types)."""
        return copy.deepcopy(dict(self.content))

    def _repr_html_(self) -> str:
        from .._display import html_table

        rows = [("certificate", self.certificate_id), ("item", self.item_text),
                ("points", str(len(self.content.get("points", []))))]
        return html_table(("", ""), rows, caption="calibration file")

    # -- reading ------------------------------------------------------------------------------
    @classmethod
    def from_dict(cls, d: Any, where: str = "calibration", base_dir: str | Path = ".") -> CalibrationFile:
        top = _At(d, "#", where).obj(_TOP, "a calibration file")
        fmt = top.text("format", FORMAT)
        if fmt != FORMAT:
            raise top.fail("format", f"must be {FORMAT!r} (got {fmt!r})")
        for key in ("certificate_id", "title", "traceability", "remarks"):
            top.text(key)
        auth = d.get("authorised_by")
        if auth is not None:
            if not isinstance(auth, list):
                raise top.fail("authorised_by", f"must be a list of {{\"name\", \"function\"}} (got {auth!r})")
            for i, a in enumerate(auth):
                who = _At(a, f"#/authorised_by/{i}", where).obj({"name", "function"}, "a person")
                if not who.text("name"):
                    raise who.fail("name", "missing: the name of the person who authorises the certificate")
                who.text("function")
        for key, allowed in _SECTIONS.items():
            sec = top.sub(key, allowed, key)
            if sec is None:
                continue
            for k, v in sec.data.items():
                if k in ("u_rad", "value_m", "u_m", "per_K", "u_per_K", "reference_temperature_C", "value_T", "u_T",
                         "temperature_C", "u_temperature_C", "humidity_percent", "relative", "absolute_T",
                         "degree", "guard_band_T"):
                    sec.num(k, 0.0)
                elif k == "per_point":
                    if not isinstance(v, bool):
                        raise sec.fail(k, f"must be true or false (got {v!r})")
                else:
                    sec.text(k)
        if top.has("decision_rule") and not top.has("tolerance"):
            raise top.fail("tolerance", "missing: a decision_rule needs the tolerance it decides against")
        self = cls(copy.deepcopy(dict(d)), where=where, base_dir=str(base_dir))
        self._check_points()
        self.calibration_set()  # every other check (values, names, references) happens here, once
        return self

    @classmethod
    def from_file(cls, path: str | Path) -> CalibrationFile:
        from .budget_file import read_json

        p = Path(path)
        return cls.from_dict(read_json(p), where=str(p), base_dir=p.parent)

    def _check_points(self) -> None:
        top = _At(self.content, "#", self.where)
        pts = self.content.get("points")
        if not isinstance(pts, list) or not pts:
            raise top.fail("points", f"must be a non-empty list of points (got {pts!r})")
        seen = set()
        for i, raw in enumerate(pts):
            p = _At(raw, f"#/points/{i}", self.where).obj(_POINT, "a calibration point")
            pid = p.text("id")
            if not pid:
                raise p.fail("id", "missing: the point's id (text)")
            if pid in seen:
                raise p.fail("id", f"must be unique (point {pid!r} appears twice)")
            seen.add(pid)
            given = [k for k in ("readings_T", "readings_csv") if p.has(k)]
            if len(given) != 1:
                raise p.fail("readings_T", "give exactly one of readings_T (a list) or readings_csv "
                             f"({{\"path\", \"column\"}}) (got {', '.join(given) or 'neither'})")
            if not p.has("reference"):
                raise p.fail("reference", "missing: {\"measurement\": FILE} or {\"value_T\", \"u_T\", \"dof\"}")

    # -- convenience ------------------------------------------------------------------------
    def _section(self, key: str) -> Mapping:
        v = self.content.get(key)
        return v if isinstance(v, Mapping) else {}

    @property
    def certificate_id(self) -> str:
        return str(self.content.get("certificate_id") or "")

    @property
    def item_text(self) -> str:
        it = self._section("item")
        parts = [it.get("type", ""), it.get("manufacturer", ""), it.get("model", "")]
        text = " ".join(str(x) for x in parts if x)
        if it.get("serial"):
            text += f" s/n {it['serial']}"
        if it.get("probe"):
            text += f", probe {it['probe']}"
        return text.strip()

    @property
    def decision_rule(self) -> Mapping | None:
        v = self.content.get("decision_rule")
        return v if isinstance(v, Mapping) else None

    # -- the parts of a point -----------------------------------------------------------------
    def _path(self, rel: str) -> Path:
        p = Path(rel)
        return p if p.is_absolute() else Path(self.base_dir) / p

    def _gradient(self, p: _At) -> tuple[float, float]:
        """The point's gradient and its u (T/m): typed, or from its ``field_map``."""
        if not p.has("field_map"):
            return p.num("gradient_T_per_m", 0.0), p.num("u_gradient_T_per_m", 0.0, nonneg=True)
        return self._map_gradient(p)[:2]

    def _map_gradient(self, p: _At) -> tuple[float, float, float, Path]:
        """(G, u(G), d, map path) from the point's field map (:func:`fieldbudget.nmr.fieldmap.calibration_offset`):
        G = (B(Hall) - B(NMR))/d over d = |hall - nmr|, with u(G) from the fit's covariance."""
        from ..nmr import fieldmap

        for k in ("gradient_T_per_m", "u_gradient_T_per_m"):
            if p.has(k):
                raise p.fail(k, "give either field_map or the typed gradient, not both")
        spec = _At(p.data["field_map"], p.at("field_map"), self.where).obj(_MAP, "a field map")
        rel = spec.text("path")
        if not rel:
            raise spec.fail("path", "missing: the path of the map's CSV file (x_m,y_m,z_m and f_Hz or B_T)")
        pos = {}
        for k in ("nmr_position_m", "hall_position_m"):
            if not spec.has(k):
                raise spec.fail(k, "missing: [x, y, z] in m, in the map's coordinates")
            pos[k] = spec.numbers(k, "three coordinates x, y, z in m")
            if len(pos[k]) != 3:
                raise spec.fail(k, f"must be three coordinates x, y, z in m (got {len(pos[k])})")
        order = spec.num("order", 4.0, positive=True)
        if order != int(order):
            raise spec.fail("order", f"must be a whole number (got {order!r})")
        path = self._path(rel)
        try:
            fit = fieldmap.fit_map(fieldmap.read_map(path, nucleus=spec.text("nucleus") or None), int(order))
            got = fieldmap.calibration_offset(fit, pos["nmr_position_m"], pos["hall_position_m"])
        except BudgetFileError as err:
            raise spec.fail("path", f"{rel!r}, {err.pointer}: {err.reason}" if err.pointer else
                            f"{rel!r}: {err.reason}") from None
        except FieldbudgetError as err:
            raise spec.fail("path", f"{rel!r}: {err}") from None
        d = got["position_offset_m"]
        pos_offset = (self.content.get("position_offset") or {}).get("value_m")
        if not isinstance(pos_offset, (int, float)) or isinstance(pos_offset, bool) or \
                abs(abs(float(pos_offset)) - d) > 1e-3 * d:
            raise spec.fail("hall_position_m", f"is {d:.6g} m from nmr_position_m; position_offset.value_m must be "
                            f"that distance (got {pos_offset!r}), so that G d is the field difference the map gives")
        sign = 1.0 if float(pos_offset) >= 0 else -1.0
        return sign * got["gradient_t_per_m"], got["u_gradient_t_per_m"], d, path

    def _readings(self, p: _At) -> tuple[list[float], str | None]:
        if p.has("readings_T"):
            return p.numbers("readings_T", "the instrument's indications in T"), None
        spec = _At(p.data["readings_csv"], p.at("readings_csv"), self.where).obj(_CSV, "a CSV column")
        rel, col = spec.text("path"), spec.text("column")
        if not rel or not col:
            raise spec.fail("path" if not rel else "column", "missing: readings_csv needs path and column")
        path = self._path(rel)
        try:
            with open(path, newline="", encoding="utf-8") as fh:
                rows = list(csv.DictReader(fh))
        except OSError as err:
            raise spec.fail("path", f"cannot read {str(path)!r} ({err.strerror or err})") from None
        if not rows or col not in rows[0]:
            cols = ", ".join(k for k in (rows[0] if rows else {}) if k)
            raise spec.fail("column", f"must name a column of {path.name!r} (columns: {cols}) (got {col!r})")
        out = []
        for line, row in enumerate(rows, start=2):
            cell = (row.get(col) or "").strip()
            if not cell:
                continue
            try:
                out.append(float(cell))
            except ValueError:
                raise spec.fail("column", f"line {line} of {path.name!r} is not a number ({cell!r})") from None
        if not out:
            raise spec.fail("column", f"column {col!r} of {path.name!r} holds no readings")
        return out, str(path)

    def _reference(self, p: _At, i: int) -> tuple[Any, str | None]:
        """(Budget of the reference field, path of the file it came from or None)."""
        from ..engine import Budget, InputQuantity, Measurand, Normal

        raw = p.data["reference"]
        ptr = p.at("reference")
        if isinstance(raw, Mapping) and isinstance(raw.get("measurement"), Mapping):
            # an NMR measurement given inline (as a procedure builds it), paths relative to this file
            _At(raw, ptr, self.where).obj(_REF_FILE, "a reference")
            from ..nmr.measurement import NMRMeasurement

            m = NMRMeasurement.from_dict(raw["measurement"], where=f"{self.where}, at {ptr}/measurement",
                                         base_dir=self.base_dir)
            return m.to_budget(), None
        if isinstance(raw, Mapping) and "measurement" in raw:
            r = _At(raw, ptr, self.where).obj(_REF_FILE, "a reference")
            rel = r.text("measurement")
            path = self._path(rel)
            from ..nmr.measurement import NMRMeasurement

            if not path.exists():
                raise r.fail("measurement", f"no such NMR measurement file {str(path)!r}")
            return NMRMeasurement.from_file(path).to_budget(), str(path)
        if isinstance(raw, Mapping) and "budget" in raw:
            r = _At(raw, ptr, self.where).obj(_REF_BUDGET, "a reference")
            content = raw["budget"]
            order = raw.get("input_order")
            if isinstance(content, Mapping) and isinstance(content.get("inputs"), Mapping) and isinstance(order, list):
                # JSON objects are unordered; the order of the inputs fixes the order of the Monte Carlo draws
                ins = content["inputs"]
                keys = [k for k in order if k in ins] + [k for k in ins if k not in order]
                content = {**content, "inputs": {k: ins[k] for k in keys}}
            try:
                return Budget.from_dict(content, where=f"{self.where}, at {ptr}/budget"), None
            except BudgetFileError:
                raise
            except FieldbudgetError as err:
                raise r.fail("budget", str(err)) from None
        r = _At(raw, ptr, self.where).obj(_REF_VALUE, "a reference stated by value")
        value = r.num("value_T", what="the reference field in T")
        u = r.num("u_T", positive=True, what="its standard uncertainty in T")
        dof = raw.get("dof")
        if dof is None:
            nu = math.inf
        else:
            nu = r.num("dof", positive=True, what="its degrees of freedom (or leave out for infinite)")
        src = r.text("source") or "reference field stated by value in the calibration file"
        q = InputQuantity("B_ref", value, Normal(u=u, dof=nu), unit="T", source=src,
                          description="reference field at the point")
        return Budget(model="B_ref", inputs=(q,), measurand=Measurand("B", "T")), None

    # -- the calibration set ------------------------------------------------------------------
    def calibration_set(self) -> Any:
        """The :class:`~fieldbudget.calibration.CalibrationSet` this file describes."""
        from ..calibration import CalibrationPoint, CalibrationSet

        c, where = self.content, self.where
        top = _At(c, "#", where)
        env = self._section("environment")
        tc = self._section("temperature_coefficient")
        t_env = env.get("temperature_C")
        u_env = float(env.get("u_temperature_C", 0.0) or 0.0)
        t_ref = tc.get("reference_temperature_C", t_env if t_env is not None else 23.0)
        reversal = c.get("field_reversal", False)
        if not isinstance(reversal, bool):
            raise top.fail("field_reversal", f"must be true or false (got {reversal!r})")
        points = []
        for i, raw in enumerate(c["points"]):
            p = _At(raw, f"#/points/{i}", where)
            readings, _ = self._readings(p)
            reversed_ = p.numbers("reversed_readings_T", "readings in the reversed field, T") \
                if p.has("reversed_readings_T") else []
            if reversal and not reversed_:
                raise p.fail("reversed_readings_T", "missing: field_reversal is true, so every point needs its "
                             "readings in the reversed field")
            if reversed_ and not reversal:
                raise p.fail("reversed_readings_T", "given, but field_reversal is not true")
            ref, _ = self._reference(p, i)
            t = p.num("temperature_C", t_env if t_env is not None else t_ref)
            u_t = p.num("u_temperature_C", u_env, nonneg=True)
            if not tc:  # without a temperature coefficient the temperatures have no effect on the error
                t, u_t = float(t_ref), 0.0
            grad = self._gradient(p)
            try:
                points.append(CalibrationPoint(
                    reference=ref, readings_t=tuple(readings), reversed_readings_t=tuple(reversed_),
                    u_reversal_t=p.num("u_reversal_T", 0.0, nonneg=True),
                    temperature_difference_k=t - float(t_ref),
                    u_temperature_difference_k=u_t,
                    gradient_t_per_m=grad[0], u_gradient_t_per_m=grad[1],
                    resolution_t=p.num("resolution_T", positive=True) if p.has("resolution_T") else None,
                    pooled_sd_t=p.num("pooled_sd_T", positive=True) if p.has("pooled_sd_T") else None,
                    pooled_dof=p.num("pooled_dof", positive=True) if p.has("pooled_dof") else None,
                    name=p.text("id")))
            except BudgetFileError:
                raise
            except FieldbudgetError as err:
                raise BudgetFileError(where, p.pointer, str(err)) from None
        tilt = self._section("tilt")
        pos = self._section("position_offset")
        zero = self._section("zero_offset")
        if reversal and zero:
            raise top.fail("zero_offset", "not used with field_reversal (the reversal cancels the zero offset); "
                           "give one or the other")
        shared = c.get("shared")
        if shared is None:
            syms = {q.symbol for p in points for q in p.reference.inputs}
            shared = [s for s in SHARED_NMR_INPUTS if s in syms]
        elif not (isinstance(shared, list) and all(isinstance(s, str) for s in shared)):
            raise top.fail("shared", f"must be a list of input symbols of the reference budgets (got {shared!r})")
        model = tilt.get("model", "two-angle")
        try:
            return CalibrationSet(
                points=tuple(points), resolution_t=top.num("resolution_T", positive=True,
                                                           what="the display's digit step in T"),
                instrument=self.item_text,
                zero_offset_t=float(zero.get("value_T", 0.0)), u_zero_offset_t=float(zero.get("u_T", 0.0)),
                temperature_coefficient_per_k=float(tc.get("per_K", 0.0)),
                u_temperature_coefficient_per_k=float(tc.get("u_per_K", 0.0)),
                tilt_u_rad=float(tilt.get("u_rad", 0.0)), tilt_per_point=bool(tilt.get("per_point", True)),
                tilt_model=model,
                position_offset_m=float(pos.get("value_m", 0.0)), u_position_offset_m=float(pos.get("u_m", 0.0)),
                shared=tuple(shared))
        except BudgetFileError:
            raise
        except FieldbudgetError as err:
            raise BudgetFileError(where, "#", str(err)) from None

    # -- self-contained content ----------------------------------------------------------------
    def resolved(self) -> tuple[dict, list[dict]]:
        """(content with the files it names read in, the files with their SHA-256).

        An NMR measurement reference becomes ``{"budget": ..., "from": path}``
        and a ``readings_csv`` a ``readings_T`` list, so the content evaluates
        to the same numbers without any file.
        """
        out = copy.deepcopy(dict(self.content))
        files: list[dict] = []
        for i, raw in enumerate(out["points"]):
            p = _At(raw, f"#/points/{i}", self.where)
            readings, csv_path = self._readings(p)
            if csv_path is not None:
                files.append({"path": raw["readings_csv"]["path"], "sha256": _sha256(Path(csv_path)),
                              "used_for": f"#/points/{i}/readings_csv"})
                del raw["readings_csv"]
                raw["readings_T"] = readings
            if isinstance(raw.get("field_map"), Mapping):
                g, u_g, _, map_path = self._map_gradient(p)
                files.append({"path": raw["field_map"]["path"], "sha256": _sha256(map_path),
                              "used_for": f"#/points/{i}/field_map"})
                del raw["field_map"]
                raw["gradient_T_per_m"], raw["u_gradient_T_per_m"] = g, u_g
            ref, path = self._reference(p, i)
            if isinstance(raw["reference"].get("measurement"), Mapping):
                raw["reference"] = {"budget": ref.to_dict(), "from": "NMR measurement given in the file",
                                    "input_order": [q.symbol for q in ref.inputs]}
            if path is not None:
                rel = raw["reference"]["measurement"]
                files.append({"path": rel, "sha256": _sha256(Path(path)), "used_for": f"#/points/{i}/reference"})
                raw["reference"] = {"budget": ref.to_dict(), "from": rel,
                                    "input_order": [q.symbol for q in ref.inputs]}
        return out, files

    # -- evaluation ---------------------------------------------------------------------------
    def evaluate(self, *, monte_carlo: int | None = None, seed: int | None = None) -> CalibrationOutcome:
        """Evaluate the points, fit the curve and decide conformity.

        ``monte_carlo``: a number of trials forces Monte Carlo at every point
        (JCGM 101:2008); otherwise the file's ``propagation`` (default
        ``"auto"``) decides, with ``monte_carlo_trials`` (default 200 000).
        ``seed`` (else the file's ``monte_carlo_seed``) fixes the run.
        """
        from ..calibration import Tolerance, assess_conformity

        c = self.content
        top = _At(c, "#", self.where)
        cset = self.calibration_set()
        prop = top.text("propagation", "auto")
        from ..calibration import PROPAGATIONS

        if prop not in PROPAGATIONS:
            raise top.fail("propagation", f"must be one of {', '.join(map(repr, PROPAGATIONS))} (got {prop!r})")
        trials = int(top.num("monte_carlo_trials", 200_000, positive=True))
        if monte_carlo is not None:
            prop, trials = "monte carlo", int(monte_carlo)
        if seed is None and c.get("monte_carlo_seed") is not None:
            seed = int(top.num("monte_carlo_seed", nonneg=True))
        result = cset.evaluate(prop, trials=trials, seed=seed)
        notes = list(result.warnings)
        curve = None
        cv = self._section("curve")
        if cv:
            form = str(cv.get("form", "error"))
            degree = cv.get("degree", 1)
            if isinstance(degree, float) and degree.is_integer():
                degree = int(degree)
            if not isinstance(degree, int) or isinstance(degree, bool) or degree < 0:
                raise top.fail("curve", f"degree must be a whole number >= 0 (got {degree!r})")
            if len(result.points) < degree + 1:
                notes.append(f"too few points ({len(result.points)}) for a curve of degree {degree}: no curve")
            else:
                try:
                    curve = result.fit(degree, form=form, x0="mean")
                except FieldbudgetError as err:
                    raise BudgetFileError(self.where, "#/curve", str(err)) from None
                notes += [w for w in curve.fit.warnings if w not in notes]
        verdicts = []
        tol = self._section("tolerance")
        rule_d = self.decision_rule
        if tol:
            rel, ab = float(tol.get("relative", 0.0)), float(tol.get("absolute_T", 0.0))
            rule = str((rule_d or {}).get("rule", "simple acceptance"))
            gb = (rule_d or {}).get("guard_band_T")
            for p in result.points:
                half = rel * abs(p.reference) + ab
                try:
                    verdicts.append(assess_conformity(
                        Tolerance(-half, half, "T", str(tol.get("source", ""))), p, rule=rule,
                        guard_band=None if gb is None else float(gb), distribution="auto",
                        measurand=f"error at {p.name}"))
                except FieldbudgetError as err:
                    raise BudgetFileError(self.where, "#/decision_rule" if rule_d else "#/tolerance",
                                          str(err)) from None
        elif rule_d:
            raise top.fail("tolerance", "missing: a decision_rule needs the tolerance it decides against")
        return CalibrationOutcome(file=self, calibration=result, curve=curve, conformity=tuple(verdicts),
                                  warnings=tuple(dict.fromkeys(str(w) for w in notes)))


def load_calibration(path: str | Path) -> CalibrationFile:
    """Read and check a calibration file."""
    return CalibrationFile.from_file(path)
