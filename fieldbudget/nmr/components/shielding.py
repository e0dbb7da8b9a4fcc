"""The probe compound's own shielding relative to the reference value used: gamma (1 - sigma_s)."""

from __future__ import annotations

from ...engine import InputQuantity, Normal
from ._base import Built, Component, Context, Key, Term


def _build(ctx: Context) -> Built | None:
    if not ctx.present("shielding"):
        return None
    s = ctx.section("shielding")
    q = InputQuantity("sigma_s", s.number("value", required=True), Normal(u=s.number("u", 0.0, nonnegative=True)),
                      unit="", source=s.text("source", "stated shielding of the probe's compound"),
                      description="shielding of the probe nucleus in its compound, relative to the reference "
                                  "value used", role="lab_characterisation")
    return Built(inputs=(q,), terms=(Term("denominator", "(1 - sigma_s)"),))


COMPONENT = Component(
    name="shielding", section="shielding", order=30, group="nucleus and constants", title="`shielding`",
    summary="the fractional shielding of the probe nucleus in its compound, relative to the reference value used; "
            "its usual source is a calibration against a water sphere",
    keys=(
        Key("value", "number", "shielding sigma", "required when the section is given", lo=-1.0, hi=1.0,
            lo_open=True, hi_open=True),
        Key("u", "number", "its standard uncertainty", lo=0.0),
        Key("source", "text", "source"),
    ),
    build=_build,
)
