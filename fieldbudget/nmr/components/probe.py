"""The probe's identity and tuning range (metadata and the tuning-range warning; no input)."""

from __future__ import annotations

from ._base import Built, Component, Context, Key


def _build(ctx: Context) -> Built | None:
    if not ctx.present("probe"):
        return None
    probe = ctx.section("probe")
    rng = probe.numbers("tuning_range_Hz", min_len=2, max_len=2, nonnegative=True)
    if rng is not None and rng[0] >= rng[1]:
        raise probe.fail("tuning_range_Hz", f"must be [low, high] with low < high (got {list(rng)})")
    probe.text("source")
    return Built(metadata={f"probe_{k}": probe.text(k) for k in ("name", "serial") if probe.has(k)})


COMPONENT = Component(
    name="probe", section="probe", order=130, group="probe", title="`probe`",
    summary="the probe's identity (copied into the budget's metadata) and its tuning range",
    keys=(
        Key("tuning_range_Hz", "numbers", "probe tuning range (low high)", "enables the tuning-range warning",
            unit="Hz", min_items=2, max_items=2, lo=0.0),
        Key("name", "text", "probe name"),
        Key("serial", "text", "probe serial number"),
        Key("source", "text", "source", "free text"),
    ),
    build=_build,
)
