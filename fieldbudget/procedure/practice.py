"""Practice runs with known answers: a procedure's practice cases, the trainee's pass and its comparison.

A procedure file may carry ``[[practice]]`` cases (checked against
``data/practice.schema.json``; see ``docs/training.md``): invented readings
(``given``), the decisions the procedure leaves to the operator
(``decisions``: which correction applies, what to copy from a certificate and
divide by what), and the laboratory's reference answer (``answer``: the
results with their tolerances, the key intermediate quantities, and whether
the value may be issued at all).

:func:`practice_procedure` turns a case into an ordinary :class:`Procedure`
in which the readings are fixed ("practice data") and each decision is a box
the trainee fills in, so the guided form shows it as it is.
:class:`PracticeSession` holds one trainee's pass; :meth:`PracticeSession.submit`
builds the reference budget from the answers and compares the two budgets
input by input, explaining each difference in words: which input, by how
much, what it does to U, and the procedure step that says what to do.

Written by hand: the comparison of two budgets of the same procedure and the
wording of the differences are this kit's own; the budgets themselves come
from the NMR and calibration layers through :class:`ProcedureRun`.
"""

from __future__ import annotations

import json
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from .. import _display
from .._display import utc_now
from ..errors import BudgetFileError, InputError
from .procedure import RESULT_QUANTITIES, Component, Procedure, Training, _path_text, _plain
from .run import ProcedureRun, _parse, result_quantities

__all__ = [
    "PRACTICE_RESULT_FORMAT",
    "Decision",
    "Difference",
    "PracticeAnswer",
    "PracticeCase",
    "PracticeResult",
    "PracticeSession",
    "practice_case",
    "practice_cases",
    "practice_cases_from_list",
    "practice_procedure",
]

PRACTICE_RESULT_FORMAT = "fieldbudget-practice-result/1"
DEFAULT_TOLERANCE = 1e-6  # relative, for a decision that is a number (lab files may set their own)
PRACTICE_SOURCE = "practice data of case {case!r} (invented for training)"

#: The result quantities that are "the value" and "U" for each procedure kind, with their words.
VALUE_QUANTITY = {"nmr-field": ("value", "B0"), "teslameter-calibration": ("max_abs_error", "the largest |E|")}
U_QUANTITY = {"nmr-field": ("expanded_uncertainty", "U"),
              "teslameter-calibration": ("max_expanded_uncertainty", "the largest U(E)")}

# Ratios of a wrong standard uncertainty to the right one, and what they usually mean (common practice).
_RATIO_WORDS = (
    (2.0, "this is 2 x the reference: the certificate's expanded uncertainty U looks copied without dividing "
          "by its coverage factor k = 2"),
    (0.5, "this is half the reference: the value looks divided by 2 once too often"),
    (math.sqrt(3.0), "this is sqrt(3) x the reference: a half-width looks taken as the standard uncertainty "
                     "without dividing by sqrt(3) (rectangular distribution)"),
    (math.sqrt(3.0) / 2.0, "this is sqrt(3)/2 x the reference: the value looks divided by sqrt(3) (rectangular) "
                           "where the source states U with k = 2 (divide by 2)"),
    (2.0 / math.sqrt(3.0), "this is 2/sqrt(3) x the reference: the value looks divided by 2 where it is a "
                           "rectangular half-width (divide by sqrt(3))"),
    (3.0, "this is 3 x the reference: a k = 3 value looks copied without dividing by 3"),
)


@cache
def _schema() -> dict:
    text = resources.files(__package__).joinpath("data/practice.schema.json").read_text("utf-8")
    return json.loads(text)


def _words(v: Any, unit: str = "", digits: int = 4) -> str:
    """A value as the trainee typed it, for an explanation or a table cell, with its unit."""
    if v is None:
        return "nothing"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (list, tuple)):
        return ", ".join(_words(x, digits=digits) for x in v)
    if isinstance(v, (int, float)) and unit in _display.PREFIXABLE_UNITS:
        return _display.fmt_si(float(v), unit, digits=digits, group=False)
    text = _display.fmt(v, digits) if isinstance(v, float) else str(v)
    return f"{text} {_display.pretty_unit(unit)}".strip()


