"""Shape and susceptibility of the sample: B_nuc = B0 [1 + chi (1/3 - N_d)].

First order in chi with the Lorentz-cavity local field; N_d is the
magnetometric demagnetizing factor along B0 (``fieldbudget.nmr.physics``:
sphere, long and finite cylinders, spheroids, ellipsoids).  For a water
probe chi defaults to pure water at 20 degC (``fieldbudget.constants``,
water data) with its temperature coefficient carried as a bound.  A sphere
left implicit adds nothing.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from ... import constants
from ...engine import InputQuantity, Normal
from .. import physics
from ._base import Built, Component, Context, Key, Reader, Term

SHAPES = ("sphere", "cylinder", "long-cylinder", "spheroid", "ellipsoid")
CHI = "volume magnetic susceptibility of water"
CHI_TC = "relative temperature coefficient of the volume magnetic susceptibility of water"
CHI_T = "reference temperature of the volume magnetic susceptibility of water"


class CylinderSize(NamedTuple):
    """A finite cylinder's L/D, length L and u(L) in m, each None where the sample section cannot give it."""

    ratio: float | None
    length_m: float | None
    u_length_m: float | None


def cylinder_size(sample: Reader) -> CylinderSize:
    """L/D and L of a finite cylinder, each as stated (``length_over_diameter``, ``length_m`` with
    ``u_length_m``) or else derived from the other and ``diameter_m``: L/D = L / D, or L = (L/D) D with
    u(L) from u(D) and u(L/D) by the first-order law of propagation (JCGM 100:2008 5.1.2)."""
    g = sample.number("length_over_diameter", positive=True)
    d, length = sample.number("diameter_m", positive=True), sample.number("length_m", positive=True)
    ratio = g if g is not None else (length / d if d is not None and length is not None else None)
    if g is not None and d is not None and length is not None and abs(length / d - g) > 1e-6 * g:
        # the shape would use L/D and the curvature and field map L: one sample, two sizes.  1e-6 relative is
        # our choice: far below any stated dimension's uncertainty, above float rounding
        raise sample.fail("length_m", f"must agree with length_over_diameter x diameter_m = {g * d:.6g} m "
                                      f"(got {length:.6g} m); give one of the two, or both alike")
    if length is not None:
        return CylinderSize(ratio, length, sample.number("u_length_m", 0.0, nonnegative=True))
    if g is None or d is None:
        return CylinderSize(ratio, None, None)
    ud = sample.number("u_diameter_m", 0.0, nonnegative=True)
    ug = sample.number("u_length_over_diameter", 0.0, nonnegative=True)
    return CylinderSize(ratio, g * d, math.hypot(g * ud, d * ug))


