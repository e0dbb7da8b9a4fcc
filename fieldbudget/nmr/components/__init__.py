"""The components of the NMR measurement file, each declared once, and everything derived from them.

Each module here declares one :class:`~._base.Component` (its section, its
keys with kind, unit, label, help and limits, and its build step).  From the
declarations come:

- the loader's allowed keys (:func:`section_keys`, :func:`top_keys`);
- the budget: :func:`build_budget` runs every component's build step in
  order and assembles the model equation from their terms;
- the JSON Schema of the file (:func:`schema`, shipped as
  ``fieldbudget/nmr/nmr-measurement.schema.json``);
- the form's fields (:func:`form_fields`);
- the key tables of the docs (:func:`key_tables`).

Adding a component is one module with a ``COMPONENT`` and its entry in
:data:`_MODULES` (or :func:`registered` for a test).
"""

from __future__ import annotations

import importlib
import json
from collections.abc import Iterator
from contextlib import contextmanager
from functools import cache
from pathlib import Path

from ... import constants
from ...engine import Budget, Measurand, Model
from ...errors import BudgetFileError, InputError
from ..nuclei import DEFAULT_NUCLEUS, nucleus
from ._base import KINDS, PLACES, Built, Component, Context, Key, Reader, Term
from .header import FILE_FORMAT

__all__ = ["FILE_FORMAT", "KINDS", "PLACES", "Built", "Component", "Context", "Key", "Reader", "Term",
           "build_budget", "components", "form_fields", "key_tables", "registered", "schema", "section_keys",
           "top_keys", "SCHEMA_ID", "SCHEMA_PATH", "schema_text", "validate"]

SCHEMA_ID = "https://fieldbudget.invalid/schema/nmr-measurement-1.json"
#: The shipped schema (generated from the declarations by :func:`schema_text`; a test keeps them equal).
SCHEMA_PATH = Path(__file__).resolve().parents[1] / "nmr-measurement.schema.json"

_MODULES = ("header", "g_factor", "shielding", "frequency", "line", "trace", "timebase", "drift", "temperature",
            "shape", "detection", "probe_perturbation", "position", "field_map", "curvature", "probe")

_extra: list[Component] = []


def components() -> tuple[Component, ...]:
    """Every component, in build order."""
    base = [importlib.import_module(f"{__name__}.{m}").COMPONENT for m in _MODULES]
    return tuple(sorted(base + _extra, key=lambda c: c.order))


@contextmanager
def registered(component: Component) -> Iterator[Component]:
    """Add ``component`` for the duration of a ``with`` block (a new component in a test)."""
    _extra.append(component)
    _validator.cache_clear()
    try:
        yield component
    finally:
        _extra.remove(component)
        _validator.cache_clear()


def sections() -> dict[str | None, list[Key]]:
    """Keys by section (``None``: the top level), in declaration order."""
    out: dict[str | None, list[Key]] = {}
    for c in components():
        out.setdefault(c.section, [])
        for k in c.keys:
            if any(k.name == o.name for o in out[c.section]):
                raise ValueError(f"key {k.name!r} of section {c.section!r} is declared twice")
            out[c.section].append(k)
    return out


def section_keys() -> dict[str, set[str]]:
    """The allowed keys of each section."""
    return {s: {k.name for k in keys} for s, keys in sections().items() if s is not None}


def top_keys() -> set[str]:
    """The allowed top-level keys: the top-level keys and the section names."""
    secs = sections()
    return {k.name for k in secs.get(None, [])} | {s for s in secs if s is not None}


# --- the budget ------------------------------------------------------------------


