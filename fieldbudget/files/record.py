"""Records: one evaluation of one budget, kept so that an assessor can re-check it.

A record is a JSON document of our own (schema ``schemas/record-1.json``,
``schema_version`` "1.0") holding the budget file content, the GUM results,
the Monte Carlo results and settings where a run was made, the CODATA
edition, the software versions, the procedure, the operator, a UTC time
stamp, free remarks, the revision number and a change log against the
previous revision of the same budget.

Integrity.  ``digest`` is the SHA-256 of the *canonical serialisation* of
every other key: UTF-8 JSON with keys sorted, no whitespace, and floats
written by Python's shortest round-trip ``repr`` (so a float survives the
file exactly).  The file itself is written indented for reading; loading
parses it, validates it with ``jsonschema``, refuses a newer schema major
version and a digest that does not match, and never uses pickle or evaluates
anything as code.  Saving goes through :func:`fieldbudget.files.atomic.atomic_write_text`
(temporary file in the same folder, fsync, rename), so a failure part way
leaves the old file byte-identical.

Re-evaluation (:func:`verify_record`) rebuilds the budget from the recorded
content and recomputes: GUM results must agree to the last digit (the floats
are compared exactly), Monte Carlo results bit for bit when numpy's version
and the generator are the recorded ones, and otherwise within the tolerance
stated in the record (see :func:`monte_carlo_tolerance`).

Written by hand because no library does records of an uncertainty
evaluation; the generic parts (schema validation, hashing, templating) are
jsonschema and hashlib.
"""

from __future__ import annotations

import hashlib
import json
import math
import platform
import secrets
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cache
from importlib import metadata as _metadata
from pathlib import Path
from types import MappingProxyType
from typing import Any

from .. import __version__
from .._display import fmt, html_table
from .._display import utc_now as _utc_now
from .._io import parse_json
from ..errors import (
    BudgetFileError,
    DigestMismatch,
    FieldbudgetError,
    InputError,
    RecordError,
    SchemaVersionError,
)
from .atomic import atomic_write_text

__all__ = [
    "RECORD_KIND",
    "SCHEMA_VERSION",
    "Check",
    "EditionComparison",
    "Record",
    "VerifyResult",
    "budget_changes",
    "budget_content",
    "canonical_bytes",
    "compare_editions",
    "compute_digest",
    "load_record",
    "make_record",
    "monte_carlo_tolerance",
    "record_from_dict",
    "save_record",
    "serialise",
    "sign_record",
    "software_versions",
    "verify_record",
]

SCHEMA_VERSION = "1.1"  # 1.1 adds the optional identification, findings, acceptance, measurement
SCHEMA_MAJOR = 1
RECORD_KIND = "fieldbudget record"

# Factor applied to the standard error of the difference of two independent
# Monte Carlo runs when the generator stream differs (common practice: 4 sigma
# keeps a false alarm below 1e-4 for each compared number).
MC_TOLERANCE_FACTOR = 4.0

_TOP_KEYS = (
    "schema_version", "kind", "revision", "previous_digest", "created_utc", "operator", "remarks",
    "procedure", "codata_edition", "software", "budget", "input_order", "settings", "results", "changes", "digest",
    "signatures",
)
# Keys outside the content digest: the digest itself and the signatures over it.
_NOT_CONTENT = ("digest", "signatures")


# ----------------------------------------------------------------------------
# plain-data helpers
# ----------------------------------------------------------------------------

def _freeze(x: Any) -> Any:
    """Dicts -> read-only mappings, lists -> tuples (recursively)."""
    if isinstance(x, Mapping):
        return MappingProxyType({str(k): _freeze(v) for k, v in x.items()})
    if isinstance(x, (list, tuple)):
        return tuple(_freeze(v) for v in x)
    return x


def _thaw(x: Any) -> Any:
    """The inverse of :func:`_freeze`: plain dicts and lists (JSON types)."""
    if isinstance(x, Mapping):
        return {str(k): _thaw(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_thaw(v) for v in x]
    return x


def _jsonable(x: Any, where: str, *, infinite_as_none: bool = False) -> Any:
    """Plain JSON types only; numpy scalars and arrays become Python numbers and lists; NaN is refused,
    and so is an infinite number unless ``infinite_as_none`` (infinite degrees of freedom stored as null)."""
    if x is None or isinstance(x, (bool, str)):
        return x
    if isinstance(x, int):
        return int(x)
    if isinstance(x, float):
        if math.isinf(x) and infinite_as_none:
            return None
        if not math.isfinite(x):
            raise RecordError(f"{where}: {x!r} cannot be stored in a record (finite numbers only; infinite dof is null)")
        return float(x)
    if isinstance(x, Mapping):
        return {str(k): _jsonable(v, f"{where}/{k}", infinite_as_none=infinite_as_none) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v, f"{where}/{i}", infinite_as_none=infinite_as_none) for i, v in enumerate(x)]
    # numpy arrays and scalars, without importing numpy here
    tolist, item = getattr(x, "tolist", None), getattr(x, "item", None)
    if callable(tolist) and getattr(x, "ndim", 0):
        return _jsonable(tolist(), where, infinite_as_none=infinite_as_none)
    if callable(item):
        return _jsonable(item(), where, infinite_as_none=infinite_as_none)
    raise RecordError(f"{where}: a {type(x).__name__} cannot be stored in a record (plain JSON values only)")


def canonical_bytes(document: Mapping) -> bytes:
    """Canonical serialisation: UTF-8 JSON, keys sorted, no whitespace, floats by ``repr``.

    Python's ``json`` writes floats with ``float.__repr__`` (the shortest
    string that reads back to the same double), which is what makes the
    digest independent of the platform.
    """
    return json.dumps(document, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False).encode("utf-8")


def compute_digest(document: Mapping) -> str:
    """SHA-256 (hex) over the canonical serialisation of ``document`` without ``digest`` and ``signatures``."""
    content = {k: v for k, v in _thaw(document).items() if k not in _NOT_CONTENT}
    return hashlib.sha256(canonical_bytes(content)).hexdigest()


