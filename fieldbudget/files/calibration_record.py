"""Records of calibrations and of several-output budgets, kept so that an assessor can re-check them.

Two record kinds of our own live here (schema ``schemas/calibration-record-1.json``,
``schema_version`` "1.0"); :mod:`fieldbudget.files.record` hands them over
from ``make_record``, ``save_record``, ``load_record`` and ``verify_record``:

* ``"fieldbudget calibration record"``: a calibration file as given, the same
  content with every file it names read in (``resolved_file``, what is
  re-evaluated), the SHA-256 of those files, the merged budget of the points,
  the settings (propagation, Monte Carlo trials and seed), and the results:
  each point with its GUM table and Monte Carlo run, the covariance of the
  points, the curve and the conformity decisions, plus the summary that
  ``fieldbudget calibrate --json`` prints;
* ``"fieldbudget several-output record"``: a budget with several outputs, its
  GUM results with the outputs' covariance, and a Monte Carlo run if made.

``digest`` is the SHA-256 of the canonical serialisation (see
:func:`fieldbudget.files.record.canonical_bytes`) of the record without
``digest`` and ``signatures``, so signatures added later never change the
content they sign.  ``signatures`` holds the entries of the record-signature
shape (name, role, fingerprint, time, algorithm, public_key, signature).

Written by hand because no library does records of an uncertainty
evaluation; hashing, schema checks and signatures are hashlib, jsonschema and
the signing module.
"""

from __future__ import annotations

import hashlib
import json
import math
import secrets
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any

from .._display import utc_now as _utc_now
from ..errors import DigestMismatch, FieldbudgetError, InputError, RecordError, SchemaVersionError
from .atomic import atomic_write_text

__all__ = [
    "CALIBRATION_KIND",
    "SEVERAL_OUTPUT_KIND",
    "CalibrationRecord",
    "is_calibration_input",
    "load_calibration_record",
    "make_calibration_record",
    "make_several_output_record",
    "save_calibration_record",
    "verify_calibration_record",
]

CALIBRATION_KIND = "fieldbudget calibration record"
SEVERAL_OUTPUT_KIND = "fieldbudget several-output record"
KINDS = (CALIBRATION_KIND, SEVERAL_OUTPUT_KIND)
SCHEMA_VERSION = "1.1"  # 1.1 adds the optional identification and acceptance
SCHEMA_MAJOR = 1
_UNSIGNED = ("digest", "signatures")


def _plain(x: Any, where: str = "#") -> Any:
    """Plain JSON types; infinite numbers become None (infinite degrees of freedom), NaN is refused."""
    from .record import _jsonable

    return _jsonable(x, where, infinite_as_none=True)


def _canonical(doc: Mapping) -> bytes:
    from .record import canonical_bytes

    return canonical_bytes(doc)


def _content_digest(doc: Mapping) -> str:
    return hashlib.sha256(_canonical({k: v for k, v in doc.items() if k not in _UNSIGNED})).hexdigest()


@cache
def _schema() -> dict:
    return json.loads((Path(__file__).with_name("schemas") / "calibration-record-1.json").read_text("utf-8"))


