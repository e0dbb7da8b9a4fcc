"""A lab's measurement procedure as data: the frozen values read from its TOML file.

A procedure file (format ``fieldbudget-procedure/1``, documented in
``docs/procedures.md``) lists the steps of a lab procedure with their
instruction text, the *components* that go into the measurement (which the lab
fixes, with their source, and which the operator enters), training text per
component, the acceptance limits and the safety cautions.  A lab edits the
file, not the code.

The file is parsed with :mod:`tomllib` and checked against the JSON Schema
shipped in ``data/procedure.schema.json`` with :mod:`jsonschema`; the checks a
schema cannot express (cross references between steps, components, cautions
and limits) are written here by hand because they are specific to this format.
Every error is a :class:`~fieldbudget.errors.BudgetFileError` naming the file,
the key path (``steps[2].components[0]``) and what is allowed.
"""

from __future__ import annotations

import json
import math
import os
import tomllib
from dataclasses import dataclass, field
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from .. import _display
from ..errors import BudgetFileError

__all__ = [
    "FORMAT",
    "KINDS",
    "RESULT_QUANTITIES",
    "AcceptanceLimit",
    "CodataPolicy",
    "Component",
    "Procedure",
    "SafetyCaution",
    "Step",
    "Training",
    "load_procedure",
    "procedure_from_dict",
    "procedure_schema",
]

FORMAT = "fieldbudget-procedure/1"
KINDS = ("nmr-field", "teslameter-calibration")

#: Result quantities an acceptance limit may name, per procedure kind, with their unit.
RESULT_QUANTITIES: dict[str, dict[str, str]] = {
    "nmr-field": {
        "value": "T",
        "standard_uncertainty": "T",
        "expanded_uncertainty": "T",
        "relative_expanded_uncertainty": "1",
        "coverage_factor": "1",
        "effective_dof": "1",
        "warning_count": "1",
    },
    "teslameter-calibration": {
        "max_abs_error": "T",
        "max_expanded_uncertainty": "T",
        "nonconforming_points": "1",
        "warning_count": "1",
    },
}

CODATA_COMPONENT = "codata_edition"


@cache
def procedure_schema() -> dict:
    """The JSON Schema of the procedure file format (a fresh parse is cached; do not mutate)."""
    text = resources.files(__package__).joinpath("data/procedure.schema.json").read_text("utf-8")
    return json.loads(text)


def _plain(value: Any) -> Any:
    """A JSON-ready copy of a TOML value (tuples become lists)."""
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    return value


def _freeze(value: Any) -> Any:
    """An immutable copy of a TOML value (lists become tuples)."""
    if isinstance(value, (list, tuple)):
        return tuple(_freeze(v) for v in value)
    return value


@dataclass(frozen=True)
class Training:
    """Training text for one component: what it is, why it is in the budget, a typical value."""

    what: str
    why: str
    typical: str

    def to_dict(self) -> dict:
        return {"what": self.what, "why": self.why, "typical": self.typical}

    def _repr_html_(self) -> str:
        rows = (("What it is", self.what), ("Why it is there", self.why), ("Typical value", self.typical))
        return _display.html_table(("", ""), rows, css_class="fb-proc-training")