@dataclass(frozen=True)
class Decision:
    """One decision the trainee makes in a practice case: the value of ``component``."""

    component: str
    question: str
    answer: Any
    tolerance: float = DEFAULT_TOLERANCE
    hint: str = ""

    def agrees(self, value: Any) -> bool:
        """True when ``value`` is the answer (numbers within the relative tolerance)."""
        a = self.answer
        if isinstance(a, tuple):
            return isinstance(value, tuple) and len(value) == len(a) and all(
                Decision(self.component, "", x, self.tolerance).agrees(y) for x, y in zip(a, value))
        if isinstance(a, (int, float)) and not isinstance(a, bool):
            if not isinstance(value, (int, float)) or isinstance(value, bool):
                return False
            return abs(float(value) - float(a)) <= self.tolerance * abs(float(a)) if a != 0 \
                else abs(float(value)) <= self.tolerance
        if isinstance(a, str) and isinstance(value, str):
            return a.strip().casefold() == value.strip().casefold()
        return value == a

    def to_dict(self) -> dict:
        return {"component": self.component, "question": self.question, "answer": _plain(self.answer),
                "tolerance": self.tolerance, "hint": self.hint}


@dataclass(frozen=True)
class PracticeAnswer:
    """The laboratory's reference answer to a practice case."""

    issue: bool
    results: Mapping[str, tuple[float, float]]  # quantity -> (value, absolute tolerance)
    inputs: Mapping[str, tuple[float, float]] = field(default_factory=dict)  # symbol -> (estimate, u)
    issue_hint: str = ""
    issue_step: str = ""

    def to_dict(self) -> dict:
        return {"issue": self.issue, "issue_hint": self.issue_hint, "issue_step": self.issue_step,
                "results": {k: {"value": v, "tolerance": t} for k, (v, t) in self.results.items()},
                "inputs": {k: {"estimate": e, "u": u} for k, (e, u) in self.inputs.items()}}


@dataclass(frozen=True)
class PracticeCase:
    """One practice case of a procedure: invented readings, decisions and the reference answer."""

    id: str
    title: str
    invented: str
    story: str
    given: Mapping[str, Any]
    decisions: tuple[Decision, ...]
    answer: PracticeAnswer
    lab_values: Mapping[str, Any] = field(default_factory=dict)
    extra: Mapping[str, Any] = field(default_factory=dict)

    def decision(self, component_id: str) -> Decision:
        for d in self.decisions:
            if d.component == component_id:
                return d
        raise KeyError(component_id)

    def __repr__(self) -> str:
        return f"<PracticeCase {self.id!r}: {self.title} ({len(self.decisions)} decisions)>"

    def _repr_html_(self) -> str:
        e = _display.escape
        return (f'<div class="fb-practice-case"><strong>{e(self.title)}</strong> <em>{e(self.invented)}</em>'
                f"<p>{e(self.story)}</p></div>")

    def to_dict(self, *, with_answer: bool = False) -> dict:
        """The case as plain JSON types; the answers only when ``with_answer`` (they stay hidden in practice)."""
        d = {"id": self.id, "title": self.title, "invented": self.invented, "story": self.story,
             "given": {k: _plain(v) for k, v in self.given.items()},
             "questions": [{"component": x.component, "question": x.question} for x in self.decisions]}
        if with_answer:
            d["decisions"] = [x.to_dict() for x in self.decisions]
            d["answer"] = self.answer.to_dict()
        return d


# ---------------------------------------------------------------- reading the cases


def _check_case_value(where: str, parts: list, comp: Component, value: Any) -> Any:
    try:
        return _parse(comp, value, where)
    except InputError as err:
        raise BudgetFileError(where, _path_text(parts), f"must be {err.allowed} (got {value!r})") from None


def practice_cases(procedure: Procedure) -> tuple[PracticeCase, ...]:
    """The ``[[practice]]`` cases of ``procedure``'s file (as :func:`load_procedure` read it; a procedure
    built without them is read again from ``procedure.path``).

    Raises
    ------
    BudgetFileError
        A case breaks ``practice.schema.json`` or names a component, step or
        result quantity the procedure does not have; the message names the
        file and the key path (``practice[1].decisions[0].component``).
    """
    where = procedure.path or "procedure"
    if procedure.practice_json is not None:
        return practice_cases_from_list(procedure, json.loads(procedure.practice_json), where)
    try:
        data = tomllib.loads(Path(procedure.path).read_text("utf-8")) if procedure.path else {}
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as err:
        raise BudgetFileError(where, "", f"cannot be read again for its practice cases ({err})") from None
    return practice_cases_from_list(procedure, data.get("practice", []), where)