# ----------------------------------------------------------------------------------------- the record
@dataclass(frozen=True)
class CalibrationRecord:
    """A record of a calibration (or of a several-output budget); an immutable JSON document.

    ``document`` is the whole record as plain JSON types (read-only use);
    :meth:`to_dict` gives a copy.  ``digest`` is what the record carries;
    :meth:`digest_ok` checks it against the content.
    """

    document: Mapping = field(repr=False)

    def __post_init__(self) -> None:
        from .record import _freeze, _thaw

        plain = json.loads(json.dumps(_thaw(self.document), allow_nan=False))
        object.__setattr__(self, "document", _freeze(plain))  # read-only mappings and tuples

    # -- content ----------------------------------------------------------------------------
    def to_dict(self) -> dict:
        from .record import _thaw

        return _thaw(self.document)

    def content(self) -> dict:
        """The document without ``digest`` and ``signatures`` (what the digest covers)."""
        return {k: v for k, v in self.to_dict().items() if k not in _UNSIGNED}

    @property
    def kind(self) -> str:
        return str(self.document.get("kind"))

    @property
    def is_calibration(self) -> bool:
        return self.kind == CALIBRATION_KIND

    @property
    def digest(self) -> str:
        return str(self.document.get("digest", ""))

    @property
    def signatures(self) -> list[dict]:
        return list(self.to_dict().get("signatures", []))

    def computed_digest(self) -> str:
        return _content_digest(self.to_dict())

    def digest_ok(self) -> bool:
        return self.digest == self.computed_digest()

    def get(self, key: str, default: Any = None) -> Any:
        return self.to_dict().get(key, default)

    @property
    def revision(self) -> int:
        return int(self.document.get("revision", 1))

    @property
    def calibration_file(self) -> dict:
        return dict(self.to_dict().get("calibration_file") or {})

    @property
    def results(self) -> dict:
        return dict(self.to_dict().get("results") or {})

    def summary(self) -> _Summary:
        """The object ``fieldbudget calibrate`` prints (``to_dict()``: the ``--json`` form)."""
        return _Summary(self.results.get("summary") or {}, self)

    @property
    def statement(self) -> str:
        s = self.results.get("summary") or {}
        n = len(s.get("points", []))
        return f"calibration {self.document.get('certificate_id') or ''}: {n} points".replace("  ", " ")

    def __repr__(self) -> str:
        cid = self.document.get("certificate_id") or ""
        return f"<CalibrationRecord {self.kind} {cid} rev {self.revision}, sha256 {self.digest[:12]}>"

    def _repr_html_(self) -> str:
        from .._display import html_table

        rows = [("kind", self.kind), ("certificate", self.document.get("certificate_id") or ""),
                ("created (UTC)", self.document.get("created_utc", "")), ("operator", self.document.get("operator", "")),
                ("signatures", ", ".join(f"{s.get('name')} ({s.get('role')})" for s in self.signatures) or "none"),
                ("SHA-256", self.digest)]
        return html_table(("", ""), rows, caption="fieldbudget record", css_class="fb-table fb-record")


@dataclass(frozen=True)
class _Summary:
    data: Mapping
    record: CalibrationRecord = field(repr=False)

    def to_dict(self) -> dict:
        return json.loads(json.dumps(self.data))

    def report(self) -> str:
        d = self.to_dict()
        lines = [f"{'point':8} {'reference (T)':>15} {'indication (T)':>15} {'error (T)':>12} {'U (T)':>9} "
                 f"{'k':>5}  route"]
        for p in d.get("points", []):
            lines.append(f"{p['id']:8} {p['reference_T']:15.9f} {p['indication_T']:15.7f} {p['error_T']:12.3e} "
                         f"{p['U_T']:9.2e} {p['k']:5.2f}  {p['propagation']}")
        c = d.get("curve")
        if c:
            co = ", ".join(f"a{j} = {x:.6g}" for j, x in enumerate(c["coefficients"]))
            lines.append(f"curve ({c['form']} form, degree {c['degree']}): {co}")
        for c in d.get("conformity", []):
            lines.append(f"conformity {c['point']}: {c['decision']} ({c['rule']}, p_c = {c['p_c']:.4f})")
        lines += [f"warning: {w}" for w in d.get("warnings", [])]
        return "\n".join(lines)


def is_calibration_input(x: Any) -> bool:
    """True for what :func:`make_calibration_record` takes: a CalibrationFile or calibration file content."""
    from .calibration_file import FORMAT, CalibrationFile

    return isinstance(x, CalibrationFile) or (isinstance(x, Mapping) and x.get("format") == FORMAT)


