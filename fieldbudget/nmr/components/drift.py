"""The field's drift during the measurement, (1 + y_drift) with estimate 0.

From a drift log (readings in the file, or a CSV with time stamps): the
relative standard deviation (n - 1 dof), or the Allan deviation at the
measurement interval, non-overlapping or overlapping, with the equivalent
degrees of freedom for white frequency noise
(:func:`fieldbudget.nmr.physics.allan_edf_white_fm`).  Or a stated stability.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..._io import read_named_file
from ...engine import InputQuantity, Normal, Rectangular
from ...errors import BudgetFileError, InputError
from .. import physics
from .._csvdata import read_table
from ._base import Built, Component, Context, Key, Reader, Term

_DESC = "fractional field drift during the measurement"


def _log(dr: Reader, ctx: Context) -> tuple[np.ndarray, float | None, str]:
    """(readings in Hz, logging interval tau0 in s or None, where) of the drift log."""
    if dr.has("readings_Hz"):
        return np.asarray(dr.numbers("readings_Hz", min_len=3, nonnegative=True)), None, "readings_Hz"
    spec = dr.data["log_csv"]
    ptr = dr.at("log_csv")
    m = ctx.measurement
    keys = ("path", "time_column", "column")
    if not isinstance(spec, Mapping) or not all(isinstance(spec.get(k), str) for k in keys) or set(spec) - set(keys):
        raise BudgetFileError(m.where, ptr, "must be an object with 'path', 'time_column' (s) and 'column' (Hz), "
                                            "all text")
    raw, _, target = read_named_file(spec["path"], m.base_dir, m.where, f"{ptr}/path")
    try:
        table = read_table(Path(target), needed=((spec["time_column"],), (spec["column"],)), min_rows=3,
                           what="drift log", data=raw)
    except BudgetFileError as err:
        raise BudgetFileError(m.where, ptr, f"{spec['path']!r}, {err.pointer}: {err.reason}") from None
    t = table.column(spec["time_column"])
    y = table.column(spec["column"])
    dt = np.diff(t)
    if not np.all(dt > 0):
        raise BudgetFileError(m.where, f"{ptr}/time_column", f"time stamps of {spec['path']!r} must increase")
    tau0 = float(np.median(dt))
    if np.max(np.abs(dt - tau0)) > 0.01 * tau0:  # 1 %: our choice, well inside what shifts tau noticeably
        raise BudgetFileError(m.where, f"{ptr}/time_column", f"time stamps of {spec['path']!r} must be evenly "
                              f"spaced within 1 % (median step {tau0:g} s) for an Allan deviation")
    return np.asarray(y, dtype=float), tau0, "log_csv"


def _build(ctx: Context) -> Built | None:
    if not ctx.present("drift"):
        return None
    dr = ctx.section("drift")
    src = dr.text("source", "")
    logs = [k for k in ("readings_Hz", "log_csv", "stability") if dr.has(k)]
    if len(logs) != 1:
        raise dr.fail(logs[1] if len(logs) > 1 else "readings_Hz",
                      "give exactly one of readings_Hz (a drift log) or stability (a stated value)"
                      if "log_csv" not in logs else "give exactly one of readings_Hz, log_csv or stability")
    if logs[0] == "stability":
        s = dr.number("stability", nonnegative=True)
        kind = dr.choice("distribution", default="normal")
        dist = Normal(u=s) if kind == "normal" else Rectangular(half_width=s)
        q = InputQuantity("y_drift", 0.0, dist, unit="", description=_DESC, role="specification",
                          source=src or f"stated field stability {s:g} ({kind})")
        return Built(inputs=(q,), terms=(Term("drift", "y_drift"),))
    y, tau0, where = _log(dr, ctx)
    mean = float(np.mean(y))
    if mean <= 0:
        raise dr.fail(where, "must be frequencies > 0 Hz")
    method = dr.choice("method", default="std")
    if method == "std":
        u = float(np.std(y, ddof=1)) / mean
        dof = len(y) - 1
        how = f"standard deviation of {len(y)} logged readings / their mean, n - 1 dof"
    else:
        m = _interval(dr, tau0)
        try:
            u, count = physics.allan_deviation(y / mean, m, overlapping=method == "overlapping-allan")
        except InputError:
            raise dr.fail("readings_per_interval" if tau0 is None else "interval_s",
                          f"leaves {len(y) // m} averaging intervals; at least 3 are needed") from None
        dof = physics.allan_edf_white_fm(count, m, overlapping=method == "overlapping-allan")
        kind = "overlapping" if method == "overlapping-allan" else "non-overlapping"
        tau = f", tau = {m * tau0:g} s" if tau0 is not None else ""
        how = (f"{kind} Allan deviation at {m} logging interval(s){tau} from {len(y)} readings; "
               f"{dof:.3g} equivalent dof for white frequency noise (Howe, Allan & Barnes 1981)")
        if dof < 1.0:  # coverage factors need nu >= 1; the source says when the floor is used
            how += f"; taken as 1 dof (the formula gives {dof:.3g})"
    q = InputQuantity("y_drift", 0.0, Normal(u=u, dof=max(dof, 1.0)), unit="", source=src or how,
                      description=_DESC, role="measured")
    return Built(inputs=(q,), terms=(Term("drift", "y_drift"),))


def _interval(dr: Reader, tau0: float | None) -> int:
    if tau0 is not None:
        if dr.has("readings_per_interval"):
            raise dr.fail("readings_per_interval", "is for readings_Hz; with log_csv give interval_s")
        tau = dr.number("interval_s", tau0, positive=True)
        m = round(tau / tau0)
        if m < 1 or not math.isclose(m * tau0, tau, rel_tol=0.01):
            raise dr.fail("interval_s", f"must be a whole number of logging intervals ({tau0:g} s) (got {tau!r})")
        return m
    if dr.has("interval_s"):
        raise dr.fail("interval_s", "is for log_csv (time stamps); with readings_Hz give readings_per_interval")
    m = dr.number("readings_per_interval", 1.0, positive=True)
    if m != int(m):
        raise dr.fail("readings_per_interval", f"must be a whole number >= 1 (got {m!r})")
    return int(m)


COMPONENT = Component(
    name="drift", section="drift", order=70, group="drift", title="`drift`",
    summary="the field's drift during the measurement (estimate 0): from a drift log or a stated stability",
    keys=(
        Key("readings_Hz", "numbers", "drift log", "frequency readings logged during the measurement", unit="Hz",
            min_items=3, lo=0.0),
        Key("log_csv", "file", "drift log file", "`{\"path\": ..., \"time_column\": ..., \"column\": ...}`: a CSV "
            "with time stamps in s and frequencies in Hz, evenly spaced"),
        Key("method", "choice", "drift from the log", "`std` (default: s / mean, n - 1 dof), `allan` "
            "(non-overlapping Allan deviation) or `overlapping-allan`; Allan dof are the equivalent dof for white "
            "frequency noise", choices=("std", "allan", "overlapping-allan")),
        Key("readings_per_interval", "number", "readings per measurement interval", "with `readings_Hz` and an "
            "Allan method (default 1)", lo=1.0),
        Key("interval_s", "number", "measurement interval", "with `log_csv` and an Allan method: tau, a whole "
            "number of logging intervals (default one)", unit="s", lo=0.0, lo_open=True),
        Key("stability", "number", "or: stated stability", "a fractional stability", lo=0.0),
        Key("distribution", "choice", "its distribution", "`normal` (a standard uncertainty, default) or "
            "`rectangular` (a half-width)", choices=("normal", "rectangular")),
        Key("source", "text", "source", "free text"),
    ),
    build=_build,
)
