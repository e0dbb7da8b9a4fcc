"""The ESR sample's g-factor relative to the free electron's (nucleus ``electron`` only).

Enters the denominator as g_s / (-g_e): CODATA tabulates g_e < 0.
"""

from __future__ import annotations

from ... import constants
from ...engine import InputQuantity, Normal
from ._base import Built, Component, Context, Key, Term
from .header import edition_label


def _build(ctx: Context) -> Built | None:
    if not ctx.present("g_factor"):
        return None
    g = ctx.section("g_factor")
    if ctx.nucleus.kind != "electron":
        raise ctx.top.fail("g_factor", "is only for nucleus 'electron' (an ESR sample)")
    gs = g.number("value", required=True, positive=True)
    ge = constants.lookup("electron g factor", edition=ctx.codata)
    qs = (
        InputQuantity("g_s", gs, Normal(u=g.number("u", 0.0, nonnegative=True)), unit="",
                      source=g.text("source", "stated sample g-factor"), description="g-factor of the ESR sample",
                      role="lab_characterisation"),
        InputQuantity("g_e", ge.value, Normal(u=ge.uncertainty), unit="", reference="electron g factor",
                      source=f"{edition_label(ge)}: {ge.name}", description="free-electron g-factor",
                      note="CODATA gives g_e < 0; the model uses -g_e"),
    )
    return Built(inputs=qs, terms=(Term("denominator", "(g_s / " + ("(-g_e)" if ge.value < 0 else "g_e") + ")"),))


COMPONENT = Component(
    name="g_factor", section="g_factor", order=20, group="nucleus and constants", title="`g_factor` (electron only)",
    summary="the g-factor of the ESR sample, relative to the free electron's",
    keys=(
        Key("value", "number", "sample g-factor", "required when the section is given", lo=0.0, lo_open=True),
        Key("u", "number", "its standard uncertainty", lo=0.0),
        Key("source", "text", "source"),
    ),
    build=_build,
)