def _base(kind: str, *, operator: str, remarks: str, procedure: Any, created_utc: str | None) -> dict:
    from .record import _procedure_dict, software_versions

    for name, value in (("operator", operator), ("remarks", remarks)):
        if not isinstance(value, str):
            raise InputError(name, value, "text", "make_record")
    return {"schema_version": SCHEMA_VERSION, "kind": kind, "revision": 1, "previous_digest": None,
            "created_utc": created_utc or _utc_now(), "operator": operator, "remarks": remarks,
            "procedure": _procedure_dict(procedure), "software": software_versions()}


def _seal(doc: dict, sign: Any) -> CalibrationRecord:
    doc = _plain(doc)
    doc["signatures"] = []
    doc["digest"] = _content_digest(doc)
    if sign is not None:
        doc["signatures"].append(_signature(doc["digest"], sign))
    return CalibrationRecord(doc)


def _signature(digest: str, key: Any) -> dict:
    from . import signing

    if isinstance(key, (str, Path)):
        key = signing.load_signing_key(key)
    return dict(signing.sign_digest(key, digest))


def sign_calibration_record(record: CalibrationRecord, key: Any) -> CalibrationRecord:
    """The same record with one more signature over its (unchanged) content digest."""
    doc = record.to_dict()
    if not record.digest_ok():
        raise DigestMismatch("the record's digest does not match its content: not signed")
    doc["signatures"] = [*doc.get("signatures", []), _signature(doc["digest"], key)]
    return CalibrationRecord(doc)


# ----------------------------------------------------------------------------------------- making
def _evaluate_calibration(resolved: Mapping, forced: int | None, seed: int) -> tuple[Any, dict]:
    from .calibration_file import CalibrationFile

    cal = CalibrationFile.from_dict(resolved, where="record calibration file")
    out = cal.evaluate(monte_carlo=forced, seed=seed)
    return out, _results_of(out)


def _results_of(out: Any) -> dict:
    res = out.calibration
    return _plain({
        "summary": out.to_dict(),
        "propagation": res.propagation,
        "propagation_reason": res.propagation_reason,
        "points": [p.to_dict() for p in res.points],
        "covariance": [list(r) for r in res.covariance_],
        "curve": None if out.curve is None else out.curve.to_dict(),
        "conformity": [c.to_dict() for c in out.conformity],
        "monte_carlo": None if res.monte_carlo is None else {
            "trials": res.points[0].monte_carlo.trials, "seed": res.points[0].monte_carlo.seed,
            "generator": res.points[0].monte_carlo.to_dict().get("generator"),
            "numpy_version": res.points[0].monte_carlo.to_dict().get("numpy_version")},
        "warnings": [str(w) for w in out.warnings],
    }, "#/results")


def _revision(doc: dict, previous: Any, key: str) -> None:
    """Revision number, previous digest and what changed (top-level keys of ``key``) against ``previous``."""
    if previous is None:
        return
    if not isinstance(previous, CalibrationRecord) or previous.kind != doc["kind"]:
        raise InputError("previous", type(previous).__name__, f"a record of kind {doc['kind']!r} (the previous "
                         "revision) or None", "make_record")
    old, new = previous.to_dict().get(key) or {}, doc.get(key) or {}
    changes = []
    for k in sorted(set(old) | set(new)):
        if old.get(k) != new.get(k):
            what = "added" if k not in old else "removed" if k not in new else "changed"
            changes.append({"change": f"{key.replace('_', ' ')} {what}", "what": k,
                            "detail": json.dumps(new.get(k, old.get(k)), ensure_ascii=False)[:120]})
    doc.update({"revision": previous.revision + 1, "previous_digest": previous.digest, "changes": changes})