def practice_cases_from_list(procedure: Procedure, items: list, where: str) -> tuple[PracticeCase, ...]:
    """Check and build the practice cases ``items`` (the parsed ``practice`` array) of ``procedure``."""
    import jsonschema

    from .procedure import _schema_reason

    validator = jsonschema.Draft202012Validator(_schema())
    ids = {c.id for c in procedure.components}
    step_ids = [s.id for s in procedure.steps]
    quantities = RESULT_QUANTITIES[procedure.kind]
    out: list[PracticeCase] = []
    for i, item in enumerate(items):
        base: list = ["practice", i]
        errors = list(validator.iter_errors(item))
        if errors:
            err = min(errors, key=lambda e: (len(e.absolute_path), [str(x) for x in e.absolute_path]))
            raise BudgetFileError(where, _path_text(base + list(err.absolute_path)), _schema_reason(err))
        if any(c.id == item["id"] for c in out):
            raise BudgetFileError(where, _path_text(base + ["id"]), f"must be unique; {item['id']!r} is used twice")
        if "invented" not in item["invented"].lower():
            raise BudgetFileError(where, _path_text(base + ["invented"]),
                                  f"must say that the practice data is invented (got {item['invented']!r})")
        given: dict[str, Any] = {}
        for cid, v in item["given"].items():
            if cid not in ids:
                raise BudgetFileError(where, _path_text(base + ["given", cid]),
                                      f"must name a component of this procedure (got {cid!r})")
            given[cid] = _check_case_value(where, base + ["given", cid], procedure.component(cid), v)
        lab_values: dict[str, Any] = {}
        for cid, v in item.get("lab_values", {}).items():
            if cid not in ids or not procedure.component(cid).fixed:
                raise BudgetFileError(where, _path_text(base + ["lab_values", cid]),
                                      f"must name a component the lab fixes (got {cid!r})")
            lab_values[cid] = _check_case_value(where, base + ["lab_values", cid], procedure.component(cid), v)
        targets = {c.target for c in procedure.components}
        for key in item.get("extra", {}):
            if any(key == t or key.startswith(t + ".") or t.startswith(key + ".") for t in targets):
                raise BudgetFileError(where, _path_text(base + ["extra", key]),
                                      f"must be a key path no component writes (got {key!r})")
        decisions: list[Decision] = []
        for j, d in enumerate(item["decisions"]):
            parts = base + ["decisions", j]
            cid = d["component"]
            if cid not in ids or not any(cid in s.components for s in procedure.steps):
                raise BudgetFileError(where, _path_text(parts + ["component"]),
                                      f"must name a component listed in a step (got {cid!r})")
            if cid in given or any(x.component == cid for x in decisions):
                raise BudgetFileError(where, _path_text(parts + ["component"]),
                                      f"must not be given or decided twice (got {cid!r})")
            comp = procedure.component(cid)
            if "answer" in d:
                answer = _check_case_value(where, parts + ["answer"], comp, d["answer"])
            elif comp.fixed:
                answer = lab_values.get(cid, comp.value)
            else:
                raise BudgetFileError(where, _path_text(parts), "missing required key 'answer' for a component "
                                                                "the operator enters")
            decisions.append(Decision(cid, d["question"], answer, float(d.get("tolerance", DEFAULT_TOLERANCE)),
                                      d.get("hint", "")))
        a = item["answer"]
        for q in a["results"]:
            if q not in quantities:
                raise BudgetFileError(where, _path_text(base + ["answer", "results", q]),
                                      f"must be one of {', '.join(map(repr, quantities))} (got {q!r})")
        issue_step = a.get("issue_step", step_ids[-1])
        if issue_step not in step_ids:
            raise BudgetFileError(where, _path_text(base + ["answer", "issue_step"]),
                                  f"must name a step ({', '.join(step_ids)}) (got {issue_step!r})")
        answer = PracticeAnswer(
            issue=a["issue"], issue_hint=a.get("issue_hint", ""), issue_step=issue_step,
            results={q: (float(r["value"]), float(r["tolerance"])) for q, r in a["results"].items()},
            inputs={s: (float(r["estimate"]), float(r["u"])) for s, r in a.get("inputs", {}).items()})
        out.append(PracticeCase(item["id"], item["title"], item["invented"], item["story"], given,
                                tuple(decisions), answer, lab_values, dict(item.get("extra", {}))))
    return tuple(out)


def practice_case(procedure: Procedure, case_id: str) -> PracticeCase:
    """The practice case ``case_id`` of ``procedure`` (an error naming the cases there are)."""
    cases = practice_cases(procedure)
    for c in cases:
        if c.id == case_id:
            return c
    names = ", ".join(repr(c.id) for c in cases) or "none: the file has no [[practice]] cases"
    raise InputError("case", case_id, f"a practice case of {procedure.id!r} ({names})", procedure.path or "practice")


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, (int, float)):
        return "number"
    if isinstance(value, (list, tuple)):
        return "numbers"
    return "text"


