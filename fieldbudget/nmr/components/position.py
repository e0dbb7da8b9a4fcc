"""Position in a gradient: the field at the reference point is the sample's field minus G . offset.

``offset_m`` is the sample centre minus the reference point.  A linear
gradient adds no shift of its own (the line centre is the field at the
sample's centroid).  G x with both uncertain has a second-order term that
first-order propagation drops (JCGM 100:2008 5.1.2 note); the budget asks the
engine for it.
"""

from __future__ import annotations

from ...engine import InputQuantity, Normal
from ._base import Built, Component, Context, Key, Term

_AXES = ("x", "y", "z")


def _build(ctx: Context) -> Built | None:
    top = ctx.top
    g = top.numbers("gradient_T_per_m", max_len=3, scalar_ok=True)
    x = top.numbers("offset_m", max_len=3, scalar_ok=True)
    ug = top.numbers("u_gradient_T_per_m", max_len=3, nonnegative=True, scalar_ok=True)
    ux = top.numbers("u_offset_m", max_len=3, nonnegative=True, scalar_ok=True)
    if g is None and x is None:
        for key, v in (("u_gradient_T_per_m", ug), ("u_offset_m", ux)):
            if v is not None:
                raise top.fail(key, "needs gradient_T_per_m and offset_m")
        return None
    if g is None or x is None:
        raise top.fail("gradient_T_per_m" if g is None else "offset_m",
                       "missing: the gradient and the offset go together (one number, or one per axis)")
    n = len(g)
    for key, v in (("offset_m", x), ("u_gradient_T_per_m", ug), ("u_offset_m", ux)):
        if v is not None and len(v) != n:
            raise top.fail(key, f"must have as many entries as gradient_T_per_m ({n})")
    ug = ug or (0.0,) * n
    ux = ux or (0.0,) * n
    report = top.text("gradient_report")
    prov = {"report": report} if report else {}
    axes = ("z",) if n == 1 else _AXES[:n]
    inputs, terms = [], []
    second = False
    for i, ax in enumerate(axes):
        if g[i] == 0 and ug[i] == 0:
            continue  # no gradient along this axis: the offset cannot matter, and the engine would flag it
        inputs += [
            InputQuantity(f"G_{ax}", g[i], Normal(u=ug[i]), unit="T/m", source="stated field gradient",
                          description=f"field gradient dB/d{ax} at the sample", role="lab_characterisation",
                          provenance=prov),
            InputQuantity(f"{ax}_off", x[i], Normal(u=ux[i]), unit="m", source="probe positioning",
                          description=f"{ax} of the sample centre minus the reference point", role="measured"),
        ]
        terms.append(Term("subtract", f"G_{ax} * {ax}_off"))
        second = second or (ug[i] > 0 and ux[i] > 0)
    ctx.facts["second_order"] = ctx.facts.get("second_order", False) or second
    return Built(inputs=tuple(inputs), terms=tuple(terms))


COMPONENT = Component(
    name="position", section=None, order=110, group="gradient and position", title="Position and gradient",
    summary="top-level keys; each one number (the z axis, along B0) or up to three (x, y, z), all of the same "
            "length; the offset is the sample centre minus the reference point",
    keys=(
        Key("gradient_T_per_m", "vector", "field gradient", "one value (along the offset) or x y z", unit="T/m",
            max_items=3),
        Key("u_gradient_T_per_m", "vector", "its standard uncertainty", unit="T/m", max_items=3, lo=0.0),
        Key("offset_m", "vector", "sample centre minus reference point", unit="m", max_items=3),
        Key("u_offset_m", "vector", "its standard uncertainty", unit="m", max_items=3, lo=0.0),
        Key("gradient_report", "text", "gradient measured in", "the lab's report of the field map or gradient "
            "measurement, named in the traceability chain"),
    ),
    build=_build,
)
