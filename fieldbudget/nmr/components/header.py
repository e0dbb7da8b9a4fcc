"""Top-level keys: the file's identity, the nucleus and its reference gyromagnetic ratio, CODATA edition.

The reference ratio gamma/2pi is looked up in ``fieldbudget.constants`` by
the nucleus (``fieldbudget.nmr.nuclei``); it enters the denominator as
``gamma * 1e6`` (MHz/T to Hz/T).
"""

from __future__ import annotations

from collections.abc import Mapping

from ... import constants
from ...engine import InputQuantity, Normal
from ..nuclei import DEFAULT_NUCLEUS, nucleus_names
from ._base import Built, Component, Context, Key, Term

FILE_FORMAT = "fieldbudget-nmr/1"


def edition_label(rv) -> str:
    return getattr(rv, "edition_label", None) or str(rv.edition)


def plain(obj):
    """Deep copy of JSON-like data into plain dicts/lists."""
    if isinstance(obj, Mapping):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    return obj


def _build(ctx: Context) -> Built:
    top, nuc = ctx.top, ctx.nucleus
    rv = nuc.gyromagnetic_ratio(ctx.codata)
    # The current CODATA name (not an older edition's spelling), so that engine.rebase can re-look it up; a
    # derived ratio (the deuteron's mu_d/h) by the name under which constants.lookup re-derives it per edition.
    ref_name = nuc.reference if nuc.kind in ("codata", "electron") else rv.name if nuc.kind == "derived" else None
    sign = "the magnitude of a negative tabulated ratio is used" if rv.value < 0 else ""
    if ref_name and nuc.kind != "derived":
        role, prov = "", {}  # engine.traceability derives it from the CODATA reference
    else:
        role, prov = "published_data", {"citation": f"{edition_label(rv)}: {rv.source}"}
    q = InputQuantity(
        nuc.symbol, abs(rv.value), Normal(u=rv.uncertainty), unit="MHz/T", reference=ref_name,
        source=f"{edition_label(rv)}: {rv.name}" + ("" if nuc.kind in ("codata", "electron") else f" ({rv.source})"),
        description=f"gamma/2pi, {nuc.condition}", role=role, provenance=prov,
        note="; ".join(x for x in (nuc.note, sign) if x))
    meta = {"kind": "nmr-field", "nucleus": nuc.name, "codata": ctx.codata, "reference_condition": nuc.condition,
            "measurement_format": FILE_FORMAT}
    for key in ("id", "title"):
        if top.has(key):
            meta[key] = top.text(key)
    top.text("description")
    if top.has("metadata"):
        md = top.data["metadata"]
        if not isinstance(md, Mapping):
            raise top.fail("metadata", "must be an object")
        meta["measurement_metadata"] = plain(md)
    return Built(inputs=(q,), terms=(Term("denominator", f"{nuc.symbol} * 1e6"),), metadata=meta)


COMPONENT = Component(
    name="header", section=None, order=10, group="nucleus and constants", title="Top level",
    summary="identity of the file, the probe nucleus and the CODATA edition of its reference ratio",
    keys=(
        Key("format", "choice", "file format", f"{FILE_FORMAT!r} (checked if present)", choices=(FILE_FORMAT,),
            form=False),
        Key("id", "text", "identifier", "your identifier; copied into the budget's metadata"),
        Key("title", "text", "title", "copied into the budget's metadata and its title"),
        Key("description", "text", "description", "free text"),
        Key("metadata", "object", "metadata", "a free object, copied into the budget's metadata as "
            "`measurement_metadata`", form=False),
        Key("nucleus", "choice", "nucleus", f"the probe nucleus (default {DEFAULT_NUCLEUS!r}): shielded-proton, "
            "proton, shielded-helion, deuteron, electron, or an IUPAC 2001 isotope label (7Li, 19F, ...)",
            choices=tuple(nucleus_names())),
        Key("codata", "edition", "CODATA edition", "edition year of the reference values (default: the newest)",
            choices=tuple(constants.editions())),
        Key("coverage_probability", "number", "coverage probability", "p for the expanded uncertainty "
            "(default 0.9545)", lo=0.0, hi=1.0, lo_open=True, hi_open=True),
    ),
    build=_build,
)
