"""The counter's frequency standard: f_true = f_read (1 + y_tb + y_age).

A clock running fast by the fraction y reads low, so the true frequency is
f_read (1 + y); ageing since calibration is a rectangular bound +-|rate| days
with estimate 0 (common practice).  y > -1: a clock cannot run backwards.
"""

from __future__ import annotations

from ...engine import InputQuantity, Normal, Rectangular
from ._base import Built, Component, Context, Key, Term


def _build(ctx: Context) -> Built | None:
    if not ctx.present("timebase"):
        return None
    tb = ctx.section("timebase")
    off = tb.number("offset", 0.0)
    src = tb.text("source", "timebase calibration certificate")
    if tb.has("half_width") and tb.has("u"):
        raise tb.fail("u", "give either 'u' (standard uncertainty) or 'half_width' (a specification bound)")
    if tb.has("half_width"):
        dist, role = Rectangular(half_width=tb.number("half_width", nonnegative=True)), "specification"
    else:
        dist, role = Normal(u=tb.number("u", 0.0, nonnegative=True)), "calibrated"
    # the certificate by its identity, for the traceability chain (ISO/IEC 17025:2017 6.5, 7.8.4.1)
    facts = {k: tb.text(key) for k, key in (("certificate", "certificate"), ("issuer", "issuer"),
                                             ("date", "calibration_date")) if tb.has(key)}
    prov = facts if role == "calibrated" else (
        {"document": f"certificate {facts['certificate']}"} if "certificate" in facts else {})
    qs = [InputQuantity("y_tb", off, dist, unit="", source=src, role=role, provenance=prov,
                        description="fractional offset of the timebase, f_true = f_read (1 + y)")]
    terms = [Term("fraction", "y_tb")]
    if tb.has("ageing_per_day") or tb.has("days_since_calibration"):
        rate = tb.number("ageing_per_day", required=True)
        days = tb.number("days_since_calibration", required=True, nonnegative=True)
        doc = tb.text("ageing_document")
        qs.append(InputQuantity("y_age", 0.0, Rectangular(half_width=abs(rate) * days), unit="",
                                source=f"ageing {rate:g}/day x {days:g} days since calibration: rectangular bound",
                                description="timebase ageing since its calibration", role="specification",
                                provenance={"document": doc} if doc else {}))
        terms.append(Term("fraction", "y_age"))
    return Built(inputs=tuple(qs), terms=tuple(terms))


COMPONENT = Component(
    name="timebase", section="timebase", order=60, group="frequency standard", title="`timebase`",
    summary="the counter's frequency standard, f_true = f_read (1 + y)",
    keys=(
        Key("offset", "number", "fractional offset y", "from the certificate (default 0); f_true = f_read (1 + y)",
            lo=-1.0, lo_open=True),
        Key("u", "number", "standard uncertainty of y", "from a certificate", lo=0.0),
        Key("half_width", "number", "or: half-width of y", "a specification bound (rectangular), instead of `u`",
            lo=0.0),
        Key("ageing_per_day", "number", "ageing per day", "with `days_since_calibration`: a rectangular bound "
            "+-|rate| x days, estimate 0", unit="1/day"),
        Key("days_since_calibration", "number", "days since calibration", unit="d", lo=0.0),
        Key("source", "text", "certificate", "free text"),
        Key("certificate", "text", "certificate number", "the calibration certificate's identity, named in the "
            "traceability chain"),
        Key("issuer", "text", "issued by", "the calibration laboratory that issued it"),
        Key("calibration_date", "text", "date of calibration", "as on the certificate (YYYY-MM-DD)"),
        Key("ageing_document", "text", "ageing rate from", "the specification or drift history the ageing rate "
            "comes from, named in the traceability chain"),
    ),
    build=_build,
)
