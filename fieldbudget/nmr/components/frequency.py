"""The frequency read: one reading with its u, repeated readings (Type A), or a CSV column; counter resolution.

Frequencies may be numbers in Hz or texts with a unit ("63.871224 MHz"),
converted by pint through ``fieldbudget.units``.  A finding warns when the
field f/(gamma/2pi) is implausible for an NMR or ESR reading (below 10 uT or
above 50 T; common practice): the usual cause is a value in MHz typed into a
``_Hz`` key.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping

from ..._io import read_named_text
from ...engine import InputQuantity, Normal, Rectangular
from ...errors import BudgetFileError, Finding
from ._base import Built, Component, Context, Key, Reader, Term

#: Fields (T) outside which a reading is implausible for NMR/ESR field measurement (common practice).
PLAUSIBLE_FIELD_T = (1e-5, 50.0)


def _build(ctx: Context) -> Built:
    if not ctx.present("frequency"):
        raise ctx.top.fail("frequency", "missing: give value_Hz with u_Hz, readings_Hz or readings_csv")
    fr = ctx.section("frequency")
    given = [k for k in ("value_Hz", "readings_Hz", "readings_csv") if fr.has(k)]
    if len(given) != 1:
        raise fr.fail(given[1] if len(given) > 1 else "value_Hz",
                      "give exactly one of value_Hz (with u_Hz), readings_Hz or readings_csv")
    src = fr.text("source", "")
    desc = "counter reading of the resonance frequency"
    if given[0] == "value_Hz":
        v = fr.number("value_Hz", positive=True)
        u = fr.number("u_Hz", required=True, nonnegative=True)
        dof = fr.number("dof", positive=True)
        q = InputQuantity("f_read", v, Normal(u=u, dof=math.inf if dof is None else dof), unit="Hz",
                          source=src or "single counter reading", description=desc, role="measured")
        ctx.facts["readings"] = 0
    else:
        if fr.has("u_Hz") or fr.has("dof"):
            raise fr.fail("u_Hz" if fr.has("u_Hz") else "dof", "left out with readings (Type A: s/sqrt(n), n - 1)")
        if given[0] == "readings_Hz":
            readings = fr.numbers("readings_Hz", min_len=2, nonnegative=True)
            where = "readings_Hz"
        else:
            readings = _csv_readings(fr, ctx.measurement)
            where = "readings_csv"
        if not all(r > 0 for r in readings):
            raise fr.fail(where, "readings must be frequencies > 0 Hz")
        q = InputQuantity.from_readings("f_read", readings, unit="Hz", role="measured",
                                        source=src or f"{len(readings)} counter readings: mean, s/sqrt(n), n - 1",
                                        description=desc)
        ctx.facts["readings"] = len(readings)
        ctx.facts["readings_key"] = f"frequency.{where}"
    inputs = [q]
    terms = [Term("frequency", "f_read")]
    res = fr.number("counter_resolution_Hz", positive=True)
    if res is not None:
        inputs.append(InputQuantity("d_res", 0.0, Rectangular(half_width=res / 2), unit="Hz", role="specification",
                                    source=f"counter resolution {res:g} Hz: rectangular, half the last digit",
                                    description="correction for the counter's resolution"))
        terms.append(Term("frequency", "d_res"))
    return Built(inputs=tuple(inputs), terms=tuple(terms), findings=tuple(_plausibility(ctx, q.estimate, given[0])))


def _plausibility(ctx: Context, f_hz: float, key: str):
    gamma_hz = abs(ctx.nucleus.gyromagnetic_ratio(ctx.codata).value) * 1e6
    b = f_hz / gamma_hz
    lo, hi = PLAUSIBLE_FIELD_T
    if lo <= b <= hi:
        return
    yield Finding(f"the frequency {f_hz:.9g} Hz gives {b:.3g} T for {ctx.nucleus.name}, outside the {lo:g} to "
                  f"{hi:g} T of NMR field measurement: check the unit (a value in MHz typed into a _Hz key gives "
                  "a millionth of the field; write it as a text with its unit, such as '63.871224 MHz')",
                  code="nmr.frequency_implausible", key=f"frequency.{key}",
                  values={"frequency_Hz": f_hz, "field_T": b, "low_T": lo, "high_T": hi})


def _csv_readings(fr: Reader, m) -> tuple[float, ...]:
    # not nmr._csvdata.read_table: a counter file skips blank cells, counts rows rather than lines, and its
    # messages name the pointer here and never quote the file's header or cells, which read_table does
    spec = fr.data["readings_csv"]
    ptr = fr.at("readings_csv")
    if not isinstance(spec, Mapping) or not isinstance(spec.get("path"), str) or not isinstance(
            spec.get("column"), str):
        raise BudgetFileError(m.where, ptr, "must be an object with 'path' and 'column' (text)")
    name = spec["path"]
    text, _ = read_named_text(name, m.base_dir, m.where, f"{ptr}/path")
    rows = list(csv.DictReader(io.StringIO(text, newline="")))
    col = spec["column"]
    if not rows or col not in rows[0]:
        cols = list(rows[0]) if rows else []
        # the header is not shown: messages never print another file's contents
        raise BudgetFileError(m.where, f"{ptr}/column", f"must name a column of {name!r} by its header (it has "
                              f"{len(cols)} column{'s' if len(cols) != 1 else ''}, none named {col!r})")
    out = []
    for i, row in enumerate(rows, start=2):
        cell = (row[col] or "").strip()
        if not cell:
            continue
        try:
            out.append(float(cell))
        except ValueError:
            raise BudgetFileError(m.where, f"{ptr}/column", f"row {i} of {name!r} is not a number in column "
                                  f"{col!r}") from None
    if len(out) < 2:
        raise BudgetFileError(m.where, ptr, f"needs at least 2 readings (got {len(out)})")
    return tuple(out)


COMPONENT = Component(
    name="frequency", section="frequency", order=40, group="frequency", title="`frequency` (**required**)",
    summary="the frequency read: exactly one of `value_Hz` (with `u_Hz`), `readings_Hz` or `readings_csv`",
    keys=(
        Key("readings_Hz", "numbers", "counter readings", "repeated readings: Type A, the mean, s/sqrt(n) and "
            "n - 1 degrees of freedom", unit="Hz", min_items=2, lo=0.0, lo_open=True),
        Key("readings_csv", "file", "readings file", "`{\"path\": ..., \"column\": ...}`: a column of a CSV file, "
            "the path relative to the measurement file"),
        Key("value_Hz", "quantity", "single reading", "instead of readings; a number in Hz or a text with a unit "
            "('63.871224 MHz')", unit="Hz", lo=0.0, lo_open=True),
        Key("u_Hz", "quantity", "its standard uncertainty", "with `value_Hz`", unit="Hz", lo=0.0),
        Key("dof", "number", "its degrees of freedom", "with `value_Hz`, if finite", lo=0.0, lo_open=True),
        Key("counter_resolution_Hz", "number", "counter resolution", "the last digit: rectangular, half-width "
            "half a digit", unit="Hz", lo=0.0, lo_open=True),
        Key("source", "text", "counter", "free text"),
    ),
    build=_build,
)