def serialise(record: Record) -> str:
    """The text fieldbudget writes to a record file (indented, keys sorted, newline at the end)."""
    return json.dumps(record.to_dict(), indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"


@cache
def _schema() -> dict:
    path = Path(__file__).with_name("schemas") / "record-1.json"
    return json.loads(path.read_text(encoding="utf-8"))


def software_versions() -> dict[str, str]:
    """Versions of fieldbudget, numpy, scipy, uncertainties and Python, as recorded."""
    return dict(_versions())


@cache
def _versions() -> tuple[tuple[str, str], ...]:
    # Installed versions cannot change under a running process; reading package metadata is slow.
    out = {"fieldbudget": __version__, "python": platform.python_version()}
    for name in ("numpy", "scipy", "uncertainties", "jsonschema"):
        try:
            out[name] = _metadata.version(name)
        except _metadata.PackageNotFoundError:
            out[name] = "not installed"
    return tuple(out.items())


# ----------------------------------------------------------------------------
# the record
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Record:
    """One archived evaluation of one budget (immutable; see the module docstring).

    Mappings are read-only and sequences are tuples; :meth:`to_dict` gives
    plain JSON types.  ``digest`` is the SHA-256 the record carries; whether
    it matches the content is what :meth:`digest_ok` and :func:`verify_record`
    check.
    """

    budget: Mapping
    gum: Mapping
    input_order: tuple = ()
    monte_carlo: Mapping | None = None
    validation: Mapping | None = None
    monte_carlo_settings: Mapping | None = None
    codata_edition: int | None = None
    software: Mapping = field(default_factory=lambda: MappingProxyType({}))
    procedure: Mapping | None = None
    operator: str = ""
    remarks: str = ""
    created_utc: str = ""
    revision: int = 1
    previous_digest: str | None = None
    changes: tuple = ()
    schema_version: str = SCHEMA_VERSION
    extra: Mapping = field(default_factory=lambda: MappingProxyType({}), repr=False)
    digest: str = ""
    signatures: tuple = ()

    def __post_init__(self) -> None:
        for name in ("budget", "gum", "input_order", "monte_carlo", "validation", "monte_carlo_settings", "software",
                     "procedure", "changes", "extra", "signatures"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, _freeze(_jsonable(value, f"#/{name}")))
        if not isinstance(self.revision, int) or isinstance(self.revision, bool) or self.revision < 1:
            raise InputError("revision", self.revision, "a whole number >= 1", "record")

    # -- content ------------------------------------------------------------

    def content(self) -> dict:
        """The document without its digest (what the digest is computed over)."""
        doc = {
            "schema_version": self.schema_version,
            "kind": RECORD_KIND,
            "revision": self.revision,
            "previous_digest": self.previous_digest,
            "created_utc": self.created_utc,
            "operator": self.operator,
            "remarks": self.remarks,
            "procedure": _thaw(self.procedure),
            "codata_edition": self.codata_edition,
            "software": _thaw(self.software),
            "budget": _thaw(self.budget),
            "input_order": _thaw(self.input_order),
            "settings": {"monte_carlo": _thaw(self.monte_carlo_settings)},
            "results": {
                "gum": _thaw(self.gum),
                "monte_carlo": _thaw(self.monte_carlo),
                "validation": _thaw(self.validation),
            },
            "changes": _thaw(self.changes),
        }
        for k, v in _thaw(self.extra).items():
            if k not in _NOT_CONTENT:
                doc.setdefault(k, v)
        return doc

    def to_dict(self) -> dict:
        """The whole record document (plain JSON types), digest and signatures (when any) included."""
        doc = self.content()
        doc["digest"] = self.digest
        if self.signatures:
            doc["signatures"] = _thaw(self.signatures)
        return doc

    @property
    def signed(self) -> bool:
        return bool(self.signatures)

    def computed_digest(self) -> str:
        """SHA-256 of the current content."""
        return hashlib.sha256(canonical_bytes(self.content())).hexdigest()

    def digest_ok(self) -> bool:
        return self.digest == self.computed_digest()

    # -- convenience ----------------------------------------------------------

    @property
    def measurand(self) -> Mapping:
        m = self.gum.get("measurand") or self.budget.get("measurand") or {}
        return m if isinstance(m, Mapping) else MappingProxyType({"symbol": str(m)})

    @property
    def statement(self) -> str:
        return str(self.gum.get("statement", ""))

    def __repr__(self) -> str:
        sym = self.measurand.get("symbol", "y")
        unit = self.measurand.get("unit", "")
        mc = f", MC {self.monte_carlo['trials']} trials" if self.monte_carlo else ""
        return (f"<Record rev {self.revision} {sym} = {fmt(self.gum.get('value'), 10)} {unit}, "
                f"U = {fmt(self.gum.get('U'), 3)} {unit}{mc}, {self.created_utc}, "
                f"sha256 {self.digest[:12]}>")

    def _repr_html_(self) -> str:
        rows = [
            ("statement", self.statement),
            ("revision", self.revision),
            ("created (UTC)", self.created_utc),
            ("operator", self.operator),
            ("CODATA edition", self.codata_edition if self.codata_edition is not None else "none used"),
            ("Monte Carlo", f"{self.monte_carlo['trials']} trials, seed {self.monte_carlo['seed']}"
             if self.monte_carlo else "not run"),
            ("SHA-256", self.digest),
            ("signatures", "; ".join(f"{s.get('name')} ({s.get('role')}), {s.get('time')}" for s in self.signatures)
             or "none (protected against accidental damage only)"),
        ]
        return html_table(("", ""), rows, caption="fieldbudget record", css_class="fb-table fb-record")


def budget_content(record: Record) -> dict:
    """The record's budget file content with the inputs in their recorded order.

    JSON objects are unordered (and the record file sorts its keys), but the
    order of the inputs fixes the order of the Monte Carlo draws and of the
    sums, so the record keeps it in ``input_order`` (covered by the digest).
    """
    content = _thaw(record.budget)
    inputs = content.get("inputs")
    if isinstance(inputs, dict) and record.input_order:
        order = [s for s in record.input_order if s in inputs]
        order += [s for s in inputs if s not in order]
        content["inputs"] = {s: inputs[s] for s in order}
    return content


def record_from_dict(document: Mapping, *, where: str = "record") -> Record:
    """Build a :class:`Record` from a parsed document (already schema-checked)."""
    d = dict(document)
    results = d.get("results") or {}
    settings = d.get("settings") or {}
    extra = {k: v for k, v in d.items() if k not in _TOP_KEYS}
    return Record(
        budget=d["budget"],
        gum=results["gum"],
        input_order=tuple(d.get("input_order") or ()),
        monte_carlo=results.get("monte_carlo"),
        validation=results.get("validation"),
        monte_carlo_settings=settings.get("monte_carlo"),
        codata_edition=d.get("codata_edition"),
        software=d.get("software") or {},
        procedure=d.get("procedure"),
        operator=d.get("operator", ""),
        remarks=d.get("remarks", ""),
        created_utc=d.get("created_utc", ""),
        revision=d.get("revision", 1),
        previous_digest=d.get("previous_digest"),
        changes=tuple(d.get("changes") or ()),
        schema_version=d.get("schema_version", SCHEMA_VERSION),
        extra=extra,
        digest=d.get("digest", ""),
        signatures=tuple(d.get("signatures") or ()),
    )


# ----------------------------------------------------------------------------
# change log between revisions
# ----------------------------------------------------------------------------

def _inputs_by_symbol(budget: Mapping) -> dict[str, dict]:
    raw = budget.get("inputs") or []
    if isinstance(raw, Mapping):
        return {str(k): dict(v) if isinstance(v, Mapping) else {"value": v} for k, v in raw.items()}
    out: dict[str, dict] = {}
    for i, item in enumerate(raw):
        if isinstance(item, Mapping):
            sym = str(item.get("symbol", item.get("name", f"#{i}")))
            out[sym] = {k: v for k, v in item.items() if k not in ("symbol", "name")}
    return out


def _short(v: Any) -> str:
    if isinstance(v, float):
        return repr(v)
    text = json.dumps(_thaw(v), ensure_ascii=False, sort_keys=True) if not isinstance(v, str) else v
    return text if len(text) <= 80 else text[:77] + "..."


def budget_changes(old: Mapping, new: Mapping) -> list[dict]:
    """What changed from budget content ``old`` to ``new``: inputs added, removed, changed, and the rest.

    Each entry is ``{"change", "what", "detail"}`` in plain words, e.g.
    ``{"change": "input changed", "what": "f", "detail": "value 63.87e6 -> 63.88e6"}``.
    """
    old, new = _thaw(old), _thaw(new)
    out: list[dict] = []
    a, b = _inputs_by_symbol(old), _inputs_by_symbol(new)
    for sym in b.keys() - a.keys():
        out.append({"change": "input added", "what": sym, "detail": _short(b[sym])})
    for sym in a.keys() - b.keys():
        out.append({"change": "input removed", "what": sym, "detail": _short(a[sym])})
    for sym in sorted(a.keys() & b.keys()):
        diffs = []
        for key in sorted(a[sym].keys() | b[sym].keys()):
            if a[sym].get(key) != b[sym].get(key):
                diffs.append(f"{key} {_short(a[sym].get(key))} -> {_short(b[sym].get(key))}")
        if diffs:
            out.append({"change": "input changed", "what": sym, "detail": "; ".join(diffs)})
    out.sort(key=lambda c: (c["change"], c["what"]))
    named = {"model": "model changed", "measurand": "measurand changed",
             "correlations": "correlations changed", "metadata": "metadata changed"}
    for key in sorted((old.keys() | new.keys()) - {"inputs"}):
        if old.get(key) != new.get(key):
            out.append({"change": named.get(key, "budget changed"), "what": key,
                        "detail": f"{_short(old.get(key))} -> {_short(new.get(key))}"})
    return out


# ----------------------------------------------------------------------------
# making a record
# ----------------------------------------------------------------------------

def monte_carlo_tolerance(u: float, trials: int) -> dict:
    """Tolerance for comparing two independent Monte Carlo runs of ``trials`` each.

    Normal-theory standard errors (common practice): the mean of M trials has
    s.e. u/sqrt(M), the standard deviation u/sqrt(2(M-1)), a 2.5 % or 97.5 %
    quantile about 2.7 u/sqrt(M) (JCGM 101:2008 7.9 uses the spread of
    repeated runs in the same spirit).  The difference of two runs has sqrt(2)
    times that; each is multiplied by ``MC_TOLERANCE_FACTOR`` (4).
    """
    m = max(int(trials), 2)
    f = MC_TOLERANCE_FACTOR
    return {
        "value": f * math.sqrt(2.0 / m) * u,
        "u": f * math.sqrt(1.0 / (m - 1)) * u,
        "interval": f * math.sqrt(2.0) * 2.7 * u / math.sqrt(m),
        "rule": ("4 x standard error of the difference of two independent runs: "
                 "value 4*sqrt(2/M)*u, u 4*sqrt(1/(M-1))*u, interval ends 4*sqrt(2)*2.7*u/sqrt(M)"),
    }


def _budget_metadata(content: Mapping) -> Mapping:
    md = content.get("metadata")
    return md if isinstance(md, Mapping) else {}


def _edition_of(content: Mapping) -> int | None:
    """CODATA edition of a budget: from its metadata, else the default when any input cites a reference."""
    md = _budget_metadata(content)
    for key in ("codata_edition", "codata", "edition"):
        v = md.get(key)
        if isinstance(v, Mapping):
            v = v.get("edition")
        if isinstance(v, int) and not isinstance(v, bool):
            return v
        if isinstance(v, str) and v.strip().isdigit():
            return int(v.strip())
    return _edition_from_values(content)


def _edition_from_values(content: Mapping) -> int | None:
    """The newest edition whose tabulated values equal every CODATA-referenced estimate, if any.

    A budget without an edition in its metadata still says which table its
    reference values came from, by the values themselves.
    """
    refs = [(q["reference"], q.get("value")) for q in _inputs_by_symbol(content).values() if q.get("reference")]
    if not refs:
        return None
    from ..constants import editions, lookup

    matching = []
    for ed in editions():
        try:
            if all(lookup(name, edition=ed).value == value for name, value in refs):
                matching.append(int(ed))
        except FieldbudgetError:
            continue
    return max(matching) if matching else None


def _procedure_dict(procedure: Any) -> dict | None:
    if procedure is None:
        return None
    pid = None
    if isinstance(procedure, Mapping):
        name, version, pid = procedure.get("name"), procedure.get("version", ""), procedure.get("id")
    elif isinstance(procedure, (tuple, list)) and len(procedure) == 2:
        name, version = procedure
    else:
        name, version = getattr(procedure, "name", None), getattr(procedure, "version", "")
        pid = getattr(procedure, "id", None)
    if not isinstance(name, str) or not name:
        raise InputError("procedure", procedure, "a procedure with a name and a version, or None", "make_record")
    out = {"name": name, "version": str(version)}
    if isinstance(pid, str) and pid:
        out["id"] = pid
    return out


def _as_budget(budget: Any):
    from ..engine import Budget

    if isinstance(budget, Budget):
        return budget
    if isinstance(budget, Mapping):
        return Budget.from_dict(_thaw(budget), where="budget")
    raise InputError("budget", type(budget).__name__, "an engine Budget or budget file content (a dict)", "make_record")


def _run_monte_carlo(budget, trials: int, seed: int, adaptive: bool = False, sampler: int | None = None):
    """A Monte Carlo run as recorded; ``sampler`` is the recorded sampler version (None: the current one)."""
    from ..engine import montecarlo

    if adaptive:  # the adaptive procedure (JCGM 101 7.9.4) picks M itself from the same seed
        return montecarlo.run(budget, seed=seed, adaptive=True, sampler=sampler)
    return montecarlo.run(budget, trials=trials, seed=seed, sampler=sampler)


def recorded_second_order_method(gum: object) -> int:
    """The second-order method of a recorded GUM block: its ``second_order_method``, or 1 when absent."""
    from ..engine import second_order

    v = gum.get("second_order_method", 1) if isinstance(gum, Mapping) else 1
    if isinstance(v, bool) or v not in second_order.METHODS:
        raise RecordError(f"second-order method {v!r} is not one this release knows ({list(second_order.METHODS)})")
    return int(v)


def recorded_sampler(block: object) -> int:
    """The sampler version of a recorded Monte Carlo block: its ``sampler``, or 1 for records made before it."""
    from ..engine import montecarlo

    v = block.get("sampler", 1) if isinstance(block, Mapping) else 1
    if isinstance(v, bool) or v not in montecarlo.SAMPLERS:
        raise RecordError(f"Monte Carlo sampler {v!r} is not one this release knows ({list(montecarlo.SAMPLERS)})")
    return int(v)


def _validate(gum, mc):
    try:
        from ..engine import validation
    except ImportError:  # pragma: no cover - the engine ships it
        return None
    return validation.validate(gum, mc)


def make_record(budget: Any, *, monte_carlo: Any = None, seed: int | None = None, operator: str = "",
                remarks: str = "", procedure: Any = None, previous: Record | None = None,
                created_utc: str | None = None, reason: str = "", sign: Any = None,
                passphrase: str | None = None, details: Mapping | None = None) -> Record:
    """Evaluate ``budget`` and return its :class:`Record` (not yet saved).

    Parameters
    ----------
    budget : Budget or dict
        An engine ``Budget`` or budget file content.
    monte_carlo : int or MonteCarloResult, optional
        Number of Monte Carlo trials to run (with ``seed``), or a result already
        run on this budget.  ``None`` runs no Monte Carlo.
    seed : int, optional
        Seed of the Monte Carlo generator; when omitted a fresh one is drawn and
        recorded, so the run can still be repeated.
    operator, remarks : str
        Who made the evaluation, and free text.
    procedure : Procedure, mapping or (name, version), optional
        The lab procedure followed, if any.
    previous : Record, optional
        The previous revision of the same budget: the new record gets its
        revision number + 1, its digest, and the list of changes.  It must be
        of the same measurand (symbol and unit), and ``reason`` is required.
    created_utc : str, optional
        Time stamp (ISO 8601, UTC, ``Z``); now by default.
    reason : str
        Why this revision was made (with ``previous``); it goes into the change log.
    sign : SigningKey or path of a key file, optional
        Sign the record (see :mod:`fieldbudget.files.signing`); ``passphrase``
        unlocks a protected key file.
    details : mapping, optional
        The optional keys of schema 1.1 (``identification``, ``findings``,
        ``acceptance``, ``measurement``); see :mod:`fieldbudget.files.record_details`,
        which builds them.  The evaluation's own warnings are always kept as
        ``findings`` too.
    """
    from ..engine import evaluate

    hooked = _other_kind(budget, monte_carlo=monte_carlo, seed=seed, operator=operator, remarks=remarks,
                         procedure=procedure, created_utc=created_utc, previous=previous, details=details)
    if hooked is not None:
        if sign is not None:
            hooked = sign_record(hooked, sign, passphrase=passphrase)
        return hooked
    for name, value in (("operator", operator), ("remarks", remarks), ("reason", reason)):
        if not isinstance(value, str):
            raise InputError(name, value, "text", "make_record")
    if previous is not None and not isinstance(previous, Record):
        raise InputError("previous", type(previous).__name__, "a Record (the previous revision) or None", "make_record")
    if previous is not None and not reason.strip():
        raise InputError("reason", reason, "a text saying why this revision was made (it goes into the change log)",
                         "make_record with previous")
    key = _signing_key(sign, passphrase) if sign is not None else None
    b = _as_budget(budget)
    content = _jsonable(b.to_dict(), "#/budget")
    gum = evaluate(b)
    if not hasattr(gum, "measurand"):
        raise InputError("budget", f"{len(getattr(gum, 'results', ()))} measurands",
                         "a budget with one measurand (records of several measurands are not supported yet)",
                         "make_record")
    gum_d = _jsonable(gum.to_dict(), "#/results/gum")

    mc_d = val_d = mc_settings = mc = None
    if monte_carlo is not None:
        if isinstance(monte_carlo, bool) or not (isinstance(monte_carlo, int) or hasattr(monte_carlo, "to_dict")):
            raise InputError("monte_carlo", monte_carlo, "a number of trials (int), a Monte Carlo result, or None",
                             "make_record")
        if isinstance(monte_carlo, int):
            if monte_carlo < 1:
                raise InputError("monte_carlo", monte_carlo, "a number of trials >= 1", "make_record")
            if seed is None:
                seed = secrets.randbits(63)
            if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
                raise InputError("seed", seed, "a whole number >= 0", "make_record")
            mc = _run_monte_carlo(b, monte_carlo, seed)
        else:
            mc = monte_carlo
        mc_d = _jsonable(mc.to_dict(), "#/results/monte_carlo")
        if mc_d.get("seed") is None:
            raise InputError("monte_carlo", "seed None", "a Monte Carlo result run with a recorded seed", "make_record")
        mc_settings = {"trials": int(mc_d["trials"]), "seed": int(mc_d["seed"]),
                       "tolerance": monte_carlo_tolerance(float(mc_d["u"]), int(mc_d["trials"]))}
        val = _validate(gum, mc)
        if val is not None:
            val_d = _jsonable(val.to_dict(), "#/results/validation")

    revision, prev_digest, changes = 1, None, []
    if previous is not None:
        old_m, new_m = _measurand_of(previous.gum, previous.budget), _measurand_of(gum_d, content)
        if old_m != new_m:
            raise InputError("previous", f"measurand {_measurand_text(old_m)}",
                             f"a record of the same measurand as the new one ({_measurand_text(new_m)})",
                             "make_record")
        revision, prev_digest = previous.revision + 1, previous.digest
        changes = budget_changes(previous.budget, content)
        changes.append({"change": "revision reason", "what": f"revision {revision}", "detail": reason.strip()})

    from .record_details import merge_details

    extra = merge_details(details, gum.warnings, getattr(mc, "warnings", ()) if mc_d is not None else (),
                          operator=operator, metadata=content.get("metadata"))
    rec = Record(
        budget=content, gum=gum_d, input_order=tuple(q.symbol for q in b.inputs), monte_carlo=mc_d, validation=val_d,
        monte_carlo_settings=mc_settings,
        codata_edition=_edition_of(content), software=software_versions(), procedure=_procedure_dict(procedure),
        operator=operator, remarks=remarks, created_utc=created_utc or _utc_now(), revision=revision,
        previous_digest=prev_digest, changes=tuple(changes), extra=extra,
    )
    rec = _with_digest(rec)
    return sign_record(rec, key) if key is not None else rec


def _other_kind(budget: Any, **kw: Any) -> Any:
    """Calibration files and several-output budgets are recorded by :mod:`.calibration_record`."""
    from . import calibration_record as cr

    details = kw.pop("details", None)
    if cr.is_calibration_input(budget):
        return cr.make_calibration_record(budget, details=details, **kw)
    from ..engine import Budget

    b = budget
    if isinstance(budget, Mapping) and isinstance(budget.get("model"), Mapping):
        b = _as_budget(budget)
    if isinstance(b, Budget) and len(b.model.outputs) > 1:
        if details:  # the engine's findings of a several-output budget are in its results
            details = {k: v for k, v in details.items() if k != "findings"}
        return cr.make_several_output_record(b, details=details, **kw)
    return None


def _with_digest(rec: Record) -> Record:
    from dataclasses import replace

    return replace(rec, digest=rec.computed_digest())


def _measurand_of(gum: Mapping, budget: Mapping) -> tuple[str, str]:
    m = gum.get("measurand") or budget.get("measurand") or {}
    if not isinstance(m, Mapping):
        return (str(m), "")
    return (str(m.get("symbol", "")), str(m.get("unit", "")))


def _measurand_text(m: tuple[str, str]) -> str:
    return f"{m[0]} in {m[1]}" if m[1] else m[0]


def _signing_key(key: Any, passphrase: str | None = None):
    from .signing import SigningKey, load_signing_key

    if isinstance(key, SigningKey):
        return key
    if isinstance(key, (str, Path)):
        return load_signing_key(key, passphrase)
    raise InputError("sign", type(key).__name__, "a SigningKey or the path of a key file", "make_record")


def sign_record(record: Record, key: Any, *, passphrase: str | None = None, time: str | None = None) -> Record:
    """The same record with one more signature (content and digest unchanged).

    ``key`` is a :class:`~fieldbudget.files.signing.SigningKey` or a key file
    path.  A record whose digest does not match its content is refused, and
    the same key cannot sign twice in the same role.
    """
    from dataclasses import replace

    from . import calibration_record as cr
    from .signing import sign_digest

    if not isinstance(record, (Record, cr.CalibrationRecord)):
        raise InputError("record", type(record).__name__, "a Record or a CalibrationRecord", "sign_record")
    k = _signing_key(key, passphrase)
    if not record.digest_ok():
        raise DigestMismatch("not signed: the record's digest does not match its content (it was changed after it "
                             "was written)")
    for s in record.signatures:
        if s.get("fingerprint") == k.fingerprint and s.get("role") == k.role:
            raise InputError("key", f"{k.name} ({k.role})", "a key that has not signed this record in this role yet",
                             "sign_record")
    if isinstance(record, cr.CalibrationRecord):
        return cr.sign_calibration_record(record, k)
    entry = sign_digest(k, record.digest, time)
    return replace(record, signatures=(*record.signatures, _freeze(entry)))


# ----------------------------------------------------------------------------
# saving and loading
# ----------------------------------------------------------------------------

def save_record(record: Record, path: str | Path) -> Path:
    """Write ``record`` to ``path`` atomically (the old file survives any failure).

    Refuses a record whose digest does not match its content, so a changed
    record is never archived under its old digest.
    """
    from .calibration_record import CalibrationRecord, save_calibration_record

    if isinstance(record, CalibrationRecord):
        return save_calibration_record(record, path)
    if not isinstance(record, Record):
        raise InputError("record", type(record).__name__, "a Record", "save_record")
    if not record.digest_ok():
        raise DigestMismatch(f"{path}: not saved: the record's digest does not match its content "
                             "(make a new record instead of editing one)")
    return atomic_write_text(path, serialise(record))


def _pointer(parts) -> str:
    return "#/" + "/".join(str(p) for p in parts) if parts else "#"


def record_json(data: bytes, where: str) -> object:
    """The JSON value of a record file's bytes, read strictly; a damaged file raises RecordError."""
    if not data.strip():
        raise RecordError(f"{where}: the file is empty: not a record (damaged, or the save never finished?)")
    try:
        return parse_json(data, where, what="record")
    except BudgetFileError as err:
        at = f", at {err.pointer}" if err.pointer else ""
        raise RecordError(f"{where}: damaged record{at}: {err.reason}") from None


def parse_record_text(data: bytes, where: str) -> dict:
    """Parse and check record bytes; return the document.  Raises RecordError subclasses."""
    doc = record_json(data, where)
    if not isinstance(doc, dict):
        raise RecordError(f"{where}: not a fieldbudget record (the file holds a JSON {type(doc).__name__}, "
                          "not an object)")
    from .measurement_record import KINDS, document_kind

    kind = document_kind(doc)
    if kind and kind != "record":
        raise RecordError(f"{where}: this is {KINDS[kind][0]}, not a record: use {KINDS[kind][1]}")
    version = doc.get("schema_version")
    if not isinstance(version, str):
        raise RecordError(f"{where}: not a fieldbudget record: no text 'schema_version' "
                          f"(got {version!r}; records have \"{SCHEMA_VERSION}\")")
    major_text = version.split(".", 1)[0]
    if not major_text.isdigit() or "." not in version:
        raise RecordError(f"{where}: schema_version must be 'major.minor', e.g. \"{SCHEMA_VERSION}\" "
                          f"(got {version!r})")
    if int(major_text) > SCHEMA_MAJOR:
        raise SchemaVersionError(
            f"{where}: written under record schema {version}; this fieldbudget ({__version__}) reads schema "
            f"{SCHEMA_MAJOR}.x only. Open it with a newer fieldbudget; nothing was changed.")
    import jsonschema

    validator = jsonschema.Draft202012Validator(_schema())
    errors = sorted(validator.iter_errors(doc), key=lambda e: (len(e.absolute_path), list(map(str, e.absolute_path))))
    if errors:
        err = jsonschema.exceptions.best_match(errors)
        found = err.instance
        shown = _short(found) if not isinstance(found, (dict, list)) else type(found).__name__
        raise RecordError(f"{where}: record does not follow schema {version}, at "
                          f"{_pointer(err.absolute_path)}: {err.message} (got {shown})"
                          + (f"; {len(errors) - 1} more problem(s)" if len(errors) > 1 else ""))
    return doc


def load_record(path: str | Path, *, check_digest: bool = True) -> Record:
    """Read a record file; nothing on disk is changed.

    Raises
    ------
    RecordError
        The file is missing, empty, truncated, not JSON, or does not follow the schema.
    SchemaVersionError
        It was written under a newer schema major version.
    DigestMismatch
        Its SHA-256 digest does not match its content (unless ``check_digest=False``,
        which :func:`verify_record` uses to report the mismatch as a failed check).
    """
    where = str(path)
    from . import calibration_record as cr

    if cr.record_kind(path) in cr.KINDS:
        return cr.load_calibration_record(path, check_digest=check_digest)
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise RecordError(f"{where}: no such record file") from None
    except OSError as err:
        raise RecordError(f"{where}: cannot read the record ({err.strerror})") from None
    doc = parse_record_text(data, where)
    rec = record_from_dict(doc, where=where)
    if check_digest:
        computed = rec.computed_digest()
        if computed != rec.digest:
            raise DigestMismatch(
                f"{where}: the record's content does not match its SHA-256 digest (stored {rec.digest[:16]}..., "
                f"computed {computed[:16]}...): it was changed after it was written")
    return rec


# ----------------------------------------------------------------------------
# verifying
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Check:
    """One check of a verification: ``status`` is "pass", "fail" or "info"."""

    name: str
    status: str
    detail: str

    def __repr__(self) -> str:
        return f"<Check {self.name}: {self.status}>"

    def to_dict(self) -> dict:
        return {"name": self.name, "status": self.status, "detail": self.detail}


@dataclass(frozen=True)
class VerifyResult:
    """The outcome of :func:`verify_record`: one :class:`Check` per thing checked.

    ``signatures`` holds one :class:`~fieldbudget.files.signing.SignatureCheck`
    per signature (name, role, fingerprint, time, valid); ``trusted_keys`` says
    whether a list of trusted keys was given.
    """

    checks: tuple[Check, ...]
    where: str = ""
    signatures: tuple = ()
    trusted_keys: bool = False

    @property
    def passed(self) -> bool:
        """True when no check failed (informational checks do not count)."""
        return all(c.status != "fail" for c in self.checks)

    @property
    def signed(self) -> bool:
        return bool(self.signatures)

    @property
    def failures(self) -> tuple[Check, ...]:
        return tuple(c for c in self.checks if c.status == "fail")

    def __bool__(self) -> bool:
        return self.passed

    def __repr__(self) -> str:
        word = "passed" if self.passed else f"FAILED ({', '.join(c.name for c in self.failures)})"
        return f"<VerifyResult {word}: {len(self.checks)} checks, {len(self.signatures)} signature(s)>"

    def report(self) -> str:
        lines = [f"{c.status.upper():4}  {c.name}: {c.detail}" for c in self.checks]
        head = f"{self.where}: " if self.where else ""
        if not self.signatures:
            tail = ("UNSIGNED: the digest protects it against accidental damage only, not against a deliberate "
                    "change")
        else:
            who = ", ".join(f"{s.name} ({s.role}) at {s.time}" for s in self.signatures)
            tail = f"signed by {who}"
        lines.append(f"{head}{'verified' if self.passed else 'NOT verified'}; {tail}")
        return "\n".join(lines)

    def to_dict(self) -> dict:
        return {"passed": self.passed, "checks": [c.to_dict() for c in self.checks],
                "signed": self.signed, "signatures": [s.to_dict() for s in self.signatures]}

    def _repr_html_(self) -> str:
        return html_table(("check", "status", "detail"), ((c.name, c.status, c.detail) for c in self.checks),
                          caption="verification " + ("passed" if self.passed else "FAILED"), css_class="fb-table")


# What verify re-derives.  Every key listed is compared whether or not the record has it (a claim removed
# from a record is as wrong as one changed); any other recorded key is compared when the fresh result has it.
_GUM_KEYS = ("value", "u", "nu_eff", "k", "U", "coverage_probability", "rounded", "statement", "warnings",
             "contributions", "measurand")
_MC_EXACT_KEYS = ("value", "u", "interval", "shortest_interval", "trials", "seed", "histogram", "warnings",
                  "coverage_probability", "adaptive", "stabilised")
_MC_SAME_KEYS = ("trials", "seed", "coverage_probability", "adaptive", "warnings")
_VALIDATION_KEYS = ("validated", "delta", "d_low", "d_high", "gum_interval", "mc_interval", "advice",
                    "interval_kind", "coverage_probability", "significant_digits")
_MISSING = "(missing)"


def _plain(x: Any) -> Any:
    """Normalise through JSON so tuples, numpy scalars and floats compare as written."""
    return json.loads(json.dumps(_jsonable(x, "#")))


def _diff_keys(rec: Mapping, new: Mapping, keys: tuple[str, ...], *, others: bool = True) -> list[str]:
    diffs = []
    more = sorted(k for k in rec if k not in keys and k in new) if others else []
    for key in list(keys) + more:
        a, b = rec.get(key, _MISSING), new.get(key, _MISSING)
        if a != b:
            diffs.append(f"{key}: recorded {_short(a)}, recomputed {_short(b)}")
    return diffs


def _compare_gum(recorded: Mapping, fresh: Mapping) -> list[str]:
    return _diff_keys(_plain(_thaw(recorded)), _plain(fresh), _GUM_KEYS)


def _histogram_problems(rec: Mapping, new: Mapping, tol_value: float) -> list[str]:
    """Checks of a recorded histogram that hold whatever the generator stream (used when not bit-identical)."""
    h = rec.get("histogram")
    if not isinstance(h, Mapping):
        return ["histogram: missing"]
    counts, edges = h.get("counts"), h.get("edges")
    if not (isinstance(counts, list) and isinstance(edges, list) and len(edges) == len(counts) + 1 and counts):
        return ["histogram: counts and edges do not fit together"]
    bad = []
    if any(not isinstance(c, int) or c < 0 for c in counts) or any(b <= a for a, b in zip(edges, edges[1:])):
        bad.append("histogram: counts must be whole numbers >= 0 over increasing edges")
        return bad
    total = sum(counts)
    if total > int(rec.get("trials", 0)) or total < 0.9 * int(rec.get("trials", 0)):
        bad.append(f"histogram: holds {total} trials of {rec.get('trials')} (all but the outer tails expected)")
    if total:
        mean = sum(c * (a + b) / 2 for c, a, b in zip(counts, edges, edges[1:])) / total
        width = max(b - a for a, b in zip(edges, edges[1:]))
        if abs(mean - float(new["value"])) > tol_value + width:
            bad.append(f"histogram: its mean {mean!r} is not the recomputed value {new['value']!r} "
                       f"within {tol_value + width:.3g}")
    return bad


def _compare_mc(recorded: Mapping, fresh: Mapping) -> tuple[str, str, bool]:
    """Compare a recorded Monte Carlo block with a re-run: (status, detail, bit-identical mode).

    The recorded numpy version and generator only choose the mode; the
    tolerance is this release's own (:func:`monte_carlo_tolerance` of the
    re-run's u), never a figure read from the record.
    """
    rec, new = _plain(_thaw(recorded)), _plain(fresh)
    same_stream = (rec.get("numpy_version") == new.get("numpy_version")
                   and rec.get("generator") == new.get("generator"))
    if same_stream:
        diffs = _diff_keys(rec, new, _MC_EXACT_KEYS)
        if diffs:
            return "fail", ("not bit-identical with the same seed, generator and numpy "
                            f"{rec.get('numpy_version')}: " + "; ".join(diffs)), True
        return "pass", (f"bit-identical (histogram and warnings included): {rec.get('trials')} trials, seed "
                        f"{rec.get('seed')}, {rec.get('generator')}, numpy {rec.get('numpy_version')}"), True
    tol = monte_carlo_tolerance(float(new["u"]), int(new["trials"]))
    bad = _diff_keys(rec, new, _MC_SAME_KEYS, others=False)
    for key in ("value", "u"):
        a, b = rec.get(key), new.get(key)
        if not isinstance(a, (int, float)) or isinstance(a, bool) or abs(b - a) > tol[key]:
            bad.append(f"{key} recorded {_short(a)}, recomputed {b!r} (tolerance {tol[key]:.3g})")
    for key in ("interval", "shortest_interval"):
        a, b = rec.get(key), new.get(key)
        if not (isinstance(a, list) and len(a) == 2 and all(isinstance(x, (int, float)) for x in a)):
            bad.append(f"{key}: recorded {_short(a)}")
        elif max(abs(x - y) for x, y in zip(a, b)) > tol["interval"]:
            bad.append(f"{key} ends differ by {max(abs(x - y) for x, y in zip(a, b)):.3g} > {tol['interval']:.3g}")
    bad += _histogram_problems(rec, new, tol["value"])
    why = (f"generator stream differs (recorded {rec.get('generator')} with numpy {rec.get('numpy_version')}, "
           f"now {new.get('generator')} with numpy {new.get('numpy_version')}); compared within this release's "
           f"tolerance ({tol['rule']})")
    return ("fail", why + ": " + "; ".join(bad), False) if bad else ("pass", why, False)


def _compare_validation(recorded: Mapping | None, gum_result, mc_fresh, mc_recorded: Mapping, bit_identical: bool):
    """Re-derive the validation block (JCGM 101 clause 8) and compare it with the recorded one.

    With a bit-identical re-run it is computed from the re-run; otherwise from
    the recorded Monte Carlo figures (already checked against the re-run) and
    the recomputed GUM result, so the comparison is exact either way.
    """
    from dataclasses import replace

    from ..engine import validation

    mc = mc_fresh
    if not bit_identical:
        r = _thaw(mc_recorded)
        mc = replace(mc_fresh, estimate=float(r["value"]), standard_uncertainty=float(r["u"]),
                     interval=tuple(map(float, r["interval"])),
                     shortest_interval=tuple(map(float, r["shortest_interval"])))
    fresh = validation.validate(gum_result, mc).to_dict()
    if recorded is None:
        return Check("validation", "fail", f"the record has no validation block; recomputed "
                                           f"validated = {fresh['validated']}")
    diffs = _diff_keys(_plain(_thaw(recorded)), _plain(fresh), _VALIDATION_KEYS)
    if diffs:
        return Check("validation", "fail", "recomputed validation differs: " + "; ".join(diffs))
    return Check("validation", "pass", f"d_low, d_high, delta, validated ({fresh['validated']}) and the advice "
                                       "agree with the recomputation")


def _read_for_verify(path: str | Path) -> bytes:
    p = Path(path)
    if str(path) == "":
        raise RecordError("'': an empty path names no record file")
    if p.is_dir():
        raise RecordError(f"{path}: is a folder, not a record file")
    try:
        return p.read_bytes()
    except FileNotFoundError:
        raise RecordError(f"{path}: no such record file") from None
    except OSError as err:
        raise RecordError(f"{path}: cannot read the record ({err.strerror or type(err).__name__})") from None


def signature_checks(signatures, content_digest: str,
                     trusted: str | Path | Mapping | None) -> tuple[list[Check], tuple]:
    """One :class:`Check` per signature entry over ``content_digest`` (the digest the content gives,
    not the stored one), plus the signature results; used for every kind of record."""
    from .signing import check_signature, load_trusted

    keys = None
    if trusted is not None:
        keys = dict(trusted) if isinstance(trusted, Mapping) else load_trusted(trusted)
    results = tuple(check_signature(_thaw(s), content_digest, keys) for s in signatures)
    checks = []
    if not results:
        checks.append(Check("signatures", "info", "UNSIGNED: nobody signed this record; the digest protects it "
                                                  "against accidental damage only"))
    for r in results:
        status = "pass" if r.valid else "fail"
        checks.append(Check(f"signature of {r.name or '?'}", status,
                            f"{r.role or '?'} at {r.time or '?'}, key {r.fingerprint[:16] or '?'}: {r.detail}"))
    if results and keys is None:
        checks.append(Check("trusted keys", "info", "no --trusted folder given: signatures were checked as intact, "
                                                    "but not whose keys they are"))
    return checks, results


def verify_record(record: Record | str | Path, *, trusted: str | Path | Mapping | None = None) -> VerifyResult:
    """Re-check a record: digest, file form, signatures, and every result recomputed from its inputs.

    ``trusted`` is a folder of ``.pub`` files (or a mapping fingerprint ->
    :class:`~fieldbudget.files.signing.PublicKey`): every signature must then
    come from a trusted key under the same name and role.  Given a path, the
    file is read with the digest check deferred so that a mismatch is reported
    as a failed check; a file that cannot be read at all still raises
    :class:`~fieldbudget.errors.RecordError`.

    Re-derived and compared: the GUM results (value, u, nu_eff, k, U, the
    rounded result, every contribution, the statement and its warnings) to the
    last digit; the Monte Carlo block (bit for bit, histogram and warnings
    included, when the recorded numpy version and generator are the current
    ones, else within this release's own tolerance); the validation block
    (d_low, d_high, delta, validated, advice).
    """
    from . import calibration_record as cr
    from . import competence_record as training

    if isinstance(record, cr.CalibrationRecord) or (isinstance(record, (str, Path)) and
                                                    cr.record_kind(record) in cr.KINDS):
        return cr.verify_calibration_record(record, trusted=trusted)
    if isinstance(record, training.SignedDocument) or (isinstance(record, (str, Path)) and
                                                       training.document_format(record) in training.FORMATS):
        return training.verify_document(record, trusted=trusted)
    checks: list[Check] = []
    where = ""
    if isinstance(record, (str, Path)):
        where = str(record)
        raw = _read_for_verify(record)
        record = record_from_dict(parse_record_text(raw, where), where=where)
        checks.append(Check("schema", "pass", f"follows record schema {record.schema_version}"))
        as_written = serialise(record).encode("utf-8")
        if raw.replace(b"\r\n", b"\n") == as_written:
            checks.append(Check("file form", "pass", "the file is byte for byte as fieldbudget writes this content"))
        else:
            checks.append(Check("file form", "fail", "the file's bytes differ from what fieldbudget writes for its "
                                "content (edited after it was written?)"))
    if not isinstance(record, Record):
        raise InputError("record", type(record).__name__, "a Record or the path of a record file", "verify_record")

    computed = record.computed_digest()
    if computed == record.digest:
        checks.append(Check("digest", "pass", f"SHA-256 {computed}"))
    else:
        checks.append(Check("digest", "fail", f"stored {record.digest or '(none)'} but the content gives {computed}"))
    sig_checks, sig_results = signature_checks(record.signatures, computed, trusted)
    checks.extend(sig_checks)

    from ..engine import Budget, evaluate

    def done() -> VerifyResult:
        return VerifyResult(tuple(checks), where, sig_results, trusted is not None)

    try:
        budget = Budget.from_dict(budget_content(record), where="record budget")
    except FieldbudgetError as err:
        checks.append(Check("budget", "fail", f"the recorded budget no longer loads: {err}"))
        return done()
    checks.append(Check("budget", "pass", "the recorded budget content loads"))
    from .measurement_record import check_measurement

    measured = check_measurement(record)
    if measured is not None:
        checks.append(Check("measurement", *measured))
    from ..engine import second_order

    # the second-order method the record was made with (absent: method 1)
    with second_order.method_version(recorded_second_order_method(record.gum)):
        try:
            gum_result = evaluate(budget)
            fresh = gum_result.to_dict()
        except FieldbudgetError as err:
            checks.append(Check("GUM", "fail", f"re-evaluation failed: {err}"))
            return done()
        diffs = _compare_gum(record.gum, fresh)
        if diffs:
            checks.append(Check("GUM", "fail", "recomputed results differ: " + "; ".join(diffs)))
        else:
            checks.append(Check("GUM", "pass", f"value, u, k, U, nu_eff, the rounded result, the statement, the "
                                               f"warnings and every contribution agree to the last digit "
                                               f"(U = {fmt(float(fresh['U']), 6)})"))

        if record.monte_carlo is None:
            checks.append(Check("Monte Carlo", "info", "no Monte Carlo run in this record"))
            if record.validation is not None:
                checks.append(Check("validation", "fail", "the record has a validation block but no Monte Carlo run"))
        else:
            mc = record.monte_carlo
            try:
                again = _run_monte_carlo(budget, int(mc["trials"]), int(mc["seed"]), bool(mc.get("adaptive")),
                                         recorded_sampler(mc))
            except (FieldbudgetError, TypeError, ValueError) as err:
                checks.append(Check("Monte Carlo", "fail", f"re-run failed: {err}"))
            else:
                status, detail, exact = _compare_mc(mc, again.to_dict())
                checks.append(Check("Monte Carlo", status, detail))
                if status == "pass":
                    try:
                        checks.append(_compare_validation(record.validation, gum_result, again, mc, exact))
                    except (FieldbudgetError, TypeError, ValueError, KeyError) as err:
                        checks.append(Check("validation", "fail", f"cannot be recomputed: {err}"))
                else:
                    checks.append(Check("validation", "info", "not recomputed: the Monte Carlo block does not hold"))

    now = software_versions()
    then = _thaw(record.software)
    moved = [f"{k} {then.get(k)} -> {now.get(k)}" for k in ("fieldbudget", "numpy", "scipy", "uncertainties")
             if then.get(k) != now.get(k)]
    checks.append(Check("software", "info", "same versions as recorded" if not moved
                        else "versions differ from the record: " + ", ".join(moved)))
    return done()


# ----------------------------------------------------------------------------
# comparing CODATA editions
# ----------------------------------------------------------------------------

@dataclass(frozen=True)
class EditionComparison:
    """The same budget evaluated under two CODATA editions.

    ``relative_change`` is value_new / value_old - 1 (dimensionless);
    ``inputs`` lists each re-looked-up input as
    ``(symbol, reference, old value, new value, old u, new u)``.
    """

    symbol: str
    unit: str
    edition_from: int | None
    edition_to: int
    value_from: float
    value_to: float
    u_from: float
    u_to: float
    U_from: float
    U_to: float
    inputs: tuple = ()

    @property
    def delta_value(self) -> float:
        return self.value_to - self.value_from

    @property
    def relative_change(self) -> float:
        return self.value_to / self.value_from - 1.0 if self.value_from else math.nan

    @property
    def delta_u(self) -> float:
        return self.u_to - self.u_from

    @property
    def relative_change_u(self) -> float:
        return self.u_to / self.u_from - 1.0 if self.u_from else math.nan

    def __repr__(self) -> str:
        return (f"<EditionComparison {self.symbol}: CODATA {self.edition_from} -> {self.edition_to}, "
                f"value {self.relative_change:+.3g} relative, u {fmt(self.u_from, 3)} -> {fmt(self.u_to, 3)} "
                f"{self.unit}>")

    def to_dict(self) -> dict:
        return {
            "symbol": self.symbol, "unit": self.unit, "edition_from": self.edition_from,
            "edition_to": self.edition_to, "value_from": self.value_from, "value_to": self.value_to,
            "delta_value": self.delta_value, "relative_change": self.relative_change,
            "u_from": self.u_from, "u_to": self.u_to, "delta_u": self.delta_u, "U_from": self.U_from,
            "U_to": self.U_to,
            "inputs": [dict(zip(("symbol", "reference", "value_from", "value_to", "u_from", "u_to"), i))
                       for i in self.inputs],
        }

    def report(self) -> str:
        u = f" {self.unit}" if self.unit else ""
        lines = [
            f"{self.symbol}: CODATA {self.edition_from} -> CODATA {self.edition_to}",
            f"  value  {self.value_from!r}{u} -> {self.value_to!r}{u}",
            f"         change {self.delta_value:+.6g}{u} (relative {self.relative_change:+.4g})",
            f"  u      {fmt(self.u_from, 6)}{u} -> {fmt(self.u_to, 6)}{u} (change {self.delta_u:+.3g}{u})",
            f"  U      {fmt(self.U_from, 6)}{u} -> {fmt(self.U_to, 6)}{u}",
        ]
        if self.inputs:
            lines.append("  inputs looked up again:")
            for sym, ref, a, b, ua, ub in self.inputs:
                lines.append(f"    {sym} ({ref}): {a!r} -> {b!r}, u {fmt(ua, 4)} -> {fmt(ub, 4)}")
        else:
            lines.append("  no input of this budget cites a CODATA value: nothing changes")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        rows = [("value", repr(self.value_from), repr(self.value_to), f"{self.relative_change:+.4g} (relative)"),
                ("u", fmt(self.u_from, 6), fmt(self.u_to, 6), f"{self.delta_u:+.3g}"),
                ("U", fmt(self.U_from, 6), fmt(self.U_to, 6), f"{self.U_to - self.U_from:+.3g}")]
        return html_table(("", f"CODATA {self.edition_from}", f"CODATA {self.edition_to}", "change"), rows,
                          caption=f"{self.symbol} ({self.unit}) under two CODATA editions")


def compare_editions(record: Record, edition: int) -> EditionComparison:
    """Evaluate the record's budget again with its CODATA-referenced inputs looked up in ``edition``."""
    from ..constants import editions
    from ..engine import Budget, evaluate, rebase

    if not isinstance(record, Record):
        raise InputError("record", type(record).__name__, "a Record", "compare_editions")
    known = tuple(editions())
    try:
        ed = int(edition)
    except (TypeError, ValueError):
        raise InputError("edition", edition, f"one of {', '.join(map(str, known))}", "compare") from None
    if ed not in known or isinstance(edition, bool):
        raise InputError("edition", edition, f"one of {', '.join(map(str, known))}", "compare")
    budget = Budget.from_dict(budget_content(record), where="record budget")
    other = rebase(budget, ed)
    r0, r1 = evaluate(budget), evaluate(other)
    d0, d1 = r0.to_dict(), r1.to_dict()
    changed = []
    old_in, new_in = _inputs_by_symbol(budget.to_dict()), _inputs_by_symbol(other.to_dict())
    u0 = {c["symbol"]: c.get("u_x") for c in d0.get("contributions", [])}
    u1 = {c["symbol"]: c.get("u_x") for c in d1.get("contributions", [])}
    for sym, item in old_in.items():
        new = new_in.get(sym, {})
        # only the inputs the edition change touched (CODATA ones; IUPAC and water data stay)
        if item.get("reference") and new != item:
            changed.append((sym, str(item.get("reference")), item.get("value"), new.get("value"),
                            u0.get(sym), u1.get(sym)))
    m = d0.get("measurand") or {}
    return EditionComparison(
        symbol=str(m.get("symbol", "y")), unit=str(m.get("unit", "")), edition_from=record.codata_edition,
        edition_to=ed, value_from=float(d0["value"]), value_to=float(d1["value"]), u_from=float(d0["u"]),
        u_to=float(d1["u"]), U_from=float(d0["U"]), U_to=float(d1["U"]), inputs=tuple(changed),
    )