def make_calibration_record(calibration: Any, *, monte_carlo: int | None = None, seed: int | None = None,
                            operator: str = "", remarks: str = "", procedure: Any = None,
                            created_utc: str | None = None, sign: Any = None,
                            certificate: Mapping | None = None, previous: Any = None,
                            details: Mapping | None = None) -> CalibrationRecord:
    """Evaluate a calibration file and return its record (not yet saved).

    ``calibration``: a :class:`~fieldbudget.files.calibration_file.CalibrationFile`
    or calibration file content.  ``monte_carlo``: trials to force Monte Carlo
    at every point (else the file's ``propagation`` decides).  ``seed``: the
    Monte Carlo seed (else the file's ``monte_carlo_seed``, else one is drawn);
    it is recorded whether or not Monte Carlo runs.  ``sign``: a signing key
    (or its path) to sign the record with.  ``details``: ``identification``
    (who calibrated, under which authorisation, what) and ``acceptance`` (the
    procedure's verdict), as a measurement record keeps them (schema 1.1).
    """
    from .calibration_file import CalibrationFile

    cal = calibration if isinstance(calibration, CalibrationFile) else CalibrationFile.from_dict(
        dict(calibration), where="calibration")
    if monte_carlo is not None and (isinstance(monte_carlo, bool) or not isinstance(monte_carlo, int)
                                    or monte_carlo < 1):
        raise InputError("monte_carlo", monte_carlo, "a number of trials >= 1, or None", "make_record")
    if seed is None:
        s = cal.content.get("monte_carlo_seed")
        seed = int(s) if isinstance(s, (int, float)) and not isinstance(s, bool) else secrets.randbits(63)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError("seed", seed, "a whole number >= 0", "make_record")
    resolved, files = cal.resolved()
    out, results = _evaluate_calibration(resolved, monte_carlo, seed)
    budget = out.calibration.budget
    doc = _base(CALIBRATION_KIND, operator=operator, remarks=remarks, procedure=procedure, created_utc=created_utc)
    mc = results["monte_carlo"]
    doc.update({
        "certificate_id": cal.certificate_id,
        "calibration_file": _plain(cal.content, "#/calibration_file"),
        "resolved_file": _plain(resolved, "#/resolved_file"),
        "files": files,
        "budget": _plain(budget.to_dict(), "#/budget"),
        "input_order": [q.symbol for q in budget.inputs],
        "settings": {"forced_monte_carlo": monte_carlo, "seed": seed,
                     "monte_carlo": None if mc is None else _mc_settings(results),
                     "second_order_method": _second_order_method()},
        "results": results,
        "certificate": dict(certificate or {}),
    })
    doc.update(_details(details))
    _revision(doc, previous, "calibration_file")
    return _seal(doc, sign)


def _details(details: Mapping | None) -> dict:
    """The optional ``identification`` (text values) and ``acceptance`` blocks; nothing else is taken."""
    if details is None:
        return {}
    if not isinstance(details, Mapping):
        raise InputError("details", type(details).__name__, "a mapping with identification and acceptance",
                         "make_record")
    unknown = sorted(set(details) - {"identification", "acceptance"})
    if unknown:
        raise InputError("details", unknown[0], "identification or acceptance (what a calibration record keeps)",
                         "make_record")
    out: dict = {}
    ident = details.get("identification")
    if ident:
        if not isinstance(ident, Mapping) or not all(isinstance(v, str) for v in ident.values()):
            raise InputError("identification", ident, "a mapping of names to text", "make_record")
        out["identification"] = {str(k): v for k, v in ident.items()}
    if details.get("acceptance") is not None:
        out["acceptance"] = _plain(details["acceptance"], "#/acceptance")
    return out


def _points_sampler(results: Mapping) -> int:
    """The sampler version the points' Monte Carlo runs used."""
    for p in results.get("points") or []:
        mc = p.get("mc") if isinstance(p, Mapping) else None
        if isinstance(mc, Mapping):
            return int(mc.get("sampler", 1))
    from ..engine import montecarlo

    return montecarlo.SAMPLER


def _mc_settings(results: Mapping) -> dict:
    from .record import monte_carlo_tolerance

    mc = results["monte_carlo"]
    u = max(p["u"] for p in results["points"])
    return {"trials": int(mc["trials"]), "seed": int(mc["seed"]),
            "tolerance": monte_carlo_tolerance(float(u), int(mc["trials"])), "sampler": _points_sampler(results)}