def practice_procedure(procedure: Procedure, case: PracticeCase) -> Procedure:
    """The procedure as the trainee meets it in ``case``.

    The case's readings are fixed (source: practice data), each decision is a
    box the trainee fills in (no default, and no typical value shown, so the
    answer stays hidden), the case's lab values replace the lab's, and the
    scenario's extra facts are written where the domain layer reads them.
    """
    source = PRACTICE_SOURCE.format(case=case.id)
    decided = {d.component: d for d in case.decisions}
    comps: list[Component] = []
    for c in procedure.components:
        if c.id in decided:
            tr = c.training
            hidden = replace(tr, typical="(hidden in practice until you submit)") if tr else None
            comps.append(replace(c, set_by="operator", value=None, required=True, source="",
                                 help=decided[c.id].question, training=hidden))
        elif c.id in case.given:
            comps.append(replace(c, set_by="lab", value=case.given[c.id], source=source))
        elif c.id in case.lab_values:
            comps.append(replace(c, value=case.lab_values[c.id], source=f"{source}, replacing {c.source}"))
        else:
            comps.append(c)
    for n, (key, value) in enumerate(sorted(case.extra.items())):
        v = tuple(value) if isinstance(value, list) else value
        comps.append(Component(id=f"practice_fact_{n}", target=key, label=f"scenario fact {key}",
                               kind=_kind_of(v), set_by="lab", value=v, source=source,
                               training=Training("A fact of the practice scenario.", "The physics checks use it.",
                                                 "see the case's story")))
    return replace(procedure, components=tuple(comps))


# ---------------------------------------------------------------- results


@dataclass(frozen=True)
class Difference:
    """One difference between the trainee's answer and the reference, explained in words.

    ``kind`` is ``"decision"`` (a value the trainee chose), ``"issue"`` (whether
    to issue the value) or ``"result"`` (a result outside its tolerance).
    ``u_effect`` is U with this one difference minus the reference U (in the
    result's unit), None when it cannot be said.
    """

    kind: str
    subject: str
    label: str
    step: str
    trainee: Any
    reference: Any
    explanation: str
    u_effect: float | None = None
    inputs: tuple[str, ...] = ()

    def __repr__(self) -> str:
        return f"<Difference {self.kind} {self.subject!r} (step {self.step!r})>"

    def to_dict(self) -> dict:
        return {"kind": self.kind, "subject": self.subject, "label": self.label, "step": self.step,
                "trainee": _plain(self.trainee), "reference": _plain(self.reference),
                "u_effect": self.u_effect, "inputs": list(self.inputs), "explanation": self.explanation}