def _build(ctx: Context) -> Built | None:
    sample, nuc = ctx.section("sample"), ctx.nucleus
    for k in ("diameter_m", "length_m"):
        sample.number(k, positive=True)
        if sample.has(f"u_{k}") and not sample.has(k):
            raise sample.fail(k, f"missing: u_{k} needs {k}")
        sample.number(f"u_{k}", nonnegative=True)
    shape = sample.choice("shape")
    has_n = sample.has("demagnetizing_factor")
    if shape and has_n:
        raise sample.fail("demagnetizing_factor", "give either 'shape' or 'demagnetizing_factor', not both")
    if shape is None and not has_n:
        for k in ("length_over_diameter", "axis", "axis_ratio", "semi_axes_m", "u_demagnetizing_factor"):
            if sample.has(k):
                raise sample.fail("shape", f"missing: {k!r} needs a shape")
        return None  # a sphere: no bulk shift, nothing to list
    n, u_n, how = _demag(sample, shape)
    qs = [InputQuantity("N_d", n, Normal(u=u_n), unit="", source=how, role="published_data" if shape else
                        "lab_characterisation", provenance={"citation": how} if shape else {},
                        description="magnetometric demagnetizing factor of the sample along B0")]
    water = False
    rv = None
    if sample.has("susceptibility"):
        chi = sample.number("susceptibility")
        u_chi = sample.number("u_susceptibility", 0.0, nonnegative=True)
        src_chi, role = sample.text("source_susceptibility", "stated sample susceptibility"), "lab_characterisation"
    elif nuc.water:
        rv = constants.lookup_other(CHI)
        chi, u_chi, src_chi, water, role = rv.value, rv.uncertainty, f"{rv.edition}: {rv.source}", True, \
            "published_data"
        if sample.has("u_susceptibility"):
            u_chi = sample.number("u_susceptibility", nonnegative=True)
    else:
        if abs(n - 1.0 / 3.0) > 0:
            raise sample.fail("susceptibility", f"missing: nucleus {nuc.name!r} has no default sample "
                              "susceptibility; give the SI volume susceptibility of the sample")
        chi, u_chi, src_chi, role = 0.0, 0.0, "stated sample susceptibility", "lab_characterisation"
    referenced = water and u_chi == rv.uncertainty  # traceability then derives the role from the data
    qs.append(InputQuantity("chi", chi, Normal(u=u_chi), unit="", source=src_chi, role="" if referenced else role,
                            provenance={"citation": rv.source} if water and not referenced else {},
                            description="SI volume magnetic susceptibility of the sample",
                            reference=CHI if referenced else None))
    t_sym = ctx.facts.get("t_sym")
    factor = "(1 + chi * (1/3 - N_d))"
    if water and t_sym is not None:
        # the water susceptibility's own temperature dependence (a bound with estimate 0 in the data)
        tc, t_chi = constants.lookup_other(CHI_TC), constants.lookup_other(CHI_T)
        qs.append(InputQuantity("c_chi", tc.value, Normal(u=tc.uncertainty), unit="1/K",
                                source=f"{tc.edition}: {tc.source}",
                                description="relative temperature coefficient of the water susceptibility",
                                note="the data state a rectangular bound; carried by its standard uncertainty",
                                reference=CHI_TC))
        qs.append(InputQuantity("t_chi", t_chi.value, Normal(u=0.0), unit="degC", source=t_chi.source,
                                description="temperature at which the water susceptibility is given",
                                reference=CHI_T))
        factor = f"(1 + chi * (1 + c_chi * ({t_sym} - t_chi)) * (1/3 - N_d))"
    ctx.facts["shape"] = {"shape": shape, "N_d": n, "chi": chi,
                          "axis": sample.choice("axis", ("parallel", "perpendicular")),
                          "ratio": cylinder_size(sample).ratio if shape == "cylinder" else None}
    return Built(inputs=tuple(qs), terms=(Term("denominator", factor),))


