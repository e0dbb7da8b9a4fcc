"""The probe's own materials change the field at the sample to B0 (1 + d_probe) (the lab's characterisation)."""

from __future__ import annotations

from ...engine import InputQuantity, Normal
from ._base import Built, Component, Context, Key, Term


def _build(ctx: Context) -> Built | None:
    if not ctx.present("probe_perturbation"):
        return None
    pp = ctx.section("probe_perturbation")
    q = InputQuantity("d_probe", pp.number("value", 0.0), Normal(u=pp.number("u", required=True, nonnegative=True)),
                      unit="", source=pp.text("source", "lab's characterisation of the probe"),
                      description="fractional field change at the sample caused by the probe's materials",
                      role="lab_characterisation",
                      provenance={"report": pp.text("report")} if pp.has("report") else {})
    return Built(inputs=(q,), terms=(Term("denominator", "(1 + d_probe)"),))


COMPONENT = Component(
    name="probe_perturbation", section="probe_perturbation", order=100, group="probe", title="`probe_perturbation`",
    summary="the field change at the sample caused by the probe's materials, usually from a comparison with a "
            "reference probe",
    keys=(
        Key("value", "number", "probe perturbation", "fractional (default 0)", lo=-1.0, lo_open=True),
        Key("u", "number", "its standard uncertainty", "**required**", lo=0.0, required=True),
        Key("source", "text", "characterisation", "free text"),
        Key("report", "text", "characterisation report", "the identity of the lab's report, named in the "
            "traceability chain"),
    ),
    build=_build,
)