def build_budget(m) -> tuple[Budget, tuple]:
    """(budget, findings) of a measurement: every component's inputs and terms, in order."""
    secs = sections()
    decls = {s: {k.name: k for k in keys} for s, keys in secs.items()}
    top = Reader(m.description, m.where, "#", decls[None])
    top.check_keys(top_keys())
    if top.has("format") and m.description["format"] != FILE_FORMAT:
        raise top.fail("format", f"must be {FILE_FORMAT!r} (got {m.description['format']!r})")
    name = top.text("nucleus", DEFAULT_NUCLEUS)
    try:
        nuc = nucleus(name)
    except InputError as err:
        raise top.fail("nucleus", f"must be {err.allowed} (got {name!r})") from None
    codata = m.description.get("codata", constants.DEFAULT_EDITION)
    if isinstance(codata, bool) or not isinstance(codata, int) or codata not in constants.editions():
        raise top.fail("codata", f"must be one of the CODATA editions {list(constants.editions())}, a whole number "
                                 f"(got {codata!r})")
    p_cov = top.number("coverage_probability", 0.9545)
    readers = {}
    for s in secs:
        if s is None or not top.has(s):
            continue
        v = m.description[s]
        if not hasattr(v, "keys"):
            raise top.fail(s, f"must be an object (got {v!r})")
        r = Reader(v, m.where, top.at(s), decls[s])
        r.check_keys(decls[s])
        readers[s] = r
    ctx = Context(m, top, readers, nuc, codata)
    ctx.decls = decls
    terms: dict[str, list[str]] = {p: [] for p in PLACES}
    findings: list = []
    meta: dict = {}
    correlations: list = []
    for c in components():
        built = c.build(ctx)
        if built is None:
            continue
        ctx.inputs.extend(built.inputs)
        for t in built.terms:
            terms[t.place].append(t.expr)
        findings.extend(built.findings)
        meta.update(built.metadata)
        correlations.extend(built.correlations)
    if ctx.facts.get("gamma_note"):
        q0 = ctx.inputs[0]
        ctx.inputs[0] = q0.replace(note="; ".join(x for x in (q0.note, ctx.facts["gamma_note"]) if x))
    validate(m.description, m.where)  # the schema as a backstop: the build steps gave the precise messages
    expr = _equation(terms)
    try:
        budget = Budget(model=Model.from_expression(expr), inputs=tuple(ctx.inputs),
                        measurand=Measurand("B0", "T", "flux density at the reference point, before the probe is "
                                                       "inserted"),
                        coverage_probability=p_cov, title=top.text("title", "NMR field measurement"), metadata=meta,
                        correlations=tuple(correlations), second_order=bool(ctx.facts.get("second_order")))
    except InputError as err:  # pragma: no cover - the description was checked above
        raise BudgetFileError(m.where, "#", f"{err.field} must be {err.allowed} (got {err.value!r})") from None
    return budget, tuple(findings)


def _equation(terms: dict[str, list[str]]) -> str:
    num = f"({' + '.join(terms['frequency'])})"
    if terms["fraction"]:
        num += f" * (1 + {' + '.join(terms['fraction'])})"
    for d in terms["drift"]:
        num += f" * (1 + {d})"
    expr = f"{num} / ({' * '.join(terms['denominator'])})"
    sub = terms["subtract"]
    # the position terms (G_x * x_off, ...) together in one bracket, then each other term on its own
    pos = [s for s in sub if "_off" in s and not s.startswith("(")]
    rest = [s for s in sub if s not in pos]
    if pos:
        expr += f" - ({' + '.join(pos)})" if len(pos) > 1 else f" - {pos[0]}"
    for s in rest:
        expr += f" - {s}"
    return expr


# --- the JSON Schema -----------------------------------------------------------------


def _key_schema(k: Key) -> dict:
    num: dict = {"type": "number"}
    if k.lo is not None:
        num["exclusiveMinimum" if k.lo_open else "minimum"] = k.lo
    if k.hi is not None:
        num["exclusiveMaximum" if k.hi_open else "maximum"] = k.hi
    desc = (k.label + (f" ({k.unit})" if k.unit else "") + (f": {k.help}" if k.help else "")).replace("`", "")
    if k.kind == "number":
        s = dict(num)
    elif k.kind == "quantity":
        s = {"anyOf": [num, {"type": "string", "pattern": r"^\s*[-+0-9.eE]+\s*\S+\s*$"}]}
    elif k.kind == "numbers":
        s = {"type": "array", "items": num}
        if k.min_items is not None:
            s["minItems"] = k.min_items
        if k.max_items is not None:
            s["maxItems"] = k.max_items
    elif k.kind == "vector":
        arr = {"type": "array", "items": num, "minItems": 1, "maxItems": k.max_items or 3}
        s = {"anyOf": [num, arr]}
    elif k.kind in ("choice", "edition"):
        s = {"enum": list(k.choices)}
    elif k.kind == "text":
        s = {"type": "string"}
    elif k.kind == "boolean":
        s = {"type": "boolean"}
    elif k.kind == "file":
        s = {"type": "object", "required": ["path"],
             "properties": {"path": {"type": "string"}, "column": {"type": "string"},
                            "time_column": {"type": "string"}}, "additionalProperties": False}
    else:  # object
        s = {"type": "object"}
    s["description"] = desc
    return s