def make_several_output_record(budget: Any, *, monte_carlo: Any = None, seed: int | None = None,
                               operator: str = "", remarks: str = "", procedure: Any = None,
                               created_utc: str | None = None, sign: Any = None,
                               previous: Any = None, details: Mapping | None = None) -> CalibrationRecord:
    """Evaluate a budget with several outputs and return its record: GUM results with the outputs'
    covariance (JCGM 100:2008 H.2) and, with ``monte_carlo`` trials, a Monte Carlo run (JCGM 101)."""
    from ..engine import evaluate

    doc = _base(SEVERAL_OUTPUT_KIND, operator=operator, remarks=remarks, procedure=procedure,
                created_utc=created_utc)
    gum = evaluate(budget)
    mc_d = None
    if monte_carlo is not None:
        if isinstance(monte_carlo, int) and not isinstance(monte_carlo, bool):
            if monte_carlo < 1:
                raise InputError("monte_carlo", monte_carlo, "a number of trials >= 1", "make_record")
            seed = secrets.randbits(63) if seed is None else seed
            from ..engine import montecarlo as _mc

            mc = _mc.run(budget, trials=monte_carlo, seed=seed)
        else:
            mc = monte_carlo
        mc_d = mc.to_dict()
    doc.update({"certificate_id": "", "budget": _plain(budget.to_dict(), "#/budget"),
                "input_order": [q.symbol for q in budget.inputs],
                "settings": {"forced_monte_carlo": None, "seed": seed,
                             "monte_carlo": None if mc_d is None else {"trials": int(_first(mc_d, "trials")),
                                                                       "seed": int(_first(mc_d, "seed")),
                                                                       "sampler": _sampler_of(mc_d)},
                             "second_order_method": _second_order_method()},
                "results": _plain({"gum": gum.to_dict(), "monte_carlo": mc_d}, "#/results")})
    doc.update(_details(details))
    _revision(doc, previous, "budget")
    return _seal(doc, sign)


def _second_order_method() -> int:
    from ..engine import second_order

    return second_order.default_method()


def _sampler_of(mc_d: Mapping) -> int:
    """The sampler version of a Monte Carlo result's dict (version 1 writes no key)."""
    outs = mc_d.get("outputs") or mc_d.get("results") or [mc_d]
    return int(outs[0].get("sampler", 1))


def _first(mc_d: Mapping, key: str) -> Any:
    if key in mc_d:
        return mc_d[key]
    outs = mc_d.get("outputs") or mc_d.get("results") or []
    return outs[0][key] if outs else None