@dataclass(frozen=True)
class Component:
    """One value that goes into the measurement, set by the lab or entered by the operator.

    ``target`` is the dotted key path in the measurement dict the value is
    written to (e.g. ``"frequency.readings_Hz"``).  ``value`` is the lab's value
    (``set_by == "lab"``) or the operator's default (may be ``None``).
    ``minimum``/``maximum`` bound what the operator may type (plausibility, not
    acceptance: a value outside them is refused, not judged).
    """

    id: str
    target: str
    label: str
    kind: str
    set_by: str
    unit: str = ""
    value: Any = None
    source: str = ""
    required: bool = True
    choices: tuple = ()
    minimum: float | None = None
    maximum: float | None = None
    help: str = ""
    training: Training | None = None

    @property
    def fixed(self) -> bool:
        """True when the lab fixes the value (the operator cannot change it)."""
        return self.set_by == "lab"

    def __repr__(self) -> str:
        who = "fixed by the lab" if self.fixed else "entered by the operator"
        unit = f" [{self.unit}]" if self.unit else ""
        return f"<Component {self.id!r} -> {self.target}{unit}, {self.kind}, {who}>"

    def _repr_html_(self) -> str:
        e = _display.escape
        who = f"fixed by the lab ({e(self.source)})" if self.fixed else "entered by the operator"
        value = "" if self.value is None else f" = <code>{e(self.value)}</code> {e(self.unit)}"
        return f'<div class="fb-proc-component"><strong>{e(self.label)}</strong>{value}: {who}</div>'

    def to_dict(self) -> dict:
        d = {
            "id": self.id, "target": self.target, "label": self.label, "kind": self.kind,
            "set_by": self.set_by, "unit": self.unit, "value": _plain(self.value),
            "source": self.source, "required": self.required, "choices": list(self.choices),
            "min": self.minimum, "max": self.maximum, "help": self.help,
            "training": self.training.to_dict() if self.training else None,
        }
        return d


@dataclass(frozen=True)
class Step:
    """One step of the procedure: its instruction and the components entered in it."""

    id: str
    title: str
    instruction: str
    components: tuple[str, ...] = ()
    cautions: tuple[str, ...] = ()
    training: str = ""  # what a trainee should understand in this step (shown in training mode)

    def __repr__(self) -> str:
        return f"<Step {self.id!r}: {self.title} ({len(self.components)} components)>"

    def _repr_html_(self) -> str:
        e = _display.escape
        return f'<div class="fb-proc-step"><strong>{e(self.title)}</strong><p>{e(self.instruction)}</p></div>'

    def to_dict(self) -> dict:
        return {"id": self.id, "title": self.title, "instruction": self.instruction,
                "components": list(self.components), "cautions": list(self.cautions), "training": self.training}


@dataclass(frozen=True)
class SafetyCaution:
    """A safety caution shown at the top of the procedure and beside the steps that cite it."""

    id: str
    title: str
    text: str

    def __repr__(self) -> str:
        return f"<SafetyCaution {self.id!r}: {self.title}>"

    def _repr_html_(self) -> str:
        e = _display.escape
        return f'<div class="fb-proc-caution"><strong>{e(self.title)}.</strong> {e(self.text)}</div>'

    def to_dict(self) -> dict:
        return {"id": self.id, "title": self.title, "text": self.text}


@dataclass(frozen=True)
class AcceptanceLimit:
    """A limit the finished measurement must meet; both bounds are inclusive.

    Exactly one of ``result`` (a quantity of the evaluated result, see
    :data:`RESULT_QUANTITIES`) and ``component`` (a component id) is set.
    """

    id: str
    text: str
    result: str | None = None
    component: str | None = None
    minimum: float | None = None
    maximum: float | None = None

    @property
    def subject(self) -> str:
        return self.result if self.result is not None else str(self.component)

    def describe(self) -> str:
        """The limit in words, e.g. ``"18 <= sample_temperature <= 28"``."""
        lo = "" if self.minimum is None else f"{_display.fmt(self.minimum)} <= "
        hi = "" if self.maximum is None else f" <= {_display.fmt(self.maximum)}"
        return f"{lo}{self.subject}{hi}"

    def __repr__(self) -> str:
        return f"<AcceptanceLimit {self.id!r}: {self.describe()}>"

    def _repr_html_(self) -> str:
        e = _display.escape
        return f'<div class="fb-proc-limit">{e(self.text)}: <code>{e(self.describe())}</code></div>'

    def to_dict(self) -> dict:
        return {"id": self.id, "text": self.text, "result": self.result, "component": self.component,
                "min": self.minimum, "max": self.maximum}


