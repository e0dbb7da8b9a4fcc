"""The input of a teslameter-calibration procedure: a plain dict -> calibration points -> results.

A ``teslameter-calibration`` procedure builds, from the lab's fixed values and
the operator's entries, a dict with these keys (each component's ``target``):

``instrument`` (text), ``readings_csv`` (path of the comparison CSV, relative
to the procedure file's folder), ``columns`` (table: ``point``,
``nmr_frequency_Hz``, ``hall_reading_T``, optional ``temperature_C``: the
CSV's column names), ``resolution_T``, ``reference_temperature_C``,
``u_temperature_C``, ``temperature_coefficient_per_K`` and its ``u_...``,
``zero_offset_T``/``u_zero_offset_T``, ``tilt_u_rad``, ``tilt_per_point``,
``position_offset_m``/``u_position_offset_m``, ``gradient_T_per_m``/
``u_gradient_T_per_m``, ``degree`` (of the error curve), ``tolerance``
(``relative``, ``absolute_T``: the instrument's specification
``+-(relative * |B| + absolute_T)``, and ``source``), and ``reference``: the
NMR measurement description shared by every point (nucleus, CODATA edition,
timebase, sample, line, probe perturbation), to which each point adds its
own NMR frequency readings.

Each row of the CSV is one simultaneous pair of readings (NMR frequency in Hz,
teslameter indication in T) at a named point.  The NMR layer builds the
reference budget of each point; the calibration layer merges them (inputs
common to every point, the CODATA value, the timebase and the probe
perturbation, appear once, so the points come out correlated), evaluates the
errors E_i, fits the error curve and judges conformity with the tolerance.
Plain Python; written by hand because it is the glue of this procedure kind.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .. import _display
from ..errors import BudgetFileError

__all__ = ["SHARED_REFERENCE_INPUTS", "TeslameterCalibration", "TeslameterOutcome"]

#: NMR-budget inputs common to every point of one calibration (same counter,
#: same probe, same sample): merged once so the points are correlated.
SHARED_REFERENCE_INPUTS = ("y_tb", "y_age", "d_probe", "alpha_T", "t_ref", "N_d", "chi", "c_chi", "t_chi")

_KEYS = {"instrument", "readings_csv", "columns", "resolution_T", "reference_temperature_C", "u_temperature_C",
         "temperature_coefficient_per_K", "u_temperature_coefficient_per_K", "zero_offset_T", "u_zero_offset_T",
         "tilt_u_rad", "tilt_per_point", "position_offset_m", "u_position_offset_m", "gradient_T_per_m",
         "u_gradient_T_per_m", "degree", "tolerance", "reference", "propagation", "monte_carlo_trials",
         "monte_carlo_seed"}


def _num(d: Mapping, key: str, where: str, default: float | None = None) -> float:
    v = d.get(key, default)
    if v is None:
        raise BudgetFileError(where, f"#/{key}", "missing: a number")
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise BudgetFileError(where, f"#/{key}", f"must be a finite number (got {v!r})")
    return float(v)


@dataclass(frozen=True)
class TeslameterCalibration:
    """A teslameter calibration described by a plain dict (see the module docstring)."""

    description: Mapping = field(repr=False)
    where: str = "calibration"
    base_dir: str = "."

    @classmethod
    def from_dict(cls, d: Mapping, where: str = "calibration", base_dir: str | Path = ".") -> TeslameterCalibration:
        unknown = sorted(set(d) - _KEYS)
        if unknown:
            raise BudgetFileError(where, f"#/{unknown[0]}", f"unknown key; allowed keys: {', '.join(sorted(_KEYS))}")
        return cls(dict(d), where=where, base_dir=str(base_dir))

    # -- reading the comparison file -------------------------------------------------------
    def rows(self) -> dict[str, dict[str, list[float]]]:
        """Readings by point name, in file order: ``{"P1": {"f": [...], "hall": [...], "t": [...]}}``."""
        d, where = self.description, self.where
        rel = d.get("readings_csv")
        if not isinstance(rel, str) or not rel.strip():
            raise BudgetFileError(where, "#/readings_csv", "missing: the path of the comparison CSV file")
        path = Path(rel)
        if not path.is_absolute():
            path = Path(self.base_dir) / path
        cols = dict(d.get("columns") or {})
        names = {k: cols.get(k, k) for k in ("point", "nmr_frequency_Hz", "hall_reading_T")}
        t_col = cols.get("temperature_C")
        try:
            with open(path, newline="", encoding="utf-8") as fh:
                table = list(csv.DictReader(fh))
        except OSError as err:
            raise BudgetFileError(where, "#/readings_csv", f"cannot read {str(path)!r} ({err.strerror or err})") \
                from None
        header = [h for h in (table[0] if table else {}) if h is not None]
        for key, col in [*names.items(), *([("temperature_C", t_col)] if t_col else [])]:
            if col not in header:
                raise BudgetFileError(where, f"#/columns/{key}", f"must name a column of {path.name!r} "
                                      f"(columns: {', '.join(header)}) (got {col!r})")
        out: dict[str, dict[str, list[float]]] = {}
        for line, row in enumerate(table, start=2):
            point = (row[names["point"]] or "").strip()
            if not point:
                continue
            slot = out.setdefault(point, {"f": [], "hall": [], "t": []})
            for key, col in (("f", names["nmr_frequency_Hz"]), ("hall", names["hall_reading_T"]),
                             *((("t", t_col),) if t_col else ())):
                try:
                    slot[key].append(float(row[col]))
                except (TypeError, ValueError):
                    raise BudgetFileError(where, "#/readings_csv", f"line {line} of {path.name!r}: column "
                                          f"{col!r} is not a number ({row[col]!r})") from None
        if not out:
            raise BudgetFileError(where, "#/readings_csv", f"{path.name!r} has no readings")
        return out

    # -- the calibration set ------------------------------------------------------------------
    def calibration_set(self) -> Any:
        """The :class:`fieldbudget.calibration.CalibrationSet` of this calibration."""
        from ..calibration import CalibrationPoint, CalibrationSet
        from ..nmr.measurement import NMRMeasurement

        d, where = self.description, self.where
        ref = d.get("reference")
        if not isinstance(ref, Mapping):
            raise BudgetFileError(where, "#/reference", "missing: the NMR reference description shared by the points")
        t_ref = _num(d, "reference_temperature_C", where, 23.0)
        u_t = _num(d, "u_temperature_C", where, 0.0)
        points = []
        for name, slot in self.rows().items():
            nmr = {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in ref.items()}
            freq = dict(nmr.get("frequency") or {})
            freq["readings_Hz"] = slot["f"]
            nmr["frequency"] = freq
            if slot["t"]:
                nmr["sample"] = dict(nmr.get("sample") or {}, temperature_C=float(np.mean(slot["t"])))
            m = NMRMeasurement.from_dict(nmr, where=f"{where}, point {name}", base_dir=self.base_dir)
            dt = float(np.mean(slot["t"])) - t_ref if slot["t"] else 0.0
            points.append(CalibrationPoint(
                reference=m.to_budget(), readings_t=tuple(slot["hall"]), name=name,
                temperature_difference_k=dt, u_temperature_difference_k=u_t,
                gradient_t_per_m=_num(d, "gradient_T_per_m", where, 0.0),
                u_gradient_t_per_m=_num(d, "u_gradient_T_per_m", where, 0.0)))
        return CalibrationSet(
            points=tuple(points), resolution_t=_num(d, "resolution_T", where),
            instrument=str(d.get("instrument", "")),
            zero_offset_t=_num(d, "zero_offset_T", where, 0.0), u_zero_offset_t=_num(d, "u_zero_offset_T", where, 0.0),
            temperature_coefficient_per_k=_num(d, "temperature_coefficient_per_K", where, 0.0),
            u_temperature_coefficient_per_k=_num(d, "u_temperature_coefficient_per_K", where, 0.0),
            tilt_u_rad=_num(d, "tilt_u_rad", where, 0.0), tilt_per_point=bool(d.get("tilt_per_point", False)),
            position_offset_m=_num(d, "position_offset_m", where, 0.0),
            u_position_offset_m=_num(d, "u_position_offset_m", where, 0.0),
            shared=SHARED_REFERENCE_INPUTS)

    def calibration_file(self, certificate: Mapping | None = None) -> dict:
        """This calibration as calibration file content (``fieldbudget-calibration/1``).

        ``certificate``: the certificate details the procedure collects under
        ``record.certificate`` (``certificate_id``, ``lab``, ``customer``,
        ``item``, ``dates``, ``traceability``, ``authorised_by`` as
        ``"name, function"``); the NMR reference of each point is given inline,
        with its frequency readings.
        """
        d, where = self.description, self.where
        ref = d.get("reference")
        if not isinstance(ref, Mapping):
            raise BudgetFileError(where, "#/reference", "missing: the NMR reference description shared by the points")
        cert = {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in dict(certificate or {}).items()}
        u_t = _num(d, "u_temperature_C", where, 0.0)
        pts, temps = [], []
        for name, slot in self.rows().items():
            nmr = {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in ref.items()}
            nmr["frequency"] = dict(nmr.get("frequency") or {}, readings_Hz=slot["f"])
            p: dict = {"id": name, "readings_T": slot["hall"],
                       "gradient_T_per_m": _num(d, "gradient_T_per_m", where, 0.0),
                       "u_gradient_T_per_m": _num(d, "u_gradient_T_per_m", where, 0.0)}
            if slot["t"]:
                t = float(np.mean(slot["t"]))
                temps.append(t)
                nmr["sample"] = dict(nmr.get("sample") or {}, temperature_C=t)
                p["temperature_C"], p["u_temperature_C"] = t, u_t
            p["reference"] = {"measurement": nmr}
            pts.append(p)
        auth = cert.pop("authorised_by", None)
        out: dict = {"format": "fieldbudget-calibration/1"}
        for key in ("certificate_id", "lab", "customer", "item", "dates", "traceability", "method", "remarks"):
            if cert.get(key):
                out[key] = cert[key]
        if isinstance(auth, str) and auth.strip():
            name, _, function = auth.partition(",")
            out["authorised_by"] = [{"name": name.strip(), "function": function.strip()}]
        item = dict(out.get("item") or {})
        if not item and d.get("instrument"):
            item = {"type": str(d["instrument"])}
        if item:
            out["item"] = item
        if temps:
            out["environment"] = {"temperature_C": round(float(np.mean(temps)), 2), "u_temperature_C": u_t}
        out.update({
            "points": pts, "resolution_T": _num(d, "resolution_T", where),
            "tilt": {"u_rad": _num(d, "tilt_u_rad", where, 0.0), "per_point": bool(d.get("tilt_per_point", False))},
            "position_offset": {"value_m": _num(d, "position_offset_m", where, 0.0),
                                "u_m": _num(d, "u_position_offset_m", where, 0.0)},
            "temperature_coefficient": {"per_K": _num(d, "temperature_coefficient_per_K", where, 0.0),
                                        "u_per_K": _num(d, "u_temperature_coefficient_per_K", where, 0.0),
                                        "reference_temperature_C": _num(d, "reference_temperature_C", where, 23.0)},
            "zero_offset": {"value_T": _num(d, "zero_offset_T", where, 0.0),
                            "u_T": _num(d, "u_zero_offset_T", where, 0.0)},
            "shared": list(SHARED_REFERENCE_INPUTS),
            "curve": {"form": "error", "degree": int(d.get("degree", 1))},
            "propagation": str(d.get("propagation", "auto")),
            "monte_carlo_trials": int(d.get("monte_carlo_trials", 200_000)),
            "monte_carlo_seed": int(d.get("monte_carlo_seed", 1)),
        })
        tol = d.get("tolerance") or {}
        if tol:
            out["tolerance"] = {"relative": float(tol.get("relative", 0.0)),
                                "absolute_T": float(tol.get("absolute_T", 0.0)), "source": str(tol.get("source", ""))}
            out["decision_rule"] = {"rule": "simple acceptance"}
        return out

    def to_budget(self) -> Any:
        """The merged calibration budget (one output E_i per point)."""
        return self.calibration_set().budget

    def evaluate(self) -> TeslameterOutcome:
        """Evaluate the points, fit the error curve and judge each point against the tolerance.

        ``propagation`` (default ``"auto"``: Monte Carlo, JCGM 101, when an
        input has zero first-order sensitivity, such as the probe tilt at
        theta = 0), ``monte_carlo_trials`` (default 200 000) and
        ``monte_carlo_seed`` (default 1: a run is repeatable) come from the
        description and go to :meth:`CalibrationSet.evaluate`.
        """
        from ..calibration import Tolerance, assess_conformity

        d = self.description
        cset = self.calibration_set()
        result = cset.evaluate(str(d.get("propagation", "auto")), trials=int(d.get("monte_carlo_trials", 200_000)),
                               seed=int(d.get("monte_carlo_seed", 1)))
        degree = int(d.get("degree", 1))
        curve = result.fit(degree) if len(result.points) > degree + 1 else None
        tol = d.get("tolerance") or {}
        verdicts = []
        if tol:
            rel, ab = float(tol.get("relative", 0.0)), float(tol.get("absolute_T", 0.0))
            for p in result.points:
                half = rel * abs(p.reference) + ab
                # The propagated values and distribution (Monte Carlo's histogram when it was used).
                verdicts.append(assess_conformity(
                    Tolerance(-half, half, "T", str(tol.get("source", ""))), p, distribution="auto",
                    measurand=f"E at {p.name}"))
        warnings = tuple(dict.fromkeys(tuple(result.warnings) + (tuple(curve.warnings) if curve else ())))
        return TeslameterOutcome(calibration=result, curve=curve, conformity=tuple(verdicts), warnings=warnings)


@dataclass(frozen=True)
class TeslameterOutcome:
    """The evaluated calibration: points, error curve, conformity per point and warnings."""

    calibration: Any = field(repr=False)
    curve: Any = field(repr=False)
    conformity: tuple = field(repr=False, default=())
    warnings: tuple[str, ...] = ()

    @property
    def worst_point(self) -> Any:
        """The point with the largest expanded uncertainty of its error."""
        return max(self.calibration.points, key=lambda p: p.expanded_uncertainty)

    @property
    def result(self) -> Any:
        """The engine result of the worst point's error (what a live budget view shows)."""
        return self.worst_point.gum

    @property
    def max_abs_error(self) -> float:
        """max_i |E_i|, T."""
        return max(abs(p.error) for p in self.calibration.points)

    @property
    def max_expanded_uncertainty(self) -> float:
        """max_i U(E_i), T."""
        return self.worst_point.expanded_uncertainty

    def __repr__(self) -> str:
        n = len(self.calibration.points)
        ok = sum(1 for c in self.conformity if c.decision == "accept")
        conf = f", {ok}/{len(self.conformity)} points conform" if self.conformity else ""
        return (f"<TeslameterOutcome {n} points, max |E| = {self.max_abs_error:.3g} T, "
                f"max U(E) = {self.max_expanded_uncertainty:.2g} T{conf}>")

    def to_dict(self) -> dict:
        return {"calibration": self.calibration.to_dict(),
                "curve": None if self.curve is None else self.curve.to_dict(),
                "conformity": [c.to_dict() for c in self.conformity],
                "max_abs_error": self.max_abs_error, "max_expanded_uncertainty": self.max_expanded_uncertainty,
                "warnings": list(self.warnings)}

    def _repr_html_(self) -> str:
        parts = [self.calibration._repr_html_()]
        if self.curve is not None:
            parts.append(self.curve._repr_html_())
        parts += [c._repr_html_() for c in self.conformity]
        return _display.html_block("Teslameter calibration", "".join(parts), css_class="fb-proc-calibration")