def schema() -> dict:
    """The JSON Schema (draft 2020-12) of the measurement file, after the lab register has filled in instruments."""
    secs = sections()
    props: dict = {k.name: _key_schema(k) for k in secs.get(None, [])}
    titles = {}
    for c in components():
        if c.section is not None:
            titles.setdefault(c.section, c.title.split(":")[0].replace("`", "").replace(" (**required**)", ""))
    for s, keys in secs.items():
        if s is None:
            continue
        sec = {"type": "object", "description": titles[s],
               "properties": {k.name: _key_schema(k) for k in keys}, "additionalProperties": False}
        req = [k.name for k in keys if k.required]
        if req:
            sec["required"] = req
        props[s] = sec
    return {"$schema": "https://json-schema.org/draft/2020-12/schema", "$id": SCHEMA_ID,
            "title": "fieldbudget NMR measurement file", "type": "object", "required": ["frequency"],
            "properties": props, "additionalProperties": False}


def schema_text() -> str:
    """The schema as the shipped file holds it (sorted keys, two-space indent, final newline)."""
    return json.dumps(schema(), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


@cache
def _validator():
    from jsonschema import Draft202012Validator

    # the generated schema; the shipped file is the same text (a test keeps them equal)
    return Draft202012Validator(schema())


def validate(description, where: str = "measurement") -> None:
    """Check a (register-resolved) description against the schema; BudgetFileError at the first error's pointer."""
    errors = sorted(_validator().iter_errors(_plain_json(description)), key=lambda e: list(e.absolute_path))
    if errors:
        e = errors[0]
        ptr = "#" + "".join(f"/{p}" for p in e.absolute_path)
        raise BudgetFileError(where, ptr, f"does not match the measurement-file schema: {e.message}")


def _plain_json(obj):
    if hasattr(obj, "items"):  # a key set to null is a key left out, for the loader and so for the schema
        return {str(k): _plain_json(v) for k, v in obj.items() if v is not None}
    if isinstance(obj, (list, tuple)):
        return [_plain_json(v) for v in obj]
    return obj


# --- the form and the docs ---------------------------------------------------------------


def form_fields() -> tuple[tuple[str, Key, str], ...]:
    """(dotted path, key, component title) of every key the form offers, in form order.

    A ``file`` key gives its ``path`` and ``column`` (and a drift log's
    ``time_column``) as text boxes; free objects are not offered.
    """
    out = []
    for c in components():
        for k in c.keys:
            if not k.form:
                continue
            path = k.name if c.section is None else f"{c.section}.{k.name}"
            out.append((path, k, c.title))
    return tuple(out)


def _key_cell(k: Key) -> str:
    parts = [k.label]
    if k.help:
        parts.append(k.help)
    lim = k.limits_text()
    if lim and k.kind in ("number", "quantity", "numbers", "vector"):
        parts.append(f"allowed: {lim}")
    if k.kind in ("choice", "edition") and k.name not in ("nucleus",):
        parts.append("one of " + ", ".join(f"`{c}`" for c in k.choices))
    return "; ".join(parts).replace("|", "\\|")


def key_tables(full: bool = True) -> str:
    """Markdown key tables of every component (``full``: key, unit, what it is; else one line per section)."""
    lines: list[str] = []
    if not full:
        lines += ["| section | keys |", "| --- | --- |"]
        secs = sections()
        for s, keys in secs.items():
            name = "top level" if s is None else f"`{s}`"
            lines.append(f"| {name} | " + ", ".join(f"`{k.name}`" for k in keys) + " |")
        return "\n".join(lines) + "\n"
    for c in components():
        lines += [f"### {c.title}", "", c.summary[0].upper() + c.summary[1:] + ".", "",
                  "| key | unit | what it is |", "| --- | --- | --- |"]
        for k in c.keys:
            lines.append(f"| `{k.name}` | {k.unit} | {_key_cell(k)} |")
        lines.append("")
    return "\n".join(lines)