@dataclass(frozen=True)
class PracticeResult:
    """The end of a practice run: passed, or not passed with every difference explained.

    ``rows`` is the side-by-side table of the two budgets, one row per budget
    input: ``(symbol, description, unit, trainee estimate, trainee u,
    reference estimate, reference u, differs)``; ``results`` has one row per
    result quantity of the answer: ``(quantity, unit, trainee, reference,
    tolerance, within)``.
    """

    procedure_id: str
    procedure_version: str
    procedure_name: str
    lab: str
    case_id: str
    case_title: str
    invented: str
    trainee: str
    time: str
    issue_trainee: bool
    issue_reference: bool
    differences: tuple[Difference, ...]
    rows: tuple[tuple, ...]
    results: tuple[tuple, ...]
    decisions: tuple[tuple, ...]  # (component, label, step, trainee, reference, agrees)

    @property
    def passed(self) -> bool:
        return not self.differences

    @property
    def verdict(self) -> str:
        return "passed" if self.passed else "not passed"

    def __repr__(self) -> str:
        extra = "" if self.passed else f", {len(self.differences)} difference(s)"
        return (f"<PracticeResult {self.trainee or '(no name)'} on {self.procedure_id} v{self.procedure_version} "
                f"case {self.case_id!r}: {self.verdict}{extra}>")

    def to_dict(self) -> dict:
        """Plain JSON types; the content of a practice record (``fieldbudget-practice/1``)."""
        return {
            "format": PRACTICE_RESULT_FORMAT, "passed": self.passed, "trainee": self.trainee, "time": self.time,
            "procedure": {"id": self.procedure_id, "version": self.procedure_version, "name": self.procedure_name,
                          "lab": self.lab},
            "case": {"id": self.case_id, "title": self.case_title, "invented": self.invented},
            "issue": {"trainee": self.issue_trainee, "reference": self.issue_reference},
            "decisions": [{"component": c, "label": lab, "step": s, "trainee": _plain(t), "reference": _plain(r),
                           "agrees": ok} for c, lab, s, t, r, ok in self.decisions],
            "results": [{"quantity": q, "unit": u, "trainee": _plain(t), "reference": r, "tolerance": tol,
                         "within": ok} for q, u, t, r, tol, ok in self.results],
            "budget": [{"symbol": s, "description": d, "unit": u, "trainee_estimate": _plain(te),
                        "trainee_u": _plain(tu), "reference_estimate": _plain(re), "reference_u": _plain(ru),
                        "differs": x} for s, d, u, te, tu, re, ru, x in self.rows],
            "differences": [d.to_dict() for d in self.differences],
        }

    # ------------------------------------------------------------ display
    def side_by_side_html(self) -> str:
        """The two budgets input by input; a differing row has class ``fb-practice-differs`` and a mark."""
        e = _display.escape
        head = ("<tr><th>input</th><th>what it is</th><th>your estimate</th><th>your u</th>"
                "<th>reference estimate</th><th>reference u</th><th></th></tr>")
        body = []
        for s, d, u, te, tu, re, ru, x in self.rows:
            cls = ' class="fb-practice-differs"' if x else ""
            mark = "&#9888; differs" if x else "same"
            # in the input's unit, SI-prefixed alike; estimates with enough digits to show a reading's difference
            cells = "".join(f'<td class="fb-num">{e(_words(v, u, n))}</td>'
                            for v, n in ((te, 10), (tu, 4), (re, 10), (ru, 4)))
            body.append(f"<tr{cls}><td>{e(s)}</td><td>{e(d)}</td>{cells}<td>{mark}</td></tr>")
        return (f'<table class="fb-table fb-practice-side-by-side"><thead>{head}</thead>'
                f"<tbody>{''.join(body)}</tbody></table>")

    def _results_html(self) -> str:
        rows = [(q, _words(t, u), _words(r, u), _words(tol, u), "within" if ok else "OUTSIDE")
                for q, u, t, r, tol, ok in self.results]
        return _display.html_table(("result", "yours", "reference", "tolerance", ""), rows,
                                   css_class="fb-table fb-practice-results")

    def _differences_html(self) -> str:
        if self.passed:
            return ('<p class="fb-practice-verdict fb-verdict-pass">Passed: every decision agrees with '
                    "the reference answer and every result is within its tolerance.</p>")
        items = "".join(f'<li class="fb-practice-difference"><strong>{_display.escape(d.label)}</strong>: '
                        f"{_display.escape(d.explanation)}</li>" for d in self.differences)
        return (f'<p class="fb-practice-verdict fb-verdict-fail">Not passed: {len(self.differences)} '
                f'difference(s) from the reference answer.</p><ol class="fb-practice-differences">{items}</ol>')

    def _repr_html_(self) -> str:
        e = _display.escape
        return (f'<div class="fb-practice-result"><h4>Practice case {e(self.case_title)}: {e(self.verdict)}</h4>'
                f"{self._differences_html()}<h5>Results</h5>{self._results_html()}"
                f"<h5>Your budget beside the reference, input by input</h5>{self.side_by_side_html()}</div>")

    def summary_html(self) -> str:
        """A printable page for the training file: who, what, the verdict, the differences, both budgets."""
        e = _display.escape
        issue = {True: "issue the value", False: "do not issue the value"}
        meta = _display.html_table(("", ""), (
            ("Trainee", self.trainee or "(not named)"), ("Procedure", f"{self.procedure_name} ({self.procedure_id}) "
                                                                      f"version {self.procedure_version}"),
            ("Laboratory", self.lab), ("Practice case", f"{self.case_title} ({self.case_id}): {self.invented}"),
            ("Submitted (UTC)", self.time), ("Trainee's decision", issue[self.issue_trainee]),
            ("Reference decision", issue[self.issue_reference]), ("Result", self.verdict)),
            css_class="fb-table fb-practice-meta")
        return ("<!DOCTYPE html><html><head><meta charset=\"utf-8\"><title>Practice result</title><style>"
                "body{font-family:sans-serif;margin:2em}table{border-collapse:collapse}td,th{border:1px solid #888;"
                "padding:2px 6px}.fb-practice-differs td{font-weight:bold;background:#fde2e2}</style></head><body>"
                f"<h1>Practice result: {e(self.verdict)}</h1>{meta}<h2>Differences</h2>{self._differences_html()}"
                f"<h2>Results</h2>{self._results_html()}<h2>Budgets side by side</h2>{self.side_by_side_html()}"
                "<h2>Signatures</h2><p>Trainee: ______________________ date ________</p>"
                "<p>Supervisor: ______________________ date ________</p>"
                "<p><small>Training record for ISO/IEC 17025:2017 6.2.5 and 6.2.6; the practice data is invented."
                "</small></p></body></html>")

    def summary_text(self) -> str:
        """The verdict and every explanation as plain text (one paragraph each)."""
        lines = [f"Practice case {self.case_title} ({self.case_id}) of {self.procedure_id} v{self.procedure_version}"
                 f", trainee {self.trainee or '(not named)'}: {self.verdict}."]
        lines += [f"{i}. {d.label}: {d.explanation}" for i, d in enumerate(self.differences, 1)]
        return "\n".join(lines)


