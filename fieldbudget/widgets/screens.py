"""HTML of the result panels the guided screens show: acceptance limits, a calibration's points,
curve and CMC table.  Plain functions of plain values, so tests read them without a browser.

One wording per decision everywhere on screen: a limit or a point is
*accepted* or *rejected* (JCGM 106:2012 speaks of acceptance and rejection),
*pending* while a value is missing; a GUM result is *validated* or
*not validated* by Monte Carlo (JCGM 101:2008, 8).
"""

from __future__ import annotations

from typing import Any

from .._display import escape, fmt_si, fmt_u
from ..procedure.acceptance_html import WORDS, acceptance_html, verdict_word

__all__ = ["acceptance_html", "calibration_outcome_html", "cmc_html", "verdict_word", "WORDS"]

def _cmc_text(entry: Any) -> str:
    """U = a + b |B| with a prefixed and b in ppm (the relative part is dimensionless)."""
    parts = []
    if entry.a:
        parts.append(fmt_u(entry.a, entry.unit))
    if entry.b:
        parts.append(f"{entry.b * 1e6:.2g} ppm \u00d7 |B|")
    return " + ".join(parts) or "0"


def cmc_html(outcome: Any, procedure: Any) -> str:
    """The CMC table over the calibrated range, from the points' expanded uncertainties (ILAC P14)."""
    from ..calibration.cmc import build_cmc_table

    refs = [p.reference for p in outcome.calibration.points]
    try:
        table = build_cmc_table(outcome.calibration.points, [(min(refs), max(refs))], measurand="error of indication",
                                method=f"comparison with the NMR reference ({procedure.name})", form="linear")
    except Exception as err:  # noqa: BLE001 - the CMC is an extra; say why it is missing
        return f'<div class="fb-status-note">No CMC table for these points: {escape(err)}</div>'
    rows = "".join(f"<tr><td>{escape(fmt_si(e.lower, 'T', digits=4))} to {escape(fmt_si(e.upper, 'T', digits=4))}</td>"
                   f"<td>{escape(_cmc_text(e))}</td><td>{100 * e.coverage_probability:.4g} %</td></tr>"
                   for e in table.entries)
    return ('<table class="fb-table fb-cmc"><caption>Calibration and measurement capability (CMC) over the '
            "calibrated range</caption><thead><tr><th>range</th><th>expanded uncertainty U</th><th>coverage "
            f"probability</th></tr></thead><tbody>{rows}</tbody></table>")


def calibration_outcome_html(outcome: Any) -> str:
    """One table of the points: error E, the U(E) reported, k, the tolerance and the decision per point."""
    cal = outcome.calibration
    conf = tuple(outcome.conformity or ())
    head = ["point", "indication", "reference B", "error E", "U(E)", "k"]
    if conf:
        head += ["tolerance \u00b1", "p of conformity", "decision"]
    rows = []
    for i, p in enumerate(cal.points):
        U = p.expanded_uncertainty
        cells = [escape(p.name), escape(fmt_si(p.indication, "T", digits=7)),
                 escape(fmt_si(p.reference, "T", p.u_error / 10 if p.u_error else None)),
                 escape(fmt_si(p.error, "T", U / 2 if U else None)), escape(fmt_u(U, "T")),
                 escape(f"{p.coverage_factor:.2f}")]
        if conf:
            c = conf[i]
            half = (c.tolerance.upper - c.tolerance.lower) / 2
            cells += [escape(fmt_si(half, "T", digits=3)), f"{100 * c.probability_of_conformity:.1f} %",
                      verdict_word(bool(c.accepted))]
        rows.append("<tr>" + "".join(f'<td class="{"fb-num" if 0 < j < 7 else ""}">{x}</td>'
                                     for j, x in enumerate(cells)) + "</tr>")
    n_ok = sum(1 for c in conf if c.accepted)
    rule = conf[0].decision_rule if conf else ""
    summary = (f"{n_ok} of {len(conf)} points accepted against the specification ({escape(rule)}, JCGM 106:2012)."
               if conf else "No specification given: no decision per point.")
    return (f'<table class="fb-table fb-cal-points-table"><caption>Errors of indication, E = indication \u2212 '
            f'reference</caption><thead><tr>{"".join(f"<th>{escape(h)}</th>" for h in head)}</tr></thead>'
            f'<tbody>{"".join(rows)}</tbody></table>'
            f'<div class="fb-cal-note">U(E) is the expanded uncertainty reported for each point '
            f"({escape(cal.propagation)}). {summary}</div>")