@dataclass(frozen=True)
class CodataPolicy:
    """Which CODATA edition the lab uses, and whether the operator may pick another."""

    edition: int
    operator_may_choose: bool = False
    allowed: tuple[int, ...] = ()
    reason: str = ""

    def __repr__(self) -> str:
        how = f"operator may choose from {list(self.allowed)}" if self.operator_may_choose else "fixed"
        return f"<CodataPolicy CODATA {self.edition}, {how}>"

    def _repr_html_(self) -> str:
        return f"<span>CODATA {self.edition} ({_display.escape(self.reason or 'lab policy')})</span>"

    def to_dict(self) -> dict:
        return {"edition": self.edition, "operator_may_choose": self.operator_may_choose,
                "allowed": list(self.allowed), "reason": self.reason}


@dataclass(frozen=True)
class Procedure:
    """A lab procedure read from its file; see :func:`load_procedure`."""

    id: str
    name: str
    version: str
    lab: str
    kind: str
    summary: str = ""
    approved_by: str = ""
    issued: str = ""
    codata: CodataPolicy | None = None
    components: tuple[Component, ...] = ()
    steps: tuple[Step, ...] = ()
    acceptance: tuple[AcceptanceLimit, ...] = ()
    safety: tuple[SafetyCaution, ...] = ()
    path: str = field(default="", compare=False)
    # the file's [[practice]] cases as JSON text, checked by procedure.practice when used (None: not given)
    practice_json: str | None = field(default=None, compare=False, repr=False)

    def component(self, component_id: str) -> Component:
        """The component named ``component_id`` (``KeyError`` naming the known ids if absent)."""
        for c in self.components:
            if c.id == component_id:
                return c
        known = ", ".join(c.id for c in self.components)
        raise KeyError(f"no component {component_id!r} in procedure {self.id!r}; known: {known}")

    def caution(self, caution_id: str) -> SafetyCaution:
        for s in self.safety:
            if s.id == caution_id:
                return s
        raise KeyError(f"no safety caution {caution_id!r} in procedure {self.id!r}")

    @property
    def fixed_components(self) -> tuple[Component, ...]:
        return tuple(c for c in self.components if c.fixed)

    @property
    def operator_components(self) -> tuple[Component, ...]:
        return tuple(c for c in self.components if not c.fixed)

    def __repr__(self) -> str:
        return (f"<Procedure {self.id!r} v{self.version} ({self.kind}) of {self.lab}: "
                f"{len(self.steps)} steps, {len(self.components)} components>")

    def to_dict(self) -> dict:
        return {
            "id": self.id, "name": self.name, "version": self.version, "lab": self.lab,
            "kind": self.kind, "summary": self.summary, "approved_by": self.approved_by,
            "issued": self.issued, "codata": self.codata.to_dict() if self.codata else None,
            "components": [c.to_dict() for c in self.components],
            "steps": [s.to_dict() for s in self.steps],
            "acceptance": [a.to_dict() for a in self.acceptance],
            "safety": [s.to_dict() for s in self.safety],
        }

    def _repr_html_(self) -> str:
        e = _display.escape
        head = (f'<div class="fb-proc-summary"><strong>{e(self.name)}</strong> '
                f"v{e(self.version)} &middot; {e(self.lab)}")
        if self.summary:
            head += f"<p>{e(self.summary)}</p>"
        steps = "".join(f"<li>{e(s.title)}</li>" for s in self.steps)
        return head + f"<ol>{steps}</ol></div>"


# ---------------------------------------------------------------- loading


def _path_text(parts) -> str:
    """``["steps", 2, "title"]`` -> ``"steps[2].title"`` (the key path a lab sees)."""
    out = ""
    for p in parts:
        if isinstance(p, int):
            out += f"[{p}]"
        else:
            out += f".{p}" if out else str(p)
    return out or "(top level)"