# ---------------------------------------------------------------- the trainee's pass


class PracticeSession:
    """One trainee's pass through a practice case.

    ``session.run`` is the :class:`ProcedureRun` the guided form drives (the
    readings fixed, the decisions open, training mode on).  The trainee also
    says whether the value may be issued (:meth:`decide_issue`).  The
    reference answer stays hidden until :meth:`submit`.
    """

    def __init__(self, procedure: Procedure, case: PracticeCase | str, *, trainee: str = "") -> None:
        self.procedure = procedure
        self.case = practice_case(procedure, case) if isinstance(case, str) else case
        self.trainee = str(trainee or "").strip()
        self.practice = practice_procedure(procedure, self.case)
        self.run = ProcedureRun(self.practice, training=True)
        self._issue: bool | None = None
        self._result: PracticeResult | None = None

    @property
    def _where(self) -> str:
        return f"practice case {self.case.id!r} of procedure {self.procedure.id!r}"

    # ------------------------------------------------------------ trainee's inputs
    def decide(self, component_id: str, value: Any) -> Any:
        """Enter the trainee's answer to one decision (as :meth:`ProcedureRun.set`)."""
        if self._result is not None:
            raise InputError("decision", component_id, "left as submitted (start a new session to try again)",
                             self._where)
        return self.run.set(component_id, value)

    def decide_issue(self, issue: bool) -> None:
        """The trainee's verdict: True to issue the value, False not to issue it."""
        if not isinstance(issue, bool):
            raise InputError("issue", issue, "true (issue the value) or false (do not issue it)", self._where)
        if self._result is not None:
            raise InputError("issue", issue, "left as submitted (start a new session to try again)", self._where)
        self._issue = issue

    @property
    def issue(self) -> bool | None:
        return self._issue

    def progress(self) -> dict:
        """Where the trainee is: the step, the decisions made, whether the verdict is given and submitted."""
        made = [d.component for d in self.case.decisions if d.component in self.run.entered]
        return {"step": self.run.step_index + 1, "steps": len(self.run.steps), "step_title": self.run.step.title,
                "decisions_made": len(made), "decisions": len(self.case.decisions),
                "issue_decided": self._issue is not None, "submitted": self._result is not None}

    def progress_text(self) -> str:
        p = self.progress()
        verdict = "given" if p["issue_decided"] else "still to give"
        return (f"Step {p['step']} of {p['steps']} ({p['step_title']}); decisions made: {p['decisions_made']} of "
                f"{p['decisions']}; verdict on issuing: {verdict}" + ("; submitted" if p["submitted"] else ""))

    # ------------------------------------------------------------ the answer
    @property
    def submitted(self) -> bool:
        return self._result is not None

    @property
    def result(self) -> PracticeResult | None:
        return self._result

    @property
    def reference(self) -> PracticeAnswer:
        """The reference answer, once submitted (before that: an error saying so)."""
        if self._result is None:
            raise InputError("reference", "(hidden)", "asked for after submitting (it stays hidden until then)",
                             self._where)
        return self.case.answer

    def _reference_run(self, replace_with: Mapping[str, Any] | None = None) -> ProcedureRun:
        values = {d.component: d.answer for d in self.case.decisions}
        values.update(replace_with or {})
        values.update({k: v for k, v in self.run.entered.items() if k not in values})  # operator's own fields
        return ProcedureRun(self.practice, entered=values)

    def submit(self) -> PracticeResult:
        """Compare the trainee's budget with the reference and return the :class:`PracticeResult`.

        Raises
        ------
        InputError
            A decision or the verdict on issuing is still missing, or the
            trainee's values cannot be evaluated (the message names the field).
        """
        if self._result is not None:
            return self._result
        missing = [d for d in self.case.decisions if d.component not in self.run.entered]
        if missing:
            raise InputError(missing[0].component, None, f"answered first ({missing[0].question})", self._where)
        if self._issue is None:
            raise InputError("issue", None, "decided first: issue the value or not (decide_issue)", self._where)
        if not self.run.current:
            field_name, why = next(iter(self.run.errors.items()), ("measurement", "cannot be evaluated"))
            raise InputError(field_name, why, "a value the budget can be evaluated with", self._where)
        reference = self._reference_run()
        if not reference.current:  # the file's own answers must evaluate; a lab mistake, named as such
            raise BudgetFileError(self.procedure.path or "procedure", f"practice case {self.case.id!r}",
                                  f"the reference answers cannot be evaluated: {dict(reference.errors)}")
        self._result = _compare(self, reference)
        return self._result

    def __repr__(self) -> str:
        return f"<PracticeSession {self.case.id!r} of {self.procedure.id!r}: {self.progress_text()}>"