def _demag(sample: Reader, shape: str | None) -> tuple[float, float, str]:
    """(N, u(N), how) along B0."""
    if shape is None:
        n = sample.number("demagnetizing_factor")
        return n, sample.number("u_demagnetizing_factor", 0.0, nonnegative=True), "stated demagnetizing factor"
    u_given = sample.number("u_demagnetizing_factor", nonnegative=True)
    if shape == "sphere":
        return physics.demag_sphere(), u_given or 0.0, "sphere: N = 1/3"
    axis = sample.choice("axis", ("parallel", "perpendicular"))
    if shape == "ellipsoid":
        axes = sample.numbers("semi_axes_m", min_len=3, max_len=3)
        if axes is None or min(axes) <= 0:
            raise sample.fail("semi_axes_m", "must be three semi-axes > 0 in m, the first along B0")
        n = physics.demag_ellipsoid(*axes)[0]
        return n, u_given or 0.0, "ellipsoid, semi-axes " + ", ".join(f"{a:g}" for a in axes) + \
            " m (first along B0): Osborn 1945 / Carlson R_D"
    if axis is None:
        raise sample.fail("axis", "missing: 'parallel' or 'perpendicular' (the sample's axis relative to B0)")
    idx = 0 if axis == "parallel" else 1
    if shape == "long-cylinder":
        return physics.demag_long_cylinder(axis), u_given or 0.0, f"long cylinder {axis} to B0"
    if shape == "cylinder":
        g = cylinder_size(sample).ratio
        if g is None:
            raise sample.fail("length_over_diameter", "missing: give it, or diameter_m and length_m")
        ug = sample.number("u_length_over_diameter", 0.0, nonnegative=True)

        def fn(x):
            return physics.demag_cylinder(x)[idx]
        how = (f"finite cylinder L/D = {g:g} {axis} to B0: magnetometric N by the shape-function integral "
               "(chi = 0; Chen, Brug & Goldfarb 1991)")
        key = "length_over_diameter"
    else:  # spheroid
        g = sample.number("axis_ratio", required=True, positive=True)
        ug = sample.number("u_axis_ratio", 0.0, nonnegative=True)

        def fn(x):
            return physics.demag_spheroid(x)[idx]
        how = f"spheroid, axis ratio c/a = {g:g}, symmetry axis {axis} to B0: Osborn 1945"
        key = "axis_ratio"
    n = fn(g)
    if u_given is not None:
        return n, u_given, how
    if ug > 0:
        h = min(ug, g / 10) * 1e-2
        if g - h <= 0:
            raise sample.fail(f"u_{key}", "is too large for this ratio")
        slope = (fn(g + h) - fn(g - h)) / (2 * h)
        return n, abs(slope) * ug, how + f"; u(N) = |dN/d(ratio)| u(ratio), u(ratio) = {ug:g}"
    return n, 0.0, how


COMPONENT = Component(
    name="shape", section="sample", order=90, group="sample", title="`sample`: shape and susceptibility",
    summary="the bulk-susceptibility shift B_nuc = B0 [1 + chi (1/3 - N_d)]: give `shape` or "
            "`demagnetizing_factor`; a sphere left implicit adds nothing",
    keys=(
        Key("shape", "choice", "sample shape", "`sphere`, `cylinder`, `long-cylinder`, `spheroid` or `ellipsoid`",
            choices=SHAPES),
        Key("axis", "choice", "sample axis relative to B0", "`parallel` or `perpendicular`",
            choices=("parallel", "perpendicular")),
        Key("length_over_diameter", "number", "length / diameter", "finite cylinder: L/D (or `diameter_m` and "
            "`length_m`)", lo=0.0, lo_open=True),
        Key("u_length_over_diameter", "number", "its standard uncertainty", "carried into u(N) by dN/d(L/D)",
            lo=0.0),
        Key("axis_ratio", "number", "spheroid axis ratio c/a", "symmetry axis over equatorial semi-axis", lo=0.0,
            lo_open=True),
        Key("u_axis_ratio", "number", "its standard uncertainty", lo=0.0),
        Key("semi_axes_m", "numbers", "ellipsoid semi-axes", "[along B0, b, c]", unit="m", min_items=3,
            max_items=3, lo=0.0, lo_open=True),
        Key("demagnetizing_factor", "number", "or: demagnetizing factor N", "along B0, instead of `shape`",
            lo=0.0, hi=1.0),
        Key("u_demagnetizing_factor", "number", "its standard uncertainty", lo=0.0),
        Key("susceptibility", "number", "volume susceptibility chi", "SI; left out for pure water (looked up); "
            "other nuclei need it for a non-spherical sample", lo=-1.0, hi=1.0, lo_open=True),
        Key("u_susceptibility", "number", "its standard uncertainty", lo=0.0),
        Key("source_susceptibility", "text", "source of chi", "free text (a stated susceptibility)"),
        Key("diameter_m", "number", "diameter", "used by the curvature term, the gradient-broadening check and "
            "the line-shape computation", unit="m", lo=0.0, lo_open=True),
        Key("u_diameter_m", "number", "its standard uncertainty", "enters the curvature term", unit="m", lo=0.0),
        Key("length_m", "number", "length", unit="m", lo=0.0, lo_open=True),
        Key("u_length_m", "number", "its standard uncertainty", "enters the curvature term", unit="m", lo=0.0),
    ),
    build=_build,
)