def _schema_reason(err) -> str:
    """What is wrong and what is allowed, in words, for one jsonschema error."""
    v, val, inst = err.validator, err.validator_value, err.instance
    if v == "required":
        missing = [k for k in val if isinstance(inst, dict) and k not in inst]
        return f"missing required key {missing[0]!r}; required keys are {', '.join(map(repr, val))}"
    if v == "additionalProperties" and val is False:
        allowed = sorted(err.schema.get("properties", {}))
        extra = sorted(k for k in inst if k not in err.schema.get("properties", {}))
        return f"unknown key {extra[0]!r}; allowed keys are {', '.join(map(repr, allowed))}"
    if v == "type":
        kinds = val if isinstance(val, list) else [val]
        words = {"string": "a string", "integer": "an integer", "number": "a number",
                 "boolean": "true or false", "array": "a list", "object": "a table"}
        return f"must be {' or '.join(words.get(k, k) for k in kinds)} (got {inst!r})"
    if v == "enum":
        return f"must be one of {', '.join(map(repr, val))} (got {inst!r})"
    if v == "const":
        return f"must be {val!r} (got {inst!r})"
    if v == "pattern":
        return (f"must be a name of lower-case letters, digits, '_' or '-', starting with a letter "
                f"(got {inst!r})") if val.startswith("^[a-z]") else \
            f"must be a dotted key path such as 'frequency.readings_Hz' (got {inst!r})"
    if v == "minLength":
        return "must not be empty"
    if v in ("minItems", "minProperties"):
        return f"must have at least {val} entr{'y' if val == 1 else 'ies'}"
    if v == "oneOf":
        both = isinstance(inst, dict) and "result" in inst and "component" in inst
        return "must name exactly one of 'result' or 'component'" + (", not both" if both else "")
    if v == "anyOf":
        return "must give 'min', 'max' or both"
    return err.message  # pragma: no cover - every validator the schema uses is handled above


def _schema_check(data: dict, where: str) -> None:
    import jsonschema

    validator = jsonschema.Draft202012Validator(procedure_schema())
    errors = list(validator.iter_errors(data))
    if not errors:
        return
    # The shallowest error first (a missing table explains the errors under it),
    # then the first in key order, so the message does not depend on dict order.
    err = min(errors, key=lambda e: (len(e.absolute_path), [str(x) for x in e.absolute_path], e.validator))
    raise BudgetFileError(where, _path_text(err.absolute_path), _schema_reason(err))


def _fail(where: str, parts, reason: str):
    raise BudgetFileError(where, _path_text(parts), reason)


def _is_number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _check_value(where: str, parts, comp: dict, value) -> None:
    """A component's value must suit its kind (checked for lab values and operator defaults)."""
    kind = comp["kind"]
    if kind == "number" and not _is_number(value):
        _fail(where, parts, f"must be a finite number for a component of kind 'number' (got {value!r})")
    if kind == "numbers" and not (isinstance(value, list) and value and all(_is_number(v) for v in value)):
        _fail(where, parts, f"must be a non-empty list of finite numbers for kind 'numbers' (got {value!r})")
    if kind == "text" and not isinstance(value, str):
        _fail(where, parts, f"must be a string for kind 'text' (got {value!r})")
    if kind == "boolean" and not isinstance(value, bool):
        _fail(where, parts, f"must be true or false for kind 'boolean' (got {value!r})")
    if kind == "choice" and value not in comp.get("choices", []):
        _fail(where, parts, f"must be one of {', '.join(map(repr, comp.get('choices', [])))} (got {value!r})")
    nums = value if kind == "numbers" else [value] if kind == "number" else []
    lo, hi = comp.get("min"), comp.get("max")
    for x in nums:
        if (lo is not None and x < lo) or (hi is not None and x > hi):
            _fail(where, parts, f"must lie in [{lo}, {hi}] (got {x!r})")


