"""The acceptance limits as a table a person reads: what is checked, the rule and the value in the
limit's own unit (ppm for a relative uncertainty, °C for a temperature), and one word per verdict.

Shared by the guided screen and by :meth:`AcceptanceReport._repr_html_` in a notebook.
One wording per decision: a limit is *accepted* or *rejected* (JCGM 106:2012
speaks of acceptance and rejection), *pending* while a value is missing.
"""

from __future__ import annotations

import math
from typing import Any

from .._display import escape, fmt, fmt_dof, fmt_ppm, fmt_si, pretty_unit

__all__ = ["WORDS", "acceptance_html", "verdict_word"]

#: The words for the two outcomes of a decision, and for no decision yet.
WORDS = {True: "accepted", False: "rejected", None: "pending"}
_CLASS = {True: "fb-verdict-pass", False: "fb-verdict-fail", None: "fb-verdict-open"}

# how each result quantity reads: a label and how its value is shown
_QUANTITY_LABEL = {
    "value": "value", "standard_uncertainty": "standard uncertainty", "expanded_uncertainty": "expanded uncertainty U",
    "relative_expanded_uncertainty": "relative expanded uncertainty U/|B|", "coverage_factor": "coverage factor k",
    "effective_dof": "effective degrees of freedom", "warning_count": "warnings from the physics checks",
    "max_abs_error": "largest |error|", "max_expanded_uncertainty": "largest U(E)",
    "nonconforming_points": "points rejected against the specification",
}
_COUNTS = ("warning_count", "nonconforming_points")


def verdict_word(passed: bool | None) -> str:
    return f'<span class="fb-verdict {_CLASS[passed]}">{WORDS[passed]}</span>'


def _show(x: float | None, subject: str, unit: str) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "\u2013"
    if subject == "relative_expanded_uncertainty":
        return fmt_ppm(x)
    if subject in _COUNTS:
        return str(int(x))
    if subject == "effective_dof":
        return fmt_dof(x)
    if unit == "T":
        return fmt_si(x, "T", digits=3)
    return f"{fmt(x, 4)} {pretty_unit(unit)}".strip()


def _rule(lim: Any, unit: str) -> str:
    lo = None if lim.minimum is None else _show(lim.minimum, lim.subject, unit)
    hi = None if lim.maximum is None else _show(lim.maximum, lim.subject, unit)
    if lim.subject in _COUNTS and lim.maximum == 0 and lim.minimum is None:
        return "none"
    if lo is not None and hi is not None:
        return f"from {lo} to {hi}"
    return f"at most {hi}" if hi is not None else f"at least {lo}"


def acceptance_html(report: Any, procedure: Any) -> str:
    """The acceptance limits as one table: limit, what is checked, rule and value in one unit, verdict."""
    from .procedure import RESULT_QUANTITIES

    units = RESULT_QUANTITIES.get(procedure.kind, {})
    rows = []
    for v in report.verdicts:
        lim = v.limit
        if lim.component is not None:
            comp = procedure.component(lim.component)
            unit, what = comp.unit, comp.label
        else:
            unit, what = units.get(lim.result, ""), _QUANTITY_LABEL.get(lim.result, lim.result.replace("_", " "))
        rows.append(f"<tr><td>{escape(lim.text)}</td><td>{escape(what)}</td><td>{escape(_rule(lim, unit))}</td>"
                    f'<td class="fb-num">{escape(_show(v.value, lim.subject, unit))}</td>'
                    f"<td>{verdict_word(v.passed)}</td></tr>")
    n = len(report.verdicts)
    bad = sum(v.passed is False for v in report.verdicts)
    open_ = sum(v.passed is None for v in report.verdicts)
    if report.accepted is True:
        head = f"Accepted: all {n} acceptance limits accepted; the result may be issued."
    elif report.accepted is False:
        head = f"Rejected: {bad} of {n} acceptance limits rejected; do not issue the result."
    else:
        head = f"Pending: {open_} of {n} acceptance limits wait for a value or a current budget."
    return (f'<div class="fb-verdict-banner {_CLASS[report.accepted]}">{escape(head)}</div>'
            '<table class="fb-table fb-proc-acceptance-table"><thead><tr><th>acceptance limit</th><th>checked</th>'
            "<th>rule</th><th>value</th><th>verdict</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table>")


