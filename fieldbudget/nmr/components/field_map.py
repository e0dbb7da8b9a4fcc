"""Gradient and sample-volume terms from a measured field map (``field_map``), instead of typed numbers.

The map (CSV ``x_m,y_m,z_m`` and ``f_Hz`` or ``B_T``) is fitted with the
solid-harmonic expansion of ``fieldbudget.nmr.fieldmap``; its
:func:`~fieldbudget.nmr.fieldmap.sample_terms` give G_x, G_y, G_z at the
midpoint of sample and reference point, the offsets, and d_vol (the field
averaged over the sample volume minus its value at the sample centre), with
their correlations from the coefficients' covariance.  The budget subtracts
G . offset + d_vol.  B0 is taken along the map's z axis: a sample
``parallel`` to B0 has its axis along z, ``perpendicular`` along x (or
``sample_axis``).  The map's own findings (not representable at the order)
come with it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

from ..._io import read_named_file
from ...errors import BudgetFileError, FieldbudgetError
from .. import fieldmap
from .._csvdata import digest_of
from ._base import Built, Component, Context, Key, Term
from .shape import cylinder_size


def _build(ctx: Context) -> Built | None:
    if not ctx.present("field_map"):
        return None
    fm, top, m = ctx.section("field_map"), ctx.top, ctx.measurement
    for k in ("gradient_T_per_m", "offset_m", "u_gradient_T_per_m", "u_offset_m"):
        if top.has(k):
            raise top.fail(k, "give either field_map or the typed gradient and offset, not both")
    if ctx.present("curvature"):
        raise top.fail("curvature", "give either field_map (its d_vol holds the curvature) or curvature, not both")
    if not fm.has("path"):
        raise fm.fail("path", "missing: the path of the map's CSV file")
    name = fm.text("path")
    pos = fm.numbers("sample_position_m", min_len=3, max_len=3)
    if pos is None:
        raise fm.fail("sample_position_m", "missing: the sample centre [x, y, z] in m, in the map's coordinates")
    ref = fm.numbers("reference_point_m", min_len=3, max_len=3) or (0.0, 0.0, 0.0)
    u_pos = fm.numbers("u_sample_position_m", min_len=3, max_len=3, nonnegative=True) or (0.0, 0.0, 0.0)
    order = fm.number("order", 4.0)
    if order != int(order):
        raise fm.fail("order", f"must be a whole number (got {order!r})")
    raw, _, target = read_named_file(name, m.base_dir, m.where, fm.at("path"))
    sample = _sample_region(ctx, fm)
    try:
        fit = _fitted_map(_MapBytes(digest_of(raw), raw), str(target), ctx.nucleus.name, ctx.codata, int(order))
        terms = fieldmap.sample_terms(fit, pos, reference_point_m=ref, u_sample_position_m=u_pos, sample=sample)
    except BudgetFileError as err:
        raise BudgetFileError(m.where, fm.at("path"), f"{name!r}, {err.pointer}: {err.reason}") from None
    except FieldbudgetError as err:
        raise BudgetFileError(m.where, fm.at("path"), f"{name!r}: {err}") from None
    # the engine's second-order terms hold for uncorrelated inputs only; a map's u(G) is small, so with its
    # correlations the first-order law is used (u(G) u(x) is then left out, as the docs say)
    if not terms.correlations:
        ctx.facts["second_order"] = ctx.facts.get("second_order", False) or terms.second_order
    return Built(inputs=tuple(terms.inputs), terms=(Term("subtract", terms.expression),),
                 correlations=tuple(terms.correlations), findings=tuple(fit.warnings))


@dataclass(frozen=True)
class _MapBytes:
    """A map file's bytes, compared and hashed by their digest only (the cache key stays small to hash)."""

    digest: str
    data: bytes = field(compare=False, repr=False)


@lru_cache(maxsize=4)
def _fitted_map(raw: _MapBytes, path: str, nucleus: str, codata: int | None, order: int) -> fieldmap.FieldMapFit:
    """The map's fit, kept for the same bytes and settings: a form rebuilds the measurement on every entry,
    and refitting an unchanged map each time is the slow part.  The fit is immutable, so sharing it is safe."""
    fmap = fieldmap.read_map(Path(path), nucleus=nucleus, codata=codata, data=raw.data)
    return fieldmap.fit_map(fmap, order)


def _sample_region(ctx: Context, fm) -> dict | None:
    sample = ctx.section("sample")
    shape = sample.choice("shape", ("sphere", "cylinder", "long-cylinder", "spheroid", "ellipsoid")) or "sphere"
    d = sample.number("diameter_m", positive=True)
    if d is None:
        return None  # no volume: the field at the sample centre only
    if shape == "sphere":
        return {"shape": "sphere", "diameter_m": d}
    if shape != "cylinder":
        raise fm.fail(None, f"a map's volume average needs a sphere or a finite cylinder (sample shape is {shape!r})")
    length = cylinder_size(sample).length_m
    if length is None:
        raise sample.fail("length_m", "missing: the cylinder length in m is needed for the map's volume average")
    axis = fm.choice("sample_axis") or ("z" if sample.choice("axis", ("parallel", "perpendicular")) == "parallel"
                                        else "x")
    return {"shape": "cylinder", "diameter_m": d, "length_m": length, "axis": axis}


COMPONENT = Component(
    name="field_map", section="field_map", order=112, group="gradient and position", title="`field_map`",
    summary="gradient, offsets and the sample-volume average from a measured field map, with their correlations, "
            "instead of the typed gradient and curvature; B0 along the map's z axis",
    keys=(
        Key("path", "text", "field map (CSV)", "path relative to the measurement file: `x_m,y_m,z_m` and `f_Hz` or "
            "`B_T`, optionally `u_f_Hz` or `u_B_T`"),
        Key("sample_position_m", "numbers", "sample centre", "[x, y, z] in the map's coordinates", unit="m",
            min_items=3, max_items=3),
        Key("u_sample_position_m", "numbers", "its standard uncertainty", unit="m", min_items=3, max_items=3, lo=0.0),
        Key("reference_point_m", "numbers", "reference point", "[x, y, z] (default the map's origin)", unit="m",
            min_items=3, max_items=3),
        Key("order", "number", "expansion order", "of the solid-harmonic fit (default 4)", lo=1.0),
        Key("sample_axis", "choice", "sample axis in the map", "`x`, `y` or `z` (default from sample.axis: "
            "parallel z, perpendicular x)", choices=("x", "y", "z")),
        Key("source", "text", "source", "free text"),
    ),
    build=_build,
)