def procedure_from_dict(data: dict, where: str = "procedure") -> Procedure:
    """Check ``data`` (the parsed TOML) and build the :class:`Procedure`.

    Raises
    ------
    BudgetFileError
        Naming ``where``, the key path and what is allowed.
    """
    _schema_check(data, where)
    p = data["procedure"]
    kind = p["kind"]
    comps_in = data["components"]
    safety_ids = [s["id"] for s in data.get("safety", [])]
    if len(set(safety_ids)) != len(safety_ids):
        dup = next(i for i, s in enumerate(safety_ids) if safety_ids.index(s) != i)
        _fail(where, ["safety", dup, "id"], f"must be unique; {safety_ids[dup]!r} is used twice")

    components: list[Component] = []
    for cid, c in comps_in.items():
        base = ["components", cid]
        if cid == CODATA_COMPONENT:
            _fail(where, base, f"the id {CODATA_COMPONENT!r} is reserved for the [codata] table")
        if c["kind"] == "choice" and "choices" not in c:
            _fail(where, base, "missing required key 'choices' for a component of kind 'choice'")
        if "choices" in c and c["kind"] != "choice":
            _fail(where, base + ["choices"], "is allowed only for a component of kind 'choice'")
        if ("min" in c or "max" in c) and c["kind"] not in ("number", "numbers"):
            _fail(where, base, "'min' and 'max' are allowed only for kinds 'number' and 'numbers'")
        if c["set_by"] == "lab":
            if "value" not in c:
                _fail(where, base, "missing required key 'value' for a component the lab fixes (set_by = 'lab')")
            if not c.get("source", "").strip():
                _fail(where, base, "missing required key 'source' for a component the lab fixes: "
                                   "name the certificate, characterisation or policy it comes from")
        if "value" in c:
            _check_value(where, base + ["value"], c, c["value"])
        tr = c.get("training")
        components.append(Component(
            id=cid, target=c["target"], label=c["label"], kind=c["kind"], set_by=c["set_by"],
            unit=c.get("unit", ""), value=_freeze(c.get("value")), source=c.get("source", ""),
            required=c.get("required", True), choices=tuple(c.get("choices", ())),
            minimum=c.get("min"), maximum=c.get("max"), help=c.get("help", ""),
            training=Training(**tr) if tr else None,
        ))
    targets: dict[str, str] = {}
    for comp in components:
        for other, cid in targets.items():
            if comp.target == other or comp.target.startswith(other + ".") or other.startswith(comp.target + "."):
                _fail(where, ["components", comp.id, "target"],
                      f"must not overlap the target of component {cid!r} ({other!r}) (got {comp.target!r})")
        targets[comp.target] = comp.id

    codata = None
    if "codata" in data:
        cd = data["codata"]
        allowed = tuple(cd.get("allowed", (cd["edition"],)))
        try:
            from ..constants import editions
            known = tuple(editions())
        except ImportError:  # pragma: no cover - the constants layer is always installed
            known = allowed
        for i, ed in enumerate(allowed + (cd["edition"],)):
            if ed not in known:
                parts = ["codata", "allowed", i] if i < len(allowed) else ["codata", "edition"]
                _fail(where, parts, f"must be one of the CODATA editions {', '.join(map(str, known))} (got {ed!r})")
        if cd["edition"] not in allowed:
            _fail(where, ["codata", "edition"], f"must be one of 'allowed' {list(allowed)} (got {cd['edition']!r})")
        codata = CodataPolicy(cd["edition"], cd.get("operator_may_choose", False), allowed, cd.get("reason", ""))
        codata_target = "codata" if kind == "nmr-field" else "reference.codata"
        if codata_target in targets:
            _fail(where, ["components", targets[codata_target], "target"],
                  f"must not be {codata_target!r} when the file has a [codata] table (the table sets it)")
        components.append(Component(
            id=CODATA_COMPONENT, target=codata_target, label="CODATA edition", kind="choice",
            set_by="operator" if codata.operator_may_choose else "lab", value=codata.edition,
            source=codata.reason or "the lab's CODATA edition policy", choices=allowed,
            training=Training(
                what="The edition of the CODATA recommended values the gyromagnetic ratio is taken from.",
                why="B is the frequency divided by the shielded gyromagnetic ratio; editions differ by "
                    "parts in 10^8, so the edition is recorded and fixed by the lab's policy.",
                typical=f"CODATA {codata.edition}"),
        ))

    ids = {c.id for c in components}
    steps: list[Step] = []
    seen_in: dict[str, int] = {}
    for i, s in enumerate(data["steps"]):
        if any(s["id"] == t.id for t in steps):
            _fail(where, ["steps", i, "id"], f"must be unique; {s['id']!r} is used twice")
        for j, cid in enumerate(s.get("components", [])):
            if cid not in ids:
                _fail(where, ["steps", i, "components", j],
                      f"must name a component of this file ({', '.join(sorted(ids))}) (got {cid!r})")
            if cid in seen_in:
                _fail(where, ["steps", i, "components", j],
                      f"must not repeat a component already shown in steps[{seen_in[cid]}] (got {cid!r})")
            seen_in[cid] = i
        for j, sid in enumerate(s.get("cautions", [])):
            if sid not in safety_ids:
                _fail(where, ["steps", i, "cautions", j],
                      f"must name a [[safety]] entry ({', '.join(safety_ids) or 'none defined'}) (got {sid!r})")
        steps.append(Step(s["id"], s["title"], s["instruction"], tuple(s.get("components", ())),
                          tuple(s.get("cautions", ())), s.get("training", "")))
    for comp in components:
        if not comp.fixed and comp.id not in seen_in:
            _fail(where, ["components", comp.id],
                  "an operator component must be listed in the 'components' of one step")

    limits: list[AcceptanceLimit] = []
    for i, a in enumerate(data.get("acceptance", [])):
        if any(a["id"] == t.id for t in limits):
            _fail(where, ["acceptance", i, "id"], f"must be unique; {a['id']!r} is used twice")
        if "result" in a and a["result"] not in RESULT_QUANTITIES[kind]:
            _fail(where, ["acceptance", i, "result"],
                  f"must be one of {', '.join(map(repr, RESULT_QUANTITIES[kind]))} for kind {kind!r} "
                  f"(got {a['result']!r})")
        if "component" in a:
            if a["component"] not in ids:
                _fail(where, ["acceptance", i, "component"],
                      f"must name a component of this file (got {a['component']!r})")
            if next(c for c in components if c.id == a["component"]).kind != "number":
                _fail(where, ["acceptance", i, "component"], "must name a component of kind 'number'")
        if "min" in a and "max" in a and a["min"] > a["max"]:
            _fail(where, ["acceptance", i, "max"], f"must be >= min = {a['min']!r} (got {a['max']!r})")
        limits.append(AcceptanceLimit(a["id"], a["text"], a.get("result"), a.get("component"),
                                      a.get("min"), a.get("max")))

    return Procedure(
        id=p["id"], name=p["name"], version=p["version"], lab=p["lab"], kind=kind,
        summary=p.get("summary", ""), approved_by=p.get("approved_by", ""), issued=p.get("issued", ""),
        codata=codata, components=tuple(components), steps=tuple(steps), acceptance=tuple(limits),
        safety=tuple(SafetyCaution(**s) for s in data.get("safety", [])), path=where,
        practice_json=json.dumps(data.get("practice", []), default=str),  # TOML dates as text
    )


def load_procedure(path: str | os.PathLike) -> Procedure:
    """Read and check a procedure file (TOML, format ``fieldbudget-procedure/1``).

    Raises
    ------
    BudgetFileError
        The file is missing, is not valid TOML, or breaks the format; the
        message names the file, the key path and what is allowed.
    """
    p = Path(path)
    where = str(p)
    try:
        raw = p.read_bytes()
    except OSError as err:
        raise BudgetFileError(where, "", f"cannot be read ({err.strerror or err})") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise BudgetFileError(where, "", "must be UTF-8 text") from None
    except tomllib.TOMLDecodeError as err:
        raise BudgetFileError(where, "", f"is not valid TOML: {err}") from None
    return procedure_from_dict(data, where)