# ----------------------------------------------------------------------------------------- files
def serialise(record: CalibrationRecord) -> str:
    return json.dumps(record.to_dict(), indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"


def save_calibration_record(record: CalibrationRecord, path: str | Path) -> Path:
    """Write the record atomically; a record whose digest does not match its content is refused."""
    if not isinstance(record, CalibrationRecord):
        raise InputError("record", type(record).__name__, "a CalibrationRecord", "save_record")
    if not record.digest_ok():
        raise DigestMismatch(f"{path}: not saved: the record's digest does not match its content")
    return atomic_write_text(path, serialise(record))


def parse_document(doc: Mapping, where: str) -> CalibrationRecord:
    """Check a parsed record document of one of these kinds against the schema."""
    import jsonschema

    version = doc.get("schema_version")
    if isinstance(version, str) and version.split(".", 1)[0].isdigit() and int(version.split(".")[0]) > SCHEMA_MAJOR:
        raise SchemaVersionError(f"{where}: written under record schema {version}; this fieldbudget reads "
                                 f"schema {SCHEMA_MAJOR}.x only. Open it with a newer fieldbudget; nothing was changed.")
    errors = sorted(jsonschema.Draft202012Validator(_schema()).iter_errors(doc), key=lambda e: len(e.absolute_path))
    if errors:
        err = jsonschema.exceptions.best_match(errors)
        ptr = "#/" + "/".join(map(str, err.absolute_path)) if err.absolute_path else "#"
        raise RecordError(f"{where}: record does not follow schema {version}, at {ptr}: {err.message}")
    return CalibrationRecord(doc)


def load_calibration_record(path: str | Path, *, check_digest: bool = True) -> CalibrationRecord:
    """Read a calibration (or several-output) record; nothing on disk is changed."""
    where = str(path)
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise RecordError(f"{where}: no such record file") from None
    except OSError as err:
        raise RecordError(f"{where}: cannot read the record ({err.strerror})") from None
    from .record import record_json

    doc = record_json(data, where)
    if not isinstance(doc, dict) or doc.get("kind") not in KINDS:
        raise RecordError(f"{where}: not a calibration or several-output record (kind "
                          f"{doc.get('kind') if isinstance(doc, dict) else None!r})")
    rec = parse_document(doc, where)
    if check_digest and not rec.digest_ok():
        raise DigestMismatch(f"{where}: the record's content does not match its SHA-256 digest (stored "
                             f"{rec.digest[:16]}..., computed {rec.computed_digest()[:16]}...): it was changed "
                             "after it was written")
    return rec


def record_kind(path: str | Path) -> str | None:
    """The ``kind`` of a record file, or None when it cannot be read as a JSON object."""
    try:
        doc = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return doc.get("kind") if isinstance(doc, dict) else None


# ----------------------------------------------------------------------------------------- verifying
def _diffs(a: Any, b: Any, path: str, out: list[str], tol: float | None, skip_text: bool = True) -> None:
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        for k in sorted(set(a) | set(b)):
            if k in ("warnings", "statement", "advice", "distribution", "propagation_reason") and skip_text:
                continue
            if k not in a or k not in b:
                out.append(f"{path}/{k}: {'missing now' if k not in b else 'not recorded'}")
                continue
            _diffs(a[k], b[k], f"{path}/{k}", out, tol, skip_text)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append(f"{path}: {len(a)} items recorded, {len(b)} recomputed")
            return
        for i, (x, y) in enumerate(zip(a, b)):
            _diffs(x, y, f"{path}/{i}", out, tol, skip_text)
    elif isinstance(a, float) and isinstance(b, (int, float)) and not isinstance(b, bool) and tol is not None:
        if not math.isclose(a, b, rel_tol=tol, abs_tol=0.0):
            out.append(f"{path}: recorded {a!r}, recomputed {b!r}")
    elif a != b and not (isinstance(a, str) and isinstance(b, str) and skip_text):
        out.append(f"{path}: recorded {a!r}, recomputed {b!r}")


def verify_calibration_record(record: CalibrationRecord | str | Path, *, trusted: Any = None) -> Any:
    """Re-check a calibration or several-output record: digest, file form, signatures, and every result
    recomputed from the recorded content (bit for bit with the recorded seed, generator and numpy)."""
    from .record import Check, VerifyResult, signature_checks, software_versions

    checks: list = []
    where = ""
    if isinstance(record, (str, Path)):
        where = str(record)
        raw = Path(record).read_bytes()
        record = load_calibration_record(record, check_digest=False)
        checks.append(Check("schema", "pass", f"follows record schema {record.document.get('schema_version')}"))
        if raw.replace(b"\r\n", b"\n") == serialise(record).encode("utf-8"):
            checks.append(Check("file form", "pass", "the file is byte for byte as fieldbudget writes this content"))
        else:
            checks.append(Check("file form", "fail", "the file's bytes differ from what fieldbudget writes for its "
                                "content (edited after it was written?)"))
    if not isinstance(record, CalibrationRecord):
        raise InputError("record", type(record).__name__, "a CalibrationRecord or a record file", "verify_record")
    computed = record.computed_digest()
    checks.append(Check("digest", "pass", f"SHA-256 {computed}") if computed == record.digest else
                  Check("digest", "fail", f"stored {record.digest or '(none)'} but the content gives {computed}"))
    sig_checks, sig_results = signature_checks(record.signatures, computed, trusted)
    checks += sig_checks
    doc = record.to_dict()
    then = doc.get("software") or {}
    same_stream = then.get("numpy") == software_versions().get("numpy")
    settings = doc.get("settings") or {}
    try:
        from ..engine import montecarlo as _mc
        from ..engine import second_order as _so
        from .record import recorded_sampler

        method = settings.get("second_order_method", 1)  # 1 for records made before methods were recorded
        if isinstance(method, bool) or method not in _so.METHODS:
            raise RecordError(f"second-order method {method!r} is not one this release knows "
                              f"({list(_so.METHODS)})")
        with _mc.sampler_version(recorded_sampler(settings.get("monte_carlo"))), _so.method_version(method):
            if record.is_calibration:
                _, fresh = _evaluate_calibration(doc["resolved_file"], settings.get("forced_monte_carlo"),
                                                 int(settings["seed"]))
            else:
                fresh = _several_output_results(doc)
    except FieldbudgetError as err:
        checks.append(Check("re-evaluation", "fail", f"the recorded content no longer evaluates: {err}"))
        return VerifyResult(tuple(checks), where, sig_results, trusted is not None)
    mc = (doc.get("results") or {}).get("monte_carlo")
    trials = int(mc["trials"]) if isinstance(mc, Mapping) and mc.get("trials") else None
    # Another numpy may draw another stream: then compare within 8/sqrt(M) relative (common practice).
    tol = None if same_stream or trials is None else 8.0 / math.sqrt(trials)
    diffs: list[str] = []
    _diffs(doc.get("results"), fresh, "#/results", diffs, tol)
    if diffs:
        checks.append(Check("results", "fail", f"{len(diffs)} recomputed numbers differ: " + "; ".join(diffs[:5])))
    else:
        what = ("points, covariance, curve and conformity" if record.is_calibration else "GUM results")
        how = "to the last digit" if tol is None else f"within {tol:.2g} relative (numpy differs)"
        checks.append(Check("results", "pass", f"{what} recomputed and agree {how}"
                            + (f"; Monte Carlo {trials} trials, seed {settings.get('seed')}" if trials else "")))
    if doc.get("kind") == CALIBRATION_KIND:
        checks += _file_checks(doc, where)
    now = software_versions()
    moved = [f"{k} {then.get(k)} -> {now.get(k)}" for k in ("fieldbudget", "numpy", "scipy") if then.get(k) != now.get(k)]
    checks.append(Check("software", "info", "same versions as recorded" if not moved
                        else "versions differ from the record: " + ", ".join(moved)))
    return VerifyResult(tuple(checks), where, sig_results, trusted is not None)


def _several_output_results(doc: Mapping) -> dict:
    from ..engine import Budget, evaluate

    content = dict(doc["budget"])
    order = doc.get("input_order") or []
    if isinstance(content.get("inputs"), dict):
        content["inputs"] = {s: content["inputs"][s] for s in order if s in content["inputs"]}
    budget = Budget.from_dict(content, where="record budget")
    mc_d = None
    mc_s = (doc.get("settings") or {}).get("monte_carlo")
    if mc_s:
        from ..engine import montecarlo as _mc

        mc_d = _mc.run(budget, trials=int(mc_s["trials"]), seed=int(mc_s["seed"])).to_dict()
    return _plain({"gum": evaluate(budget).to_dict(), "monte_carlo": mc_d})



def _file_checks(doc: Mapping, where: str) -> list:
    from .record import Check

    files = doc.get("files") or []
    if not files:
        return []
    base = Path(where).parent if where else Path(".")
    notes = []
    for f in files:
        p = base / f["path"]
        if not p.exists():
            notes.append(f"{f['path']} not beside the record (the record holds its content)")
        elif hashlib.sha256(p.read_bytes()).hexdigest() != f["sha256"]:
            notes.append(f"{f['path']} differs from the file used (the record holds the content used)")
    return [Check("source files", "info", "; ".join(notes) if notes else
                  f"{len(files)} file(s) beside the record match their recorded SHA-256")]
