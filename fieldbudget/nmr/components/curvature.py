"""Curvature: subtracts the sample average (B''/2) <q> of the field about the sample centre.

<q> from ``fieldbudget.nmr.physics.curvature_mean_square_m2`` (harmonic:
q = z^2 - rho^2/2, or the one-axis estimate q = z^2).  u(<q>) comes from the
uncertainties of the sample's diameter and length by the first-order law of
propagation (JCGM 100:2008 5.1.2), slopes by central differences.
"""

from __future__ import annotations

import math

from ...engine import InputQuantity, Normal
from .. import physics
from ._base import Built, Component, Context, Key, Term
from .shape import SHAPES, cylinder_size


def _build(ctx: Context) -> Built | None:
    if not ctx.present("curvature"):
        return None
    cv, sample = ctx.section("curvature"), ctx.section("sample")
    b2 = cv.number("d2B_dz2_T_per_m2", 0.0)
    ub2 = cv.number("u_d2B_dz2_T_per_m2", 0.0, nonnegative=True)
    model = cv.choice("model", default="harmonic")
    shape = sample.choice("shape", SHAPES) or "sphere"
    if shape not in ("sphere", "cylinder"):
        raise cv.fail(None, f"a curvature term needs a sphere or a finite cylinder (sample shape is {shape!r})")
    d = sample.number("diameter_m", positive=True)
    if d is None:
        raise sample.fail("diameter_m", "missing: the sample diameter in m is needed for the curvature term")
    ud = sample.number("u_diameter_m", 0.0, nonnegative=True)
    length, ul = None, 0.0
    if shape == "cylinder":
        _, length, ul = cylinder_size(sample)
        if length is None:
            raise sample.fail("length_m", "missing: the cylinder length in m is needed for the curvature term")
    axis = sample.choice("axis", ("parallel", "perpendicular"), "parallel")

    def q_of(dd, ll):
        return physics.curvature_mean_square_m2(shape, dd, ll, axis, model)

    q = q_of(d, length)
    parts = []
    h = d * 1e-6
    parts.append((q_of(d + h, length) - q_of(d - h, length)) / (2 * h) * ud)
    if length is not None:
        h = length * 1e-6
        parts.append((q_of(d, length + h) - q_of(d, length - h)) / (2 * h) * ul)
    u_q = math.hypot(*parts)
    if model == "harmonic":
        how = ("harmonic field, axisymmetric second order: q = z^2 - rho^2/2; sphere 0 (mean-value theorem), "
               "cylinder L^2/12 - R^2/4 along B0, R^2/8 - L^2/24 across")
    else:
        how = "one-axis estimate q = z^2: sphere a^2/5, cylinder L^2/12 along B0, R^2/4 across"
    dims = f"D = {d:g} m" + (f", L = {length:g} m, {axis}" if length is not None else "")
    if u_q > 0:
        dims += "; u(<q>) from u(D)" + (", u(L)" if length is not None else "")
    qs = (
        InputQuantity("B2", b2, Normal(u=ub2), unit="T/m^2", source=cv.text("source", "field map"),
                      description="second derivative d2B/dz2 of the field at the sample centre",
                      role="lab_characterisation"),
        InputQuantity("q_curv", q, Normal(u=u_q), unit="m^2", source=f"{how}; {shape} {dims}",
                      description=f"sample average <q> ({model} model)", role="lab_characterisation"),
    )
    return Built(inputs=qs, terms=(Term("subtract", "0.5 * B2 * q_curv"),))


COMPONENT = Component(
    name="curvature", section="curvature", order=120, group="curvature", title="`curvature`",
    summary="d2B/dz2 at the sample centre, along B0; the sample must be a sphere or a finite cylinder with "
            "`diameter_m` (and `length_m`), whose uncertainties enter u(<q>)",
    keys=(
        Key("d2B_dz2_T_per_m2", "number", "second derivative d2B/dz2", unit="T/m^2"),
        Key("u_d2B_dz2_T_per_m2", "number", "its standard uncertainty", unit="T/m^2", lo=0.0),
        Key("model", "choice", "average <q>", "`harmonic` (default: q = z^2 - rho^2/2; sphere 0, cylinder along "
            "B0 L^2/12 - R^2/4, across R^2/8 - L^2/24) or `one-axis` (q = z^2: sphere a^2/5, cylinder L^2/12 along, "
            "R^2/4 across)", choices=("harmonic", "one-axis")),
        Key("source", "text", "field map", "free text"),
    ),
    build=_build,
)
