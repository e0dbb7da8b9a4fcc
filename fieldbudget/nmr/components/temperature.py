"""The water sample's temperature: gamma'_p holds at 25 degC; f(t) = f(25 degC) [1 - alpha (t - 25 degC)].

Petley & Donaldson, Metrologia 20, 81 (1984).  A water probe whose file
gives no temperature carries an explicit assumption, 25 degC with a
rectangular +-5 K (u = 5 K/sqrt(3), JCGM 100 4.3.7; the +-5 K is our
assumption of a laboratory near its reference temperature), and a finding
says so: leaving the term out would take 25 degC as exact, with 10.4 ppb/K
at stake.
"""

from __future__ import annotations

import math

from ... import constants
from ...engine import InputQuantity, Normal, Rectangular
from ...errors import Finding
from ._base import Built, Component, Context, Key, Term

ALPHA = "proton shielding temperature coefficient in water"
T_REF = "shielded proton reference temperature"
#: Half-width (K) of the assumed temperature when a water probe's file gives none.
ASSUMED_HALF_WIDTH_K = 5.0


def _build(ctx: Context) -> Built | None:
    sample = ctx.section("sample")
    nuc = ctx.nucleus
    if sample.has("u_temperature_C") and not sample.has("temperature_C"):
        raise sample.fail("temperature_C", "missing: give the sample temperature with its uncertainty")
    if not nuc.water:
        if sample.has("temperature_C"):
            t = sample.number("temperature_C")
            ctx.facts["gamma_note"] = (f"sample temperature {t:g} degC recorded; no temperature term: the water "
                                       "shielding coefficient applies to the shielded proton only")
        return None
    alpha = constants.lookup_other(ALPHA)
    t_ref = constants.lookup_other(T_REF)
    findings = ()
    if sample.has("temperature_C"):
        t = sample.number("temperature_C")
        if not 0.0 < t < 100.0:
            raise sample.fail("temperature_C", f"must be a number in (0, 100) degC for a water sample, liquid water "
                                               f"(got {t!r})")
        dist = Normal(u=sample.number("u_temperature_C", 0.0, nonnegative=True))
        t_q = InputQuantity("t_s", t, dist, unit="degC", source=sample.text("source", "sample thermometer"),
                            description="temperature of the water sample", role="measured")
    else:
        hw = ASSUMED_HALF_WIDTH_K
        t = t_ref.value
        t_q = InputQuantity("t_s", t, Rectangular(half_width=hw), unit="degC", role="convention",
                            source=f"assumed: the file gives no sample temperature; {t:g} degC +-{hw:g} K "
                                   "(rectangular)", description="temperature of the water sample (assumed)")
        findings = (Finding(f"no sample temperature is given for the water probe: {t:g} degC +-{hw:g} K "
                            f"(rectangular, u = {hw / math.sqrt(3):.2g} K) is assumed, which adds "
                            f"{alpha.value * hw / math.sqrt(3) * 1e9:.2g} ppb; give sample.temperature_C",
                            code="nmr.temperature_assumed", key="sample.temperature_C",
                            values={"assumed_C": t, "half_width_K": hw}),)
    qs = (
        InputQuantity("alpha_T", alpha.value, Normal(u=alpha.uncertainty), unit="1/K",
                      source=f"{alpha.edition}: {alpha.source}",
                      description="temperature coefficient of the proton shielding in a water sphere",
                      note=f"valid {alpha.valid_from:g} to {alpha.valid_to:g} degC", reference=ALPHA),
        t_q,
        InputQuantity("t_ref", t_ref.value, Normal(u=0.0), unit="degC", source=t_ref.source,
                      description="reference temperature of gamma'_p (exact by convention)", reference=T_REF),
    )
    ctx.facts["t_sym"] = "t_s"
    return Built(inputs=qs, terms=(Term("denominator", "(1 - alpha_T * (t_s - t_ref))"),), findings=findings)


COMPONENT = Component(
    name="temperature", section="sample", order=80, group="sample", title="`sample`: temperature",
    summary="the water sample's temperature (shielded-proton only; other nuclei record it): without it, a water "
            "probe carries 25 degC +-5 K (rectangular) and a warning",
    keys=(
        Key("temperature_C", "number", "sample temperature", "water: must lie in (0, 100) degC; the shielding "
            "coefficient was measured from 5 to 45 degC", unit="degC", lo=-273.15, lo_open=True),
        Key("u_temperature_C", "number", "its standard uncertainty", unit="degC", lo=0.0),
        Key("source", "text", "thermometer", "free text"),
    ),
    build=_build,
)
