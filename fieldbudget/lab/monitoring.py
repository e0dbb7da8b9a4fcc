"""Monitoring the validity of results (ISO/IEC 17025:2017 7.7.1).

* **Control charts** of a check standard (or of the reference probe against a
  second probe) over time: the Shewhart individuals chart of ISO 7870-2, with
  its centre line and limits from a baseline period, sigma estimated from the
  mean moving range of two, MR-bar / d2, and the eight tests for special causes
  of ISO 7870-2 (:data:`RULES`); optionally the EWMA chart (Roberts 1959; the
  limits of Lucas & Saccucci, Technometrics 32 (1990) 1-12).  Each point keeps
  the expanded uncertainty of its record, drawn as a bar.
* **Drift between calibrations** of an instrument from its certificates, a
  weighted straight-line fit (``numpy.polyfit`` with weights 1/u), and the
  review of its recalibration interval by the control-chart method of
  ILAC-G24:2022 / OIML D 10:2022: the interval ends where the predicted change
  since calibration, with its uncertainty, reaches the allowed limit.
* **Interlaboratory comparisons and proficiency tests**: E_n numbers, z and
  zeta scores (ISO 13528:2015; ISO/IEC 17043) with their verdicts.

Written by hand: the run rules, the EWMA limits and the interval review are
short, and no well-kept Python library implements ISO 7870-2's tests; the line
fit is numpy's and the root search scipy's.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from .._display import fmt, html_table, text_table
from ..errors import InputError
from .folder import dict_html

__all__ = [
    "RULES",
    "ControlChart",
    "DriftFit",
    "EWMA",
    "IntervalReview",
    "Rule",
    "Score",
    "Violation",
    "chart_from_entries",
    "chart_from_settings",
    "chart_of_differences",
    "d2_pairs",
    "differences",
    "drift",
    "en_number",
    "ewma",
    "individuals_chart",
    "review_interval",
    "z_score",
    "zeta_score",
]


def d2_pairs() -> float:
    """d2 for subgroups of two: the mean range of two independent standard normal variates, 2/sqrt(pi).

    E|X1 - X2| for X1 - X2 ~ N(0, 2) is sqrt(2) * sqrt(2/pi) = 2/sqrt(pi) = 1.1284 (the
    tabulated d2 = 1.128 of ISO 7870-2 for n = 2).
    """
    return 2.0 / math.sqrt(math.pi)


# ----------------------------------------------------------------------------
# the tests for special causes
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Rule:
    """One test for special causes: ``number`` as in ISO 7870-2, a short ``name`` and what it looks for."""

    number: int
    name: str
    description: str

    def to_dict(self) -> dict:
        return {"number": self.number, "name": self.name, "description": self.description}


RULES: tuple[Rule, ...] = (
    Rule(1, "outside the limits", "one point beyond zone A (more than 3 sigma from the centre line)"),
    Rule(2, "run on one side", "nine points in a row on the same side of the centre line"),
    Rule(3, "trend", "six points in a row steadily increasing or steadily decreasing"),
    Rule(4, "alternation", "fourteen points in a row alternating up and down"),
    Rule(5, "two of three in zone A", "two of three points in a row in zone A or beyond (more than 2 sigma), "
                                      "on the same side"),
    Rule(6, "four of five in zone B", "four of five points in a row in zone B or beyond (more than 1 sigma), "
                                      "on the same side"),
    Rule(7, "hugging the centre", "fifteen points in a row in zone C (within 1 sigma), on either side"),
    Rule(8, "avoiding zone C", "eight points in a row on both sides of the centre line, none in zone C"),
)
_RULE = {r.number: r for r in RULES}


@dataclass(frozen=True)
class Violation:
    """A test for special causes that fired: at point ``index`` (0-based), over the points ``window``."""

    rule: int
    index: int
    window: tuple[int, ...]
    side: str = ""  # "above", "below" or "" for rules that concern both sides

    @property
    def name(self) -> str:
        return _RULE[self.rule].name

    @property
    def message(self) -> str:
        first, last = self.window[0] + 1, self.window[-1] + 1
        span = f"point {last}" if first == last else f"points {first} to {last}"
        side = f", {self.side} the centre line" if self.side else ""
        return f"test {self.rule} ({self.name}): {span}{side}: {_RULE[self.rule].description}"

    def __repr__(self) -> str:
        return f"<Violation test {self.rule} at point {self.index + 1}>"

    def to_dict(self) -> dict:
        return {"rule": self.rule, "name": self.name, "index": self.index, "window": list(self.window),
                "side": self.side, "message": self.message}


def _sign(x: float) -> int:
    return (x > 0) - (x < 0)


def special_causes(z: Sequence[float], rules: Sequence[int] = tuple(r.number for r in RULES)) -> tuple[Violation, ...]:
    """Apply the tests for special causes to standardised values z = (x - centre)/sigma.

    A pattern is reported once, at the point that completes it; a run that goes
    on is not reported again at every later point.  For the "k of m" tests (5, 6)
    the point reported is itself one of the k.  A point exactly on a zone
    boundary counts in the inner zone; a point on the centre line breaks a run
    on one side (common practice).
    """
    z = [float(v) for v in z]
    n = len(z)
    out: list[Violation] = []
    rules = set(rules)
    unknown = rules - set(_RULE)
    if unknown:
        raise InputError("rules", sorted(unknown), "test numbers 1 to 8 (ISO 7870-2)", "control chart")

    def run_rule(number: int, length: int, ok) -> None:
        # ok(i) -> (bool, side) for the window of `length` points ending at i
        prev = False
        for i in range(length - 1, n):
            hit, side = ok(i)
            if hit and not prev:
                out.append(Violation(number, i, tuple(range(i - length + 1, i + 1)), side))
            prev = hit

    if 1 in rules:
        for i, v in enumerate(z):
            if abs(v) > 3:
                out.append(Violation(1, i, (i,), "above" if v > 0 else "below"))
    if 2 in rules:
        def side_run(i):
            signs = {_sign(v) for v in z[i - 8:i + 1]}
            if signs in ({1}, {-1}):
                return True, "above" if signs == {1} else "below"
            return False, ""
        run_rule(2, 9, side_run)
    if 3 in rules:
        def trend(i):
            d = [_sign(z[j + 1] - z[j]) for j in range(i - 5, i)]
            if set(d) in ({1}, {-1}):
                return True, ""
            return False, ""
        run_rule(3, 6, trend)
    if 4 in rules:
        def alternating(i):
            d = [_sign(z[j + 1] - z[j]) for j in range(i - 13, i)]
            return all(a != 0 and a == -b for a, b in zip(d, d[1:])), ""
        run_rule(4, 14, alternating)
    for number, k, m, bound in ((5, 2, 3, 2.0), (6, 4, 5, 1.0)):
        if number not in rules:
            continue
        for i in range(m - 1, n):
            for s, word in ((1, "above"), (-1, "below")):
                if s * z[i] > bound and sum(1 for v in z[i - m + 1:i + 1] if s * v > bound) >= k:
                    out.append(Violation(number, i, tuple(range(i - m + 1, i + 1)), word))
    if 7 in rules:
        run_rule(7, 15, lambda i: (all(abs(v) <= 1 for v in z[i - 14:i + 1]), ""))
    if 8 in rules:
        def mixture(i):
            w = z[i - 7:i + 1]
            return all(abs(v) > 1 for v in w) and any(v > 0 for v in w) and any(v < 0 for v in w), ""
        run_rule(8, 8, mixture)
    return tuple(sorted(out, key=lambda v: (v.index, v.rule)))


# ----------------------------------------------------------------------------
# EWMA
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class EWMA:
    """An EWMA chart: ``z[t]`` with its limits ``lower[t]``, ``upper[t]``; ``signals`` are the 0-based points beyond."""

    lam: float
    L: float
    z: tuple[float, ...]
    lower: tuple[float, ...]
    upper: tuple[float, ...]

    @property
    def signals(self) -> tuple[int, ...]:
        return tuple(i for i, (v, lo, hi) in enumerate(zip(self.z, self.lower, self.upper)) if v < lo or v > hi)

    def __repr__(self) -> str:
        sig = ", ".join(str(i + 1) for i in self.signals) or "none"
        return f"<EWMA lambda {self.lam:g}, L {self.L:g}, {len(self.z)} points, signals at: {sig}>"

    def to_dict(self) -> dict:
        return {"lambda": self.lam, "L": self.L, "z": list(self.z), "lower": list(self.lower),
                "upper": list(self.upper), "signals": list(self.signals)}


def ewma(values: Sequence[float], centre: float, sigma: float, lam: float = 0.2, L: float = 3.0) -> EWMA:
    """EWMA of ``values``: z_t = lam x_t + (1 - lam) z_(t-1), z_0 = centre.

    Limits: centre +- L sigma sqrt(lam/(2 - lam) [1 - (1 - lam)^(2t)]) (exact
    variance of z_t for independent x; Lucas & Saccucci 1990).  lam = 0.2 and
    L = 3 are the usual choice (common practice).
    """
    if not 0 < lam <= 1:
        raise InputError("ewma_lambda", lam, "a number with 0 < lambda <= 1", "EWMA chart")
    if not L > 0:
        raise InputError("ewma_L", L, "a number > 0", "EWMA chart")
    zs, lo, hi = [], [], []
    z = centre
    for t, x in enumerate(values, 1):
        z = lam * float(x) + (1 - lam) * z
        half = L * sigma * math.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * t)))
        zs.append(z)
        lo.append(centre - half)
        hi.append(centre + half)
    return EWMA(lam, L, tuple(zs), tuple(lo), tuple(hi))


# ----------------------------------------------------------------------------
# the individuals chart
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class ControlChart:
    """A Shewhart individuals chart (ISO 7870-2) of one monitored quantity.

    ``values`` in ``unit``; ``U`` the expanded uncertainty of each point (or
    None); ``labels`` a date or name per point; ``centre`` and ``sigma`` from the
    first ``baseline`` points (sigma = MR-bar / d2, d2 = 2/sqrt(pi)) unless they
    were given; ``violations`` the tests for special causes that fired.
    """

    values: tuple[float, ...]
    centre: float
    sigma: float
    baseline: int
    labels: tuple[str, ...] = ()
    U: tuple[float | None, ...] = ()
    unit: str = ""
    title: str = ""
    violations: tuple[Violation, ...] = ()
    ewma: EWMA | None = None
    sigma_from: str = "moving range"
    extra: Mapping = field(default_factory=dict, repr=False)

    @property
    def upper_limit(self) -> float:
        return self.centre + 3 * self.sigma

    @property
    def lower_limit(self) -> float:
        return self.centre - 3 * self.sigma

    @property
    def z(self) -> tuple[float, ...]:
        return tuple((v - self.centre) / self.sigma for v in self.values)

    @property
    def in_control(self) -> bool:
        return not self.violations and not (self.ewma and self.ewma.signals)

    def violations_of(self, rule: int) -> tuple[Violation, ...]:
        return tuple(v for v in self.violations if v.rule == rule)

    def __repr__(self) -> str:
        state = "in control" if self.in_control else f"{len(self.violations)} signal(s)"
        return (f"<ControlChart {self.title or 'individuals'}: {len(self.values)} points, centre "
                f"{fmt(self.centre, 10)} {self.unit}, sigma {fmt(self.sigma, 3)}, baseline {self.baseline}, {state}>")

    def summary(self) -> str:
        u = f" {self.unit}" if self.unit else ""
        lines = [f"{self.title or 'individuals chart'}: {len(self.values)} points, limits from the first "
                 f"{self.baseline}",
                 f"  centre line {fmt(self.centre, 12)}{u}; sigma {fmt(self.sigma, 4)}{u} ({self.sigma_from})",
                 f"  limits {fmt(self.lower_limit, 12)}{u} to {fmt(self.upper_limit, 12)}{u}"]
        if self.ewma is not None:
            lines.append(f"  EWMA lambda {self.ewma.lam:g}, L {self.ewma.L:g}: "
                         + (f"signals at points {', '.join(str(i + 1) for i in self.ewma.signals)}"
                            if self.ewma.signals else "no signal"))
        if self.violations:
            lines += ["  " + v.message for v in self.violations]
        else:
            lines.append("  no test for special causes fired")
        return "\n".join(lines)

    def ascii(self, width: int = 49) -> str:
        """The chart as text: one row per point, the axis from -4 sigma to +4 sigma; ``|`` marks the limits."""
        half = width // 2
        scale = half / 4.0
        marks = {round(k * scale) + half: ch for k, ch in ((-3, "|"), (-2, ":"), (-1, "."), (0, "+"), (1, "."),
                                                            (2, ":"), (3, "|"))}
        flagged: dict[int, list[int]] = {}
        for v in self.violations:
            flagged.setdefault(v.index, []).append(v.rule)
        head = " " * 18 + "-3s".center(round(scale * 2)) + " " * 0
        rows = [f"{'#':>3} {'label':<12}  " + "".join(
            {round(-3 * scale) + half: "L", half: "C", round(3 * scale) + half: "U"}.get(i, " ") for i in range(width))
            + "  value"]
        del head
        for i, v in enumerate(self.values):
            line = [marks.get(j, " ") for j in range(width)]
            zi = (v - self.centre) / self.sigma
            pos = round(zi * scale) + half
            ch = "*" if i < self.baseline else "o"
            if pos < 0:
                line[0] = "<"
            elif pos >= width:
                line[-1] = ">"
            else:
                line[pos] = ch
            label = self.labels[i] if i < len(self.labels) else str(i + 1)
            tail = f"  {fmt(v, 10)}"
            if i in flagged:
                tail += "  test " + ",".join(map(str, sorted(flagged[i])))
            rows.append(f"{i + 1:>3} {label:<12}  " + "".join(line) + tail)
        rows.append(f"    L, U: centre -+ 3 sigma; C: centre line; * baseline point, o later point; "
                    f"one column = {fmt(self.sigma / scale, 2)} {self.unit}".rstrip())
        return "\n".join(rows)

    def table(self) -> str:
        flagged: dict[int, list[int]] = {}
        for v in self.violations:
            flagged.setdefault(v.index, []).append(v.rule)
        return text_table(("#", "label", "value", "U", "z", "tests"),
                          [(i + 1, self.labels[i] if i < len(self.labels) else "", fmt(v, 12),
                            fmt(self.U[i], 2) if i < len(self.U) and self.U[i] is not None else "",
                            f"{zi:+.2f}", ",".join(map(str, sorted(flagged.get(i, [])))))
                           for i, (v, zi) in enumerate(zip(self.values, self.z))])

    def to_dict(self) -> dict:
        d = {"title": self.title, "unit": self.unit, "values": list(self.values), "labels": list(self.labels),
             "U": list(self.U), "centre": self.centre, "sigma": self.sigma, "sigma_from": self.sigma_from,
             "baseline": self.baseline, "lower_limit": self.lower_limit, "upper_limit": self.upper_limit,
             "violations": [v.to_dict() for v in self.violations], "in_control": self.in_control,
             "rules": [r.to_dict() for r in RULES]}
        d["ewma"] = self.ewma.to_dict() if self.ewma is not None else None
        d.update({k: v for k, v in dict(self.extra).items() if k not in d})
        return d

    def _repr_html_(self) -> str:
        flagged: dict[int, list[str]] = {}
        for v in self.violations:
            flagged.setdefault(v.index, []).append(f"{v.rule} {v.name}")
        rows = [(i + 1, self.labels[i] if i < len(self.labels) else "", fmt(v, 12),
                 fmt(self.U[i], 2) if i < len(self.U) and self.U[i] is not None else "", f"{zi:+.2f}",
                 "; ".join(flagged.get(i, []))) for i, (v, zi) in enumerate(zip(self.values, self.z))]
        cap = (f"{self.title or 'individuals chart'}: centre {fmt(self.centre, 12)} {self.unit}, sigma "
               f"{fmt(self.sigma, 3)}, limits from the first {self.baseline} points")
        return html_table(("#", "label", f"value ({self.unit})", "U", "z", "tests fired"), rows, caption=cap,
                          css_class="fb-table fb-control-chart")


def individuals_chart(values: Sequence[float], *, baseline: int | None = None, centre: float | None = None,
                      sigma: float | None = None, U: Sequence[float | None] | None = None,
                      labels: Sequence[str] | None = None, unit: str = "", title: str = "",
                      rules: Sequence[int] = tuple(r.number for r in RULES), ewma_lambda: float | None = None,
                      ewma_L: float = 3.0) -> ControlChart:
    """An individuals chart of ``values`` with limits from the first ``baseline`` points.

    ``centre`` (the baseline mean) and ``sigma`` (MR-bar / d2 of the baseline)
    are computed unless given.  ``ewma_lambda`` adds an EWMA chart with the same
    centre and sigma.  ``U`` (expanded uncertainties) and ``labels`` are carried
    for display.
    """
    xs = [float(v) for v in values]
    n = len(xs)
    if n < 2:
        raise InputError("values", n, "at least 2 points for a control chart", "control chart")
    if any(not math.isfinite(v) for v in xs):
        raise InputError("values", values, "finite numbers", "control chart")
    b = n if baseline is None else baseline
    if isinstance(b, bool) or not isinstance(b, int) or not 2 <= b <= n:
        raise InputError("baseline", baseline, f"a number of points from 2 to {n}", "control chart")
    base = xs[:b]
    c = sum(base) / b if centre is None else float(centre)
    how = "given"
    if sigma is None:
        mr = [abs(y - x) for x, y in zip(base, base[1:])]
        s = (sum(mr) / len(mr)) / d2_pairs()
        how = f"mean moving range of the baseline / d2 (d2 = {d2_pairs():.4f})"
    else:
        s = float(sigma)
    if not s > 0:
        raise InputError("sigma", s, "a number > 0 (the baseline points are all equal?)", "control chart")
    if U is not None and len(U) != n:
        raise InputError("U", len(U), f"one expanded uncertainty per point ({n})", "control chart")
    if labels is not None and len(labels) != n:
        raise InputError("labels", len(labels), f"one label per point ({n})", "control chart")
    z = [(v - c) / s for v in xs]
    chart = ControlChart(values=tuple(xs), centre=c, sigma=s, baseline=b, labels=tuple(labels or ()),
                         U=tuple(U or ()), unit=unit, title=title, violations=special_causes(z, rules),
                         ewma=ewma(xs, c, s, ewma_lambda, ewma_L) if ewma_lambda is not None else None, sigma_from=how)
    return chart


def chart_from_entries(entries: Sequence[Any], **kwargs: Any) -> ControlChart:
    """An individuals chart of archive entries (values, U bars, measurement dates as labels)."""
    entries = [e for e in entries if e.value is not None]
    if not entries:
        raise InputError("series", 0, "archived records with a value (none matched)", "control chart")
    units = {e.unit for e in entries}
    if len(units) > 1:
        raise InputError("series", sorted(units), "records in one unit", "control chart")
    kwargs.setdefault("unit", units.pop())
    chart = individuals_chart([e.value for e in entries], U=[e.U for e in entries],
                              labels=[e.measured for e in entries], **kwargs)
    from dataclasses import replace
    return replace(chart, extra={"entries": [e.seq for e in entries]})


def differences(first: Sequence[Any], second: Sequence[Any]) -> tuple[tuple[str, float, float | None], ...]:
    """(date, value of ``first`` - value of ``second``, U of the difference) for each date both series have.

    For the reference probe against a second probe: the same field measured with
    each on the same day.  U of the difference is sqrt(U1^2 + U2^2), which
    leaves out the correlation of what the two measurements share (the timebase,
    the reference constant); that makes it larger, not smaller, than the U of the
    difference when that correlation is positive.  When a series has several
    entries on one day, the last added is used.
    """
    def by_day(entries):
        out = {}
        for e in sorted(entries, key=lambda e: e.seq):
            if e.value is not None:
                out[e.measured] = e
        return out

    a, b = by_day(first), by_day(second)
    rows = []
    for day in sorted(set(a) & set(b)):
        ea, eb = a[day], b[day]
        if ea.unit != eb.unit:
            raise InputError("series", (ea.unit, eb.unit), f"two series in one unit (on {day})", "control chart")
        U = math.hypot(ea.U, eb.U) if ea.U is not None and eb.U is not None else None
        rows.append((day, ea.value - eb.value, U))
    return tuple(rows)


def chart_of_differences(first: Sequence[Any], second: Sequence[Any], **kwargs: Any) -> ControlChart:
    """An individuals chart of :func:`differences` of two archived series."""
    rows = differences(first, second)
    if len(rows) < 2:
        raise InputError("series", len(rows), "at least 2 days on which both series were measured",
                         "control chart")
    units = {e.unit for e in first}
    kwargs.setdefault("unit", units.pop() if len(units) == 1 else "")
    return individuals_chart([r[1] for r in rows], U=[r[2] for r in rows], labels=[r[0] for r in rows], **kwargs)


_SERIES_KEYS = {"item", "measurand", "instrument", "against_item", "against_measurand", "against_instrument",
                "baseline", "ewma_lambda", "title"}


def chart_from_settings(lab: Any, name: str, *, ewma_lambda: float | None = None) -> ControlChart:
    """The chart of series ``name`` set up in the lab's ``settings.toml`` ``[monitoring.<name>]``.

    Keys: ``item`` (part of the records' item), ``measurand``, ``instrument``,
    ``baseline`` (points), ``ewma_lambda``, ``title``; with ``against_instrument``
    (and optionally ``against_item``, ``against_measurand``, which default to the
    first series' ones) the chart is of the day-by-day difference of the two series.
    """
    from .archive import Archive

    table = lab.table("monitoring")
    if name not in table or not isinstance(table[name], Mapping):
        known = ", ".join(sorted(k for k, v in table.items() if isinstance(v, Mapping))) or "none set up"
        raise InputError("--series", name, f"a series of settings.toml [monitoring] ({known})", str(lab.path))
    cfg = dict(table[name])
    bad = sorted(set(cfg) - _SERIES_KEYS)
    if bad:
        raise InputError(f"[monitoring.{name}] {bad[0]}", cfg[bad[0]], "one of " + ", ".join(sorted(_SERIES_KEYS)),
                         str(lab.settings_path))
    archive = Archive(lab)
    entries = archive.series(item=cfg.get("item"), measurand=cfg.get("measurand"), instrument=cfg.get("instrument"))
    lam = ewma_lambda if ewma_lambda is not None else cfg.get("ewma_lambda")
    kw = {"baseline": cfg.get("baseline"), "title": cfg.get("title", name), "ewma_lambda": lam}
    if any(k.startswith("against_") for k in cfg):
        other = archive.series(item=cfg.get("against_item", cfg.get("item")),
                               measurand=cfg.get("against_measurand", cfg.get("measurand")),
                               instrument=cfg.get("against_instrument"))
        return chart_of_differences(entries, other, **kw)
    return chart_from_entries(entries, **kw)


# ----------------------------------------------------------------------------
# drift between calibrations, and the interval review
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class DriftFit:
    """A straight line through an instrument's certified values: value = a + b (t - t0), t in days.

    ``slope_per_day`` b with ``u_slope``; ``intercept`` a at ``t0`` (the first
    certificate's date) with ``u_intercept`` and their covariance ``cov_ab``;
    ``s_residual`` the standard deviation of the residuals (n - 2 degrees of
    freedom); ``birge_ratio`` sqrt(chi2 / (n - 2)) when the points have u.
    """

    instrument: str
    quantity: str
    dates: tuple[str, ...]
    values: tuple[float, ...]
    u: tuple[float, ...]
    t0: str
    intercept: float
    slope_per_day: float
    u_intercept: float
    u_slope: float
    cov_ab: float
    s_residual: float | None
    birge_ratio: float | None
    stated_ageing_per_day: float | None = None

    def predict(self, day: _dt.date | str) -> tuple[float, float]:
        """Predicted value on ``day`` and its standard uncertainty from the fit."""
        t = (_as_date(day) - _dt.date.fromisoformat(self.t0)).days
        v = self.intercept + self.slope_per_day * t
        var = self.u_intercept ** 2 + t * t * self.u_slope ** 2 + 2 * t * self.cov_ab
        return v, math.sqrt(max(var, 0.0))

    def __repr__(self) -> str:
        return (f"<DriftFit {self.instrument} {self.quantity}: {fmt(self.slope_per_day, 3)} per day "
                f"(u {fmt(self.u_slope, 2)}), {len(self.values)} certificates>")

    def summary(self) -> str:
        lines = [f"{self.instrument} {self.quantity}: {len(self.values)} certificates, {self.dates[0]} to "
                 f"{self.dates[-1]}",
                 f"  drift {fmt(self.slope_per_day, 4)} per day = {fmt(self.slope_per_day * 365.25, 4)} per year, "
                 f"u {fmt(self.u_slope, 2)} per day"]
        if self.birge_ratio is not None:
            lines.append(f"  Birge ratio {self.birge_ratio:.2f} (about 1 when the certificates' u explain the scatter)")
        if self.stated_ageing_per_day is not None:
            ok = abs(self.slope_per_day) <= abs(self.stated_ageing_per_day)
            lines.append(f"  stated ageing {fmt(self.stated_ageing_per_day, 3)} per day: the fitted drift is "
                         + ("within it" if ok else "LARGER than the stated ageing: review the ageing bound of the "
                                                   "budget"))
        return "\n".join(lines)

    def to_dict(self) -> dict:
        return {"instrument": self.instrument, "quantity": self.quantity, "dates": list(self.dates),
                "values": list(self.values), "u": list(self.u), "t0": self.t0, "intercept": self.intercept,
                "slope_per_day": self.slope_per_day, "slope_per_year": self.slope_per_day * 365.25,
                "u_intercept": self.u_intercept, "u_slope": self.u_slope, "cov_ab": self.cov_ab,
                "s_residual": self.s_residual, "birge_ratio": self.birge_ratio,
                "stated_ageing_per_day": self.stated_ageing_per_day}

    def _repr_html_(self) -> str:
        rows = [(d, fmt(v, 6), fmt(u, 2)) for d, v, u in zip(self.dates, self.values, self.u)]
        return html_table(("certificate date", self.quantity, "u"), rows, css_class="fb-table fb-drift",
                          caption=f"{self.instrument}: drift {fmt(self.slope_per_day * 365.25, 3)} per year "
                                  f"(u {fmt(self.u_slope * 365.25, 2)})")


def _as_date(day: Any) -> _dt.date:
    if isinstance(day, _dt.date):
        return day
    return _dt.date.fromisoformat(str(day)[:10])


def drift(instrument: Any, quantity: str | None = None, uncertainty: str | None = None) -> DriftFit:
    """Fit the drift of ``quantity`` over an instrument's certificates (weighted least squares).

    ``quantity`` and ``uncertainty`` name keys of the certificates' ``values``;
    by default the instrument's ``review.quantity`` and ``review.uncertainty``,
    else ``u_<quantity>`` or ``u``.  With the points' u the covariance of the fit
    is taken as absolute (``numpy.polyfit(..., cov="unscaled")``); without them
    it is scaled by the residuals.
    """
    import numpy as np

    review = dict(instrument.review or {})
    q = quantity or review.get("quantity")
    if not q:
        raise InputError("--quantity", None, "a certified quantity (e.g. offset), or a [review] in the register",
                         f"instrument {instrument.id}")
    certs = [c for c in instrument.certificates if q in c.values]
    if len(certs) < 2:
        raise InputError("--quantity", q, f"a quantity given by at least 2 certificates of {instrument.id} "
                         f"({len(certs)} give it)", "drift")
    ukey = uncertainty or review.get("uncertainty") or (f"u_{q}" if f"u_{q}" in certs[0].values else "u")
    t0 = certs[0].date
    t = np.array([(c.date - t0).days for c in certs], dtype=float)
    y = np.array([float(c.values[q]) for c in certs])
    has_u = all(ukey in c.values and float(c.values[ukey]) > 0 for c in certs)
    u = np.array([float(c.values[ukey]) for c in certs]) if has_u else np.zeros(len(certs))
    if len(set(t)) < 2:
        raise InputError("certificates", [c.id for c in certs], "certificates of at least two dates", "drift")
    n = len(certs)
    if has_u:
        coef, cov = np.polyfit(t, y, 1, w=1 / u, cov="unscaled")
    else:
        # numpy's cov=True divides by n - 4; scale the unit-weight covariance by s^2 with n - 2 dof ourselves
        coef, cov = np.polyfit(t, y, 1, cov="unscaled")
        res0 = y - np.polyval(coef, t)
        cov = cov * (float(res0 @ res0) / (n - 2)) if n > 2 else np.full((2, 2), math.nan)
    b, a = float(coef[0]), float(coef[1])
    res = y - (a + b * t)
    s_res = float(math.sqrt(res @ res / (n - 2))) if n > 2 else None
    birge = float(math.sqrt(float(((res / u) ** 2).sum()) / (n - 2))) if has_u and n > 2 else None
    ageing = certs[-1].values.get("ageing_per_day")
    return DriftFit(instrument=instrument.id, quantity=q, dates=tuple(c.date.isoformat() for c in certs),
                    values=tuple(float(v) for v in y), u=tuple(float(v) for v in u), t0=t0.isoformat(),
                    intercept=a, slope_per_day=b, u_intercept=float(math.sqrt(cov[1, 1])),
                    u_slope=float(math.sqrt(cov[0, 0])), cov_ab=float(cov[0, 1]), s_residual=s_res,
                    birge_ratio=birge, stated_ageing_per_day=float(ageing) if ageing is not None else None)


@dataclass(frozen=True)
class IntervalReview:
    """The review of a recalibration interval by the control-chart method (ILAC-G24:2022).

    ``supported_days``: the longest interval after which the predicted change since
    calibration, |b| T + k sqrt((u_b T)^2 + u_cal^2), stays within ``limit``;
    ``current_days``: the interval of the latest certificate (due - date).
    """

    instrument: str
    quantity: str
    limit: float
    k: float
    slope_per_day: float
    u_slope: float
    u_cal: float
    current_days: int
    supported_days: float | None

    @property
    def verdict(self) -> str:
        if self.supported_days is None:
            return "the calibration uncertainty alone exceeds the limit: no interval is supported"
        if self.supported_days < self.current_days:
            return f"shorten the interval to {math.floor(self.supported_days)} days"
        return f"the current interval of {self.current_days} days is supported"

    def __repr__(self) -> str:
        return f"<IntervalReview {self.instrument} {self.quantity}: {self.verdict}>"

    def summary(self) -> str:
        sup = "none" if self.supported_days is None else f"{math.floor(self.supported_days)} days"
        return (f"{self.instrument} {self.quantity}: limit {fmt(self.limit, 3)}, k = {self.k:g}; drift "
                f"{fmt(self.slope_per_day, 3)} per day (u {fmt(self.u_slope, 2)}), u at calibration "
                f"{fmt(self.u_cal, 2)}\n  current interval {self.current_days} days; supported {sup}: {self.verdict}")

    def to_dict(self) -> dict:
        return {"instrument": self.instrument, "quantity": self.quantity, "limit": self.limit, "k": self.k,
                "slope_per_day": self.slope_per_day, "u_slope": self.u_slope, "u_cal": self.u_cal,
                "current_days": self.current_days, "supported_days": self.supported_days, "verdict": self.verdict,
                "method": "control chart (ILAC-G24:2022 / OIML D 10:2022)"}


def review_interval(instrument: Any, fit: DriftFit | None = None, *, limit: float | None = None,
                    k: float | None = None) -> IntervalReview:
    """Review the recalibration interval of ``instrument`` from its drift (ILAC-G24 control-chart method).

    ``limit``: how far the quantity may move from its certified value before the
    instrument must be recalibrated (the allowance the lab's budgets make for it);
    by default the instrument's ``review.limit``.  ``k`` (default
    ``review.k`` or 2) is the coverage factor of the prediction.
    """
    from scipy.optimize import brentq

    review = dict(instrument.review or {})
    fit = fit or drift(instrument)
    lim = limit if limit is not None else review.get("limit")
    if lim is None or not float(lim) > 0:
        raise InputError("--limit", lim, "the allowed change since calibration, a number > 0 (or [review] limit "
                         "in the register)", f"instrument {instrument.id}")
    kk = float(k if k is not None else review.get("k", 2.0))
    if not (math.isfinite(kk) and kk > 0):
        raise InputError("--k", kk, "a coverage factor > 0", f"instrument {instrument.id}")
    lim = float(lim)
    u_cal = fit.u[-1] if fit.u and fit.u[-1] > 0 else (fit.s_residual or 0.0)
    b, ub = abs(fit.slope_per_day), fit.u_slope if math.isfinite(fit.u_slope) else 0.0

    def excess(t: float) -> float:
        return b * t + kk * math.sqrt((ub * t) ** 2 + u_cal ** 2) - lim

    if excess(0.0) >= 0:
        supported = None
    elif b == 0 and ub == 0:
        supported = math.inf
    else:
        hi = 1.0
        while excess(hi) < 0 and hi < 1e7:
            hi *= 2
        supported = brentq(excess, 0.0, hi) if excess(hi) >= 0 else math.inf
    last = instrument.latest
    current = (last.due - last.date).days if last else 0
    return IntervalReview(instrument.id, fit.quantity, lim, kk, fit.slope_per_day, fit.u_slope, u_cal, current,
                          supported)


# ----------------------------------------------------------------------------
# interlaboratory comparisons and proficiency tests
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Score:
    """A performance statistic and its verdict: ``kind`` is "E_n", "z" or "zeta"."""

    kind: str
    value: float
    verdict: str
    label: str = ""

    def __repr__(self) -> str:
        return f"<Score {self.kind} = {self.value:.3g}: {self.verdict}>"

    def to_dict(self) -> dict:
        return {"kind": self.kind, "value": self.value, "verdict": self.verdict, "label": self.label}


def _positive(name: str, v: float) -> float:
    v = float(v)
    if not (math.isfinite(v) and v >= 0):
        raise InputError(name, v, "a finite number >= 0", "performance score")
    return v


def en_number(x: float, U_x: float, X: float, U_X: float, label: str = "") -> Score:
    """E_n = (x - X) / sqrt(U_x^2 + U_X^2) with expanded uncertainties (ISO 13528:2015).

    |E_n| <= 1 satisfactory, > 1 unsatisfactory.
    """
    d = math.hypot(_positive("U_lab", U_x), _positive("U_ref", U_X))
    if d == 0:
        raise InputError("U_lab, U_ref", (U_x, U_X), "not both zero", "E_n")
    e = (float(x) - float(X)) / d
    return Score("E_n", e, "satisfactory" if abs(e) <= 1 else "unsatisfactory", label)


def _two_three(v: float) -> str:
    a = abs(v)
    return "satisfactory" if a <= 2 else ("questionable" if a < 3 else "unsatisfactory")


def zeta_score(x: float, u_x: float, X: float, u_X: float, label: str = "") -> Score:
    """zeta = (x - X) / sqrt(u_x^2 + u_X^2) with standard uncertainties (ISO 13528:2015).

    |zeta| <= 2 satisfactory, 2 < |zeta| < 3 questionable, >= 3 unsatisfactory.
    """
    d = math.hypot(_positive("u_lab", u_x), _positive("u_ref", u_X))
    if d == 0:
        raise InputError("u_lab, u_ref", (u_x, u_X), "not both zero", "zeta")
    v = (float(x) - float(X)) / d
    return Score("zeta", v, _two_three(v), label)


def z_score(x: float, X: float, sigma_pt: float, label: str = "") -> Score:
    """z = (x - X) / sigma_pt, sigma_pt the scheme's standard deviation for proficiency assessment (ISO 13528:2015).

    Same verdicts as zeta.
    """
    s = _positive("sigma_pt", sigma_pt)
    if s == 0:
        raise InputError("sigma_pt", sigma_pt, "a number > 0", "z score")
    v = (float(x) - float(X)) / s
    return Score("z", v, _two_three(v), label)


@dataclass(frozen=True)
class ComparisonRound:
    """One round of a comparison or proficiency test with its scores."""

    id: str
    date: str
    x: float
    U_x: float
    k_x: float
    X: float
    U_X: float
    k_X: float
    sigma_pt: float | None
    scores: tuple[Score, ...]

    def to_dict(self) -> dict:
        return {"id": self.id, "date": self.date, "lab_value": self.x, "lab_U": self.U_x, "lab_k": self.k_x,
                "reference_value": self.X, "reference_U": self.U_X, "reference_k": self.k_X,
                "sigma_pt": self.sigma_pt, "scores": [s.to_dict() for s in self.scores]}


def score_rounds(doc: Mapping, where: str = "comparison file") -> tuple[ComparisonRound, ...]:
    """Scores of each ``[[rounds]]`` entry of a comparison file (see docs/lab.md)."""
    rounds = doc.get("rounds")
    if not isinstance(rounds, list) or not rounds:
        raise InputError("rounds", rounds, "a list of comparison rounds ([[rounds]] tables)", where)
    out = []
    need = ("id", "lab_value", "lab_U", "reference_value", "reference_U")
    for i, r in enumerate(rounds):
        at = f"{where}, rounds[{i}]"
        if not isinstance(r, Mapping):
            raise InputError(f"rounds[{i}]", r, "a table", where)
        for key in need:
            if key not in r:
                raise InputError(key, None, "given", at)
        for key in r:
            if key not in (*need, "date", "lab_k", "reference_k", "sigma_pt", "remarks"):
                raise InputError(key, r[key], "one of " + ", ".join((*need, "date", "lab_k", "reference_k",
                                                                       "sigma_pt", "remarks")), at)
        nums = {}
        for key in ("lab_value", "lab_U", "reference_value", "reference_U", "lab_k", "reference_k", "sigma_pt"):
            if key in r:
                v = r[key]
                if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                    raise InputError(key, v, "a finite number", at)
                nums[key] = float(v)
        kx, kX = nums.get("lab_k", 2.0), nums.get("reference_k", 2.0)
        for key, v in (("lab_k", kx), ("reference_k", kX)):
            if not v > 0:
                raise InputError(key, v, "a coverage factor > 0", at)
        label = str(r["id"])
        scores = [en_number(nums["lab_value"], nums["lab_U"], nums["reference_value"], nums["reference_U"], label),
                  zeta_score(nums["lab_value"], nums["lab_U"] / kx, nums["reference_value"], nums["reference_U"] / kX,
                             label)]
        if "sigma_pt" in nums:
            scores.append(z_score(nums["lab_value"], nums["reference_value"], nums["sigma_pt"], label))
        out.append(ComparisonRound(label, str(r.get("date", "")), nums["lab_value"], nums["lab_U"], kx,
                                   nums["reference_value"], nums["reference_U"], kX, nums.get("sigma_pt"),
                                   tuple(scores)))
    return tuple(out)


# the small values show their to_dict as a table in a notebook
for _cls in (Rule, Violation, EWMA, IntervalReview, Score, ComparisonRound):
    _cls._repr_html_ = dict_html