def _inputs(run: ProcedureRun) -> dict[str, Any]:
    b = run.last_budget
    return {q.symbol: q for q in (b.inputs if b is not None else ())}


def _close(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is b
    return abs(a - b) <= 1e-9 * max(abs(a), abs(b)) or abs(a - b) <= 1e-300


def _changed_inputs(a: dict, b: dict) -> list[str]:
    """Budget inputs whose estimate or standard uncertainty differ (or that one budget lacks), in order."""
    out = []
    for s in list(a) + [s for s in b if s not in a]:
        qa, qb = a.get(s), b.get(s)
        if qa is None or qb is None or not (_close(qa.estimate, qb.estimate)
                                            and _close(qa.standard_uncertainty, qb.standard_uncertainty)):
            out.append(s)
    return out


def _input_words(s: str, mine: dict, ref: dict) -> str:
    qm, qr = mine.get(s), ref.get(s)
    if qm is None:
        return f"{s} is missing from your budget"
    if qr is None:
        return f"{s} is in your budget but not in the reference"
    parts = []
    if not _close(qm.estimate, qr.estimate):
        parts.append(f"estimate {_words(qm.estimate, qm.unit)} instead of {_words(qr.estimate, qr.unit)}")
    if not _close(qm.standard_uncertainty, qr.standard_uncertainty):
        parts.append(f"u {_words(qm.standard_uncertainty, qm.unit)} instead of "
                     f"{_words(qr.standard_uncertainty, qr.unit)}")
    return f"{s} ({qr.description}): " + ", ".join(parts)


def _diagnosis(decision: Decision, mine: Any) -> str:
    a = decision.answer
    if not (isinstance(a, (int, float)) and isinstance(mine, (int, float))) or isinstance(a, bool):
        return ""
    if a != 0 and mine == 0:
        return "you left this correction out (0), but it applies: a missing correction"
    if a == 0 and mine != 0:
        return "you applied a correction the reference does not apply"
    if a != 0 and abs(mine + a) <= 1e-6 * abs(a):
        return "the sign is reversed"
    ratio = mine / a
    for r, words in _RATIO_WORDS:
        if abs(ratio - r) <= 0.01 * r:
            return words
    return f"this is {_display.fmt(ratio, 3)} x the reference"


def _step_words(procedure: Procedure, component_id: str | None = None, step_id: str | None = None) -> tuple[str, str]:
    """(step id, words naming the step and quoting its instruction) for a component or a step id."""
    for i, s in enumerate(procedure.steps):
        if (component_id is not None and component_id in s.components) or s.id == step_id:
            return s.id, (f"Step {i + 1} of {len(procedure.steps)}, '{s.title}', says: "
                          f"\"{' '.join(s.instruction.split())}\"")
    return "", ""


def _u_words(kind: str, unit: str, u_alt: float | None, u_ref: float | None) -> tuple[str, float | None]:
    name = U_QUANTITY[kind][1]
    if u_alt is None or u_ref is None:
        return "", None
    d = u_alt - u_ref
    if _close(u_alt, u_ref):
        return f"it leaves {name} unchanged at {_words(u_ref, unit)}", 0.0
    if u_ref and abs(d / u_ref) < 5e-4:
        return f"it leaves {name} practically unchanged at {_words(u_ref, unit)}", d
    rel = f" ({'+' if d > 0 else ''}{_display.fmt(100 * d / u_ref, 2)} %)" if u_ref else ""
    return f"with it {name} is {_words(u_alt, unit)} instead of {_words(u_ref, unit)}{rel}", d


def _compare(session: PracticeSession, reference: ProcedureRun) -> PracticeResult:
    proc, case, run = session.procedure, session.case, session.run
    kind = proc.kind
    u_key = U_QUANTITY[kind][0]
    u_unit = RESULT_QUANTITIES[kind][u_key]
    mine_q = result_quantities(kind, run.outcome)
    ref_q = result_quantities(kind, reference.outcome)
    mine_in, ref_in = _inputs(run), _inputs(reference)
    differences: list[Difference] = []
    decisions: list[tuple] = []
    for d in case.decisions:
        comp = session.practice.component(d.component)
        mine = run.entered.get(d.component)
        step_id, step_text = _step_words(proc, d.component)
        ok = d.agrees(mine)
        decisions.append((d.component, comp.label, step_id, mine, d.answer, ok))
        if ok:
            continue
        alone = session._reference_run({d.component: mine})
        changed = _changed_inputs(_inputs(alone), ref_in) if alone.current else []
        u_text, u_eff = _u_words(kind, u_unit, result_quantities(kind, alone.outcome).get(u_key)
                                 if alone.current else None, ref_q.get(u_key))
        words = [f"you entered {_words(mine, comp.unit)}, the reference is {_words(d.answer, comp.unit)}"]
        diag = _diagnosis(d, mine)
        if diag:
            words.append(diag)
        if changed:
            words.append("in the budget this changes " + "; ".join(_input_words(s, _inputs(alone), ref_in)
                                                                    for s in changed))
        elif alone.current:
            words.append("it changes no input of the budget")
        else:
            words.append("the budget cannot be evaluated with it: " + "; ".join(alone.errors.values()))
        v_key, v_name = VALUE_QUANTITY[kind]
        v_alt = result_quantities(kind, alone.outcome).get(v_key) if alone.current else None
        v_ref = ref_q.get(v_key)
        if v_alt is not None and v_ref is not None and not _close(v_alt, v_ref):
            words.append(f"{v_name} moves by {_words(v_alt - v_ref, RESULT_QUANTITIES[kind][v_key])}")
        if u_text:
            words.append(u_text)
        text = "; ".join(words) + ". " + step_text + (f" {d.hint}" if d.hint else "")
        differences.append(Difference("decision", d.component, comp.label, step_id, mine, d.answer, text.strip(),
                                      u_eff, tuple(changed)))
    if session.issue != case.answer.issue:
        step_id, step_text = _step_words(proc, step_id=case.answer.issue_step)
        if case.answer.issue:
            head = ("you would not issue the value, but the reference answer is to issue it: every acceptance "
                    "limit is met and no physics check objects")
        else:
            head = "you would issue the value, but the reference answer is NOT to issue it"
            reasons = [f"acceptance limit '{v.limit.text}' is NOT met (value {_display.fmt(v.value)})"
                       for v in reference.check().failures]
            reasons += [f"the physics check says: {w}" for w in getattr(reference.outcome, "nmr_warnings", ()) or ()]
            if reasons:
                head += "; " + "; ".join(reasons)
        text = f"{head}. {step_text}" + (f" {case.answer.issue_hint}" if case.answer.issue_hint else "")
        differences.append(Difference("issue", "issue", "Whether to issue the value", step_id, session.issue,
                                      case.answer.issue, text.strip()))
    results: list[tuple] = []
    for q, (value, tol) in case.answer.results.items():
        unit = RESULT_QUANTITIES[kind][q]
        mine = mine_q.get(q)
        within = mine is not None and abs(mine - value) <= tol
        results.append((q, unit, mine, value, tol, within))
        if not within and not any(x.kind == "decision" for x in differences):
            step_id, step_text = _step_words(proc, step_id=proc.steps[-1].id)
            differences.append(Difference(
                "result", q, q, step_id, mine, value,
                f"your {q} is {_words(mine, unit)}, the reference is {_words(value, unit)} within "
                f"{_words(tol, unit)}. {step_text}"))
    rows = []
    for s in list(mine_in) + [s for s in ref_in if s not in mine_in]:
        qm, qr = mine_in.get(s), ref_in.get(s)
        q = qr or qm
        rows.append((s, q.description, q.unit, qm.estimate if qm else None, qm.standard_uncertainty if qm else None,
                     qr.estimate if qr else None, qr.standard_uncertainty if qr else None,
                     s in _changed_inputs({s: qm} if qm else {}, {s: qr} if qr else {})))
    time = utc_now()
    return PracticeResult(
        procedure_id=proc.id, procedure_version=proc.version, procedure_name=proc.name, lab=proc.lab,
        case_id=case.id, case_title=case.title, invented=case.invented, trainee=session.trainee, time=time,
        issue_trainee=bool(session.issue), issue_reference=case.answer.issue, differences=tuple(differences),
        rows=tuple(rows), results=tuple(results), decisions=tuple(decisions))
