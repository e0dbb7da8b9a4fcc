"""CMC table for the accreditation scope: ranges and the smallest claimable expanded uncertainty.

From the budgets of the lab's best measurements (one expanded uncertainty
``U_i`` at field ``B_i`` each), this builds, for each field range, the CMC
uncertainty as

* ``"absolute"``: one value valid throughout the range, ``U = max U_i``;
* ``"relative"``: ``U = r |B|`` with ``r = max U_i / |B_i|``;
* ``"linear"``: ``U = a + b |B|`` fitted as the *upper envelope* of the points:
  minimise the mean of ``a + b |B|`` over the range subject to
  ``a + b |B_i| >= U_i`` for every point and ``a, b >= 0`` (a linear programme,
  solved with ``scipy.optimize.linprog``, method "highs").

The numbers are then rounded *up* to two significant digits so that the
claim is never below any best measurement (rounding up, not to nearest, is
``common practice`` for a CMC; two digits follow the reporting rule of
ILAC P14 for expanded uncertainties).

What ILAC P14:09/2020 asks of a CMC entry (clause numbers from memory, checked
only against the summary in the project's notes; verify them against the
document):

* the measurand; the calibration method or type of instrument; the
  measurement range (and further parameters); the measurement uncertainty
  (P14, CMC section, items a-d);
* no ambiguity about the smallest uncertainty the lab can achieve, and the
  uncertainty as a single value, a range, an explicit function, a matrix or a
  graph (same section);
* no open intervals such as "U < x" (same section);
* an expanded uncertainty at a coverage probability of about 95 %, in the
  unit of the measurand or relative to it (same section);
* the contribution of the best existing device to be calibrated included.

Why hand-written: the envelope is a two-variable linear programme handed to
scipy; the table, the rounding direction and the ILAC P14 checks are
accreditation practice that no library covers.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import scipy.optimize

from fieldbudget import _display
from fieldbudget.errors import InputError

__all__ = [
    "CMC_FORMS",
    "P14_EDITION",
    "BestMeasurement",
    "CMCEntry",
    "CMCTable",
    "build_cmc_table",
    "round_up",
]

CMC_FORMS = ("absolute", "relative", "linear")
P14_EDITION = "ILAC P14:09/2020"
_WHERE = "CMC table"
# The coverage probability P14 asks for is "approximately 95 %"; k = 2 for a normal PDF gives 95.45 %.
_P_LOW, _P_HIGH = 0.94, 0.96


def round_up(x: float, digits: int = 2) -> float:
    """Round ``x >= 0`` up to ``digits`` significant digits (0 stays 0)."""
    if x < 0 or not math.isfinite(x):
        raise InputError("value", x, "a finite number >= 0", "round_up")
    if x == 0:
        return 0.0
    e = math.floor(math.log10(x)) - digits + 1
    # The factor forgives float noise (1.2000000000000002 stays 1.2), at a cost of 1e-12 relative.
    n = math.ceil(x / 10.0**e * (1 - 1e-12))
    return float(f"{n}e{e}")


@dataclass(frozen=True)
class BestMeasurement:
    """One of the lab's best measurements: field ``value`` with expanded uncertainty at about 95 %.

    Parameters
    ----------
    value : float
        Measured field (unit of the table, e.g. T).
    expanded_uncertainty : float
        ``U`` at ``coverage_probability`` (same unit), > 0.
    coverage_probability : float
        Must be about 0.95 (0.94 to 0.96) for a CMC (ILAC P14).
    source : str
        Which budget or record it comes from.
    """

    value: float
    expanded_uncertainty: float
    coverage_probability: float = 0.9545
    source: str = ""

    def __post_init__(self) -> None:
        where = f"best measurement {self.source!r}" if self.source else "best measurement"
        if not (isinstance(self.value, (int, float)) and math.isfinite(self.value)):
            raise InputError("value", self.value, "a finite number", where)
        if not (isinstance(self.expanded_uncertainty, (int, float)) and math.isfinite(self.expanded_uncertainty)
                and self.expanded_uncertainty > 0):
            raise InputError("expanded_uncertainty", self.expanded_uncertainty, "a finite number > 0", where)
        if not (_P_LOW <= self.coverage_probability <= _P_HIGH):
            raise InputError("coverage_probability", self.coverage_probability,
                             f"about 0.95 (between {_P_LOW} and {_P_HIGH}) for a CMC ({P14_EDITION})", where)

    @classmethod
    def from_result(cls, result: object, source: str = "") -> BestMeasurement:
        """From an engine BudgetResult (``estimate``, ``expanded_uncertainty``, ``coverage_probability``)."""
        try:
            return cls(float(result.estimate), float(result.expanded_uncertainty),  # type: ignore[attr-defined]
                       float(getattr(result, "coverage_probability", 0.9545) or 0.9545), source)
        except AttributeError:
            raise InputError("result", type(result).__name__,
                             "a result with .estimate and .expanded_uncertainty", _WHERE) from None

    @classmethod
    def from_point(cls, point: object, source: str = "") -> BestMeasurement:
        """From a calibration point result: the field is its reference value, U that of its error."""
        try:
            value = float(point.reference)  # type: ignore[attr-defined]
            big_u = float(point.expanded_uncertainty)  # type: ignore[attr-defined]
        except (AttributeError, TypeError):
            raise InputError("point", type(point).__name__, "a calibration point result", _WHERE) from None
        p = float(getattr(point, "coverage_probability", 0.9545) or 0.9545)
        return cls(value, big_u, p, source or f"calibration point {getattr(point, 'name', '')}".strip())

    def to_dict(self) -> dict:
        return {"value": self.value, "U": self.expanded_uncertainty,
                "coverage_probability": self.coverage_probability, "source": self.source}


@dataclass(frozen=True)
class CMCEntry:
    """One line of the scope: a closed range and the CMC uncertainty over it."""

    measurand: str
    method: str
    lower: float
    upper: float
    unit: str
    form: str
    a: float
    b: float
    coverage_probability: float
    points: tuple[BestMeasurement, ...]
    warnings: tuple[str, ...] = ()

    def uncertainty_at(self, value: float) -> float:
        """CMC expanded uncertainty at ``value`` (unit of the table): ``a + b |value|``.

        For ``"absolute"`` ``b = 0``; for ``"relative"`` ``a = 0`` and ``b`` is the relative value.
        """
        return self.a + self.b * abs(value)

    @property
    def margin(self) -> float:
        """Smallest ``CMC(B_i) - U_i`` over the points; >= 0 by construction."""
        return min(self.uncertainty_at(p.value) - p.expanded_uncertainty for p in self.points)

    @property
    def uncertainty_text(self) -> str:
        u = self.unit
        if self.form == "absolute":
            return f"{self.a:.2g} {u}"
        if self.form == "relative":
            return f"{self.b:.2g} x |B| ({self.b * 1e6:.2g} x 10^-6 relative)"
        return f"{self.a:.2g} {u} + {self.b:.2g} x |B|"

    def __repr__(self) -> str:
        return (f"<CMCEntry {_display.fmt(self.lower)} {self.unit} to {_display.fmt(self.upper)} {self.unit}: "
                f"U = {self.uncertainty_text}>")

    def to_dict(self) -> dict:
        return {
            "measurand": self.measurand,
            "method": self.method,
            "range": [self.lower, self.upper],
            "unit": self.unit,
            "form": self.form,
            "a": self.a,
            "b": self.b,
            "uncertainty": self.uncertainty_text,
            "coverage_probability": self.coverage_probability,
            "margin": self.margin,
            "points": [p.to_dict() for p in self.points],
            "warnings": list(self.warnings),
        }

    def _row(self) -> tuple[str, ...]:
        return (self.measurand, self.method, f"{_display.fmt(self.lower)} to {_display.fmt(self.upper)} {self.unit}",
                self.uncertainty_text, f"{100 * self.coverage_probability:.0f} %")

    def _repr_html_(self) -> str:
        return _display.html_table(("measurand", "method / instrument", "range", "U", "p"), [self._row()])


@dataclass(frozen=True)
class CMCTable:
    """The CMC entries for one measurand and method, range by range."""

    entries: tuple[CMCEntry, ...]
    measurand: str
    method: str
    unit: str
    warnings: tuple[str, ...] = ()

    def uncertainty_at(self, value: float) -> float:
        """The CMC uncertainty at ``value``; outside every range an :class:`InputError`."""
        hits = [e.uncertainty_at(value) for e in self.entries if e.lower <= abs(value) <= e.upper]
        if not hits:
            raise InputError("value", value, "inside one of the CMC ranges", _WHERE)
        return max(hits)  # at a shared boundary the larger claim applies: no ambiguity

    def p14_checklist(self) -> tuple[tuple[str, bool, str], ...]:
        """What ILAC P14 asks of a CMC entry, and whether this table has it (requirement, met, how)."""
        e = self.entries
        return (
            ("measurand stated", bool(self.measurand.strip()), self.measurand),
            ("method or type of instrument stated", bool(self.method.strip()), self.method),
            ("closed measurement range for every entry",
             all(math.isfinite(x.lower) and math.isfinite(x.upper) and x.upper > x.lower for x in e),
             "; ".join(f"{x.lower:g} to {x.upper:g} {self.unit}" for x in e)),
            ("uncertainty as a value or explicit function, no open interval", all(x.form in CMC_FORMS for x in e),
             "; ".join(x.uncertainty_text for x in e)),
            ("expanded uncertainty at about 95 %", all(_P_LOW <= x.coverage_probability <= _P_HIGH for x in e),
             ", ".join(f"{100 * x.coverage_probability:.2f} %" for x in e)),
            ("claim >= every best measurement in its range",
             all(x.margin >= -1e-9 * max(p.expanded_uncertainty for p in x.points) for x in e),
             f"smallest margin {min(x.margin for x in e):.3g} {self.unit}"),
        )

    def __repr__(self) -> str:
        return f"<CMCTable {self.measurand!r}, {len(self.entries)} range(s), {self.unit}>"

    def to_dict(self) -> dict:
        return {
            "measurand": self.measurand,
            "method": self.method,
            "unit": self.unit,
            "policy": P14_EDITION,
            "entries": [x.to_dict() for x in self.entries],
            "p14_checklist": [{"requirement": r, "met": m, "detail": d} for r, m, d in self.p14_checklist()],
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        body = _display.html_table(("measurand", "method / instrument", "range", "U", "p"),
                                   [x._row() for x in self.entries],
                                   caption=f"Calibration and measurement capability ({P14_EDITION})")
        checks = _display.html_table(("ILAC P14 requirement", "met", "detail"),
                                     [(r, "yes" if m else "NO", d) for r, m, d in self.p14_checklist()])
        notes = "".join(f"<p>{_display.escape(w)}</p>" for w in self.warnings)
        return _display.html_block("CMC table", body + checks + notes)


def _envelope(b_abs: np.ndarray, big_u: np.ndarray, lo: float, hi: float) -> tuple[float, float]:
    """Least upper envelope ``a + b B`` (a, b >= 0) of the points, by linear programming."""
    # Scale to order one first: the solver's feasibility tolerance (~1e-7) is the size of a CMC in tesla.
    us = float(big_u.max())
    bs = float(max(hi, b_abs.max()))
    res = scipy.optimize.linprog(
        c=[1.0, 0.5 * (lo + hi) / bs],
        A_ub=np.column_stack([-np.ones_like(b_abs), -b_abs / bs]),
        b_ub=-big_u / us,
        bounds=[(0, None), (0, None)],
        method="highs",
    )
    if not res.success:  # cannot happen for a, b >= 0 with finite points; keep the message if it does
        raise InputError("points", len(b_abs), f"points an envelope can be fitted to ({res.message})", _WHERE)
    a, b = float(res.x[0]) * us, float(res.x[1]) * us / bs
    # the solver may leave a point short by its tolerance: lift a so the envelope holds exactly
    a += max(0.0, float(np.max(big_u - (a + b * b_abs))))
    return a, b


def build_cmc_table(
    measurements: Iterable[BestMeasurement | object],
    ranges: Sequence[tuple[float, float]],
    *,
    measurand: str,
    method: str,
    unit: str = "T",
    form: str = "linear",
    digits: int = 2,
) -> CMCTable:
    """Build the CMC table from the lab's best measurements.

    Parameters
    ----------
    measurements : iterable of BestMeasurement, engine results or calibration point results
        Engine results are converted with :meth:`BestMeasurement.from_result`,
        calibration point results with :meth:`BestMeasurement.from_point`.
    ranges : sequence of (lower, upper)
        Closed field ranges in ``unit`` (magnitudes, ``0 <= lower < upper``), not overlapping.
    measurand, method : str
        What is measured and by which method / instrument type (ILAC P14 requires both).
    form : ``"absolute"``, ``"relative"`` or ``"linear"``
    digits : int
        Significant digits, rounding up (default 2).
    """
    if not measurand or not str(measurand).strip():
        raise InputError("measurand", measurand, f"a description of the measurand ({P14_EDITION})", _WHERE)
    if not method or not str(method).strip():
        raise InputError("method", method, f"the calibration method or instrument type ({P14_EDITION})", _WHERE)
    if form not in CMC_FORMS:
        raise InputError("form", form, f"one of {', '.join(repr(f) for f in CMC_FORMS)}", _WHERE)
    if not isinstance(digits, int) or digits < 1:
        raise InputError("digits", digits, "an integer >= 1", _WHERE)
    pts = tuple(m if isinstance(m, BestMeasurement)
                else BestMeasurement.from_point(m) if hasattr(m, "reference") and hasattr(m, "error")
                else BestMeasurement.from_result(m) for m in measurements)
    if not pts:
        raise InputError("measurements", 0, "at least one best measurement", _WHERE)
    rs: list[tuple[float, float]] = []
    for i, r in enumerate(ranges):
        try:
            lo, hi = (float(r[0]), float(r[1]))
        except (TypeError, ValueError, IndexError):
            raise InputError(f"ranges[{i}]", r, "a pair (lower, upper)", _WHERE) from None
        if not (math.isfinite(lo) and math.isfinite(hi)):
            raise InputError(f"ranges[{i}]", r, "closed, with finite limits (no open intervals)", _WHERE)
        if not (0 <= lo < hi):
            raise InputError(f"ranges[{i}]", r, "0 <= lower < upper", _WHERE)
        rs.append((lo, hi))
    if not rs:
        raise InputError("ranges", ranges, "at least one range", _WHERE)
    rs.sort()
    for (lo1, hi1), (lo2, hi2) in itertools.pairwise(rs):
        if lo2 < hi1:
            raise InputError("ranges", ((lo1, hi1), (lo2, hi2)), "ranges that do not overlap", _WHERE)
    entries = []
    table_notes: list[str] = []
    used = set()
    for lo, hi in rs:
        inside = tuple(p for p in pts if lo <= abs(p.value) <= hi)
        if not inside:
            raise InputError("ranges", (lo, hi), "ranges that each contain at least one best measurement", _WHERE)
        used.update(id(p) for p in inside)
        b_abs = np.array([abs(p.value) for p in inside])
        big_u = np.array([p.expanded_uncertainty for p in inside])
        notes: list[str] = []
        if form == "absolute":
            a, b = round_up(float(big_u.max()), digits), 0.0
        elif form == "relative":
            if np.any(b_abs == 0):
                raise InputError("form", form, "'absolute' or 'linear' for a range with a point at zero field",
                                 _WHERE)
            a, b = 0.0, round_up(float(np.max(big_u / b_abs)), digits)
        else:
            a0, b0 = _envelope(b_abs, big_u, lo, hi)
            a, b = round_up(a0, digits), round_up(b0, digits)
        if b_abs.min() > lo or b_abs.max() < hi:
            notes.append(f"the best measurements span {b_abs.min():g} to {b_abs.max():g} {unit} but the range is "
                         f"{lo:g} to {hi:g} {unit}: the claim at the ends is not backed by a measurement")
        entries.append(CMCEntry(measurand=str(measurand), method=str(method), lower=lo, upper=hi, unit=unit,
                                form=form, a=a, b=b, coverage_probability=min(p.coverage_probability
                                                                              for p in inside),
                                points=inside, warnings=tuple(notes)))
        table_notes += notes
    left = [p for p in pts if id(p) not in used]
    if left:
        table_notes.append(f"{len(left)} best measurement(s) outside every range were not used: "
                           + ", ".join(f"{p.value:g} {unit}" for p in left))
    table_notes.append("the CMC must include the contribution of the best existing device to be calibrated "
                       f"({P14_EDITION}); check that the budgets behind these points do")
    return CMCTable(entries=tuple(entries), measurand=str(measurand), method=str(method), unit=unit,
                    warnings=tuple(table_notes))
