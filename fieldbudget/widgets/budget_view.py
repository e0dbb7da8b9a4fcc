"""The live budget: the result on top, the table of contributions, the variance shares as a chart, the statement.

Re-rendered from the draft's ``last_good_result`` after every change; when
the latest edit was rejected, the last good budget stays on screen under a
note saying so.  Quantities carry SI prefixes with their digits set by their
uncertainty (:func:`fieldbudget._display.fmt_si`), sensitivity coefficients
carry their units, and nu is printed by :func:`fieldbudget._display.fmt_dof`
as everywhere else.  The share chart is a matplotlib image, redrawn only when
the shares change to the 0.1 % shown.
"""

from __future__ import annotations

import math
from typing import Any

import ipywidgets as w

from .._display import escape, fmt, fmt_dof, fmt_si, fmt_u, fmt_value, pretty_symbol, pretty_unit
from ..report.tables import sensitivity_unit
from ._binding import css, finding_html, guarded, status_html

__all__ = ["BudgetView", "budget_table_html", "format_u", "headline_html", "share_chart_html", "summary_html"]


def format_u(x: float | None, unit: str = "") -> str:
    """How an uncertainty is printed on screen: two significant digits, an SI prefix, the unit in Unicode."""
    return fmt_u(x, unit)


def _inputs(result: Any) -> dict:
    b = getattr(result, "budget", None)
    return {q.symbol: q for q in getattr(b, "inputs", ())}


def _unit(result: Any) -> str:
    m = getattr(result, "measurand", None)
    return getattr(m, "unit", "") or ""


def _eq_dof(nu: float | None) -> str:
    """' = 12.3', or ' > 1000' (no '= >')."""
    text = fmt_dof(nu)
    return f" {escape(text)}" if text.startswith(">") else f" = {escape(text)}"


_PREFIXED = frozenset({"T", "Hz", "m", "s", "V", "A", "W", "ohm", "g", "Pa"})


def _sensitivity(c: float | None, out_unit: str, in_unit: str) -> str:
    if c is None:
        return ""
    if c == 0:
        return "0"
    unit = sensitivity_unit(out_unit, in_unit)  # simplified as the reports write it (T/(1/K) -> K·T)
    return f"{fmt(c, 4)} {'' if unit == '1' else pretty_unit(unit)}".strip()


def budget_table_html(result: Any) -> str:
    """The contributions table: one row per input, then the combined standard uncertainty."""
    qs = _inputs(result)
    unit = _unit(result)
    cols = ("input", "estimate x\u1d62", "u(x\u1d62)", "distribution", "\u03bd\u1d62",
            "sensitivity c\u1d62", "|c\u1d62| u(x\u1d62)", "share of variance", "source")
    out = ['<div class="fb-budget-scroll" style="overflow-x:auto"><table class="fb-table fb-budget-table"><thead><tr>',
           *(f"<th>{escape(c)}</th>" for c in cols), "</tr></thead><tbody>"]
    for c in result.contributions:
        q = qs.get(c.symbol)
        qu = c.unit or ""
        share = c.variance_share
        u = c.standard_uncertainty
        num = (fmt_value(c.estimate, qu, u or None), fmt_value(u, qu, u) if u and u < 1e-3 and qu not in _PREFIXED
               else format_u(u, qu),
               c.description or c.distribution, fmt_dof(c.dof), _sensitivity(c.sensitivity, unit, qu),
               format_u(c.u_contribution, unit), "" if share is None else f"{100 * share:.1f} %")
        src = c.source or (getattr(q, "source", "") if q is not None else "")
        out.append(f'<tr class="fb-row-{escape(c.symbol)}"><td title="{escape(c.symbol)}">{pretty_symbol(c.symbol)}</td>'
                   + "".join(f'<td class="{"fb-text" if i == 2 else "fb-num"}">{escape(x)}</td>'
                             for i, x in enumerate(num))
                   + f'<td class="fb-source" style="min-width:18em">{escape(src)}</td></tr>')
    out.append("</tbody><tfoot><tr>"
               '<td colspan="6">combined standard uncertainty u<sub>c</sub></td>'
               '<td class="fb-uc" style="text-align:right;white-space:nowrap">'
               f'{escape(format_u(result.standard_uncertainty, unit))}</td>'
               f'<td colspan="2">\u03bd<sub>eff</sub>{_eq_dof(result.effective_dof)}</td>'
               "</tr></tfoot></table></div>")
    return "".join(out)


def share_chart_html(result: Any, width: int = 560) -> str:
    """The variance shares as an inline SVG bar chart, largest share on top.

    Drawn here as SVG rectangles rather than with matplotlib
    (:func:`fieldbudget.plots.share_chart` draws the same chart for notebooks):
    a matplotlib figure costs 100-200 ms, ten times this view's whole budget
    for a re-render after each entry (``benchmarks/bench_widgets.py``).
    """
    ranked = sorted(result.contributions, key=lambda c: c.variance_share or 0.0, reverse=True)
    contribs = [c for c in ranked if (c.variance_share or 0.0) >= 0.0005] or ranked[:1]
    rest = [c.symbol for c in ranked if c not in contribs]
    row, label_w, text_w = 20, 150, 56
    bar_w = width - label_w - text_w
    height = row * len(contribs) + 26
    parts = [f'<svg class="fb-share-svg" role="img" width="{width}" height="{height}" viewBox="0 0 {width} {height}" '
             'xmlns="http://www.w3.org/2000/svg" font-family="sans-serif" font-size="12">',
             "<title>share of the variance of the result, largest first</title>"]
    for i, c in enumerate(contribs):
        share = c.variance_share or 0.0
        share = 0.0 if not math.isfinite(share) else max(0.0, min(1.0, share))
        y = 4 + row * i
        parts.append(f'<text x="{label_w - 6}" y="{y + 13}" text-anchor="end" fill="#24292f">'
                     f"{escape(c.symbol)}</text>"
                     f'<rect class="fb-share-bar" x="{label_w}" y="{y + 2}" width="{bar_w * share:.1f}" height="{row - 6}" '
                     'fill="#3b5b7a"/>'
                     f'<text x="{label_w + bar_w * share + 4:.1f}" y="{y + 13}" fill="#57606a">{100 * share:.1f} %</text>')
    axis_y = 4 + row * len(contribs)
    parts.append(f'<line x1="{label_w}" y1="{axis_y}" x2="{label_w + bar_w}" y2="{axis_y}" stroke="#8c959f"/>'
                 + "".join(f'<text x="{label_w + bar_w * t / 100:.1f}" y="{axis_y + 14}" text-anchor="middle" '
                           f'fill="#57606a" font-size="10">{t} %</text>' for t in (0, 25, 50, 75, 100))
                 + "</svg>")
    tail = (f'<div class="fb-share-rest">{len(rest)} inputs below 0.05 % each: {escape(", ".join(rest))}</div>'
            if rest else "")
    return ('<div class="fb-share-chart"><b>share of the variance of the result</b> (largest first)<br/>'
            + "".join(parts) + tail + "</div>")


def _statement(result: Any) -> str:
    st = getattr(result, "statement", None)
    try:
        return st() if callable(st) else (st or "")
    except Exception:  # noqa: BLE001 - the statement is a nicety; the numbers are shown anyway
        return ""


def headline_html(result: Any, *, current: bool = True, label: str = "") -> str:
    """The result the budget is for, on top of it: y = value with U, k and p."""
    unit = _unit(result)
    name = getattr(getattr(result, "measurand", None), "symbol", "y") or "y"
    U = result.expanded_uncertainty
    k, p = result.coverage_factor, getattr(result, "coverage_probability", None)
    ptxt = f", p \u2248 {100 * p:.4g} %" if p else ""
    stale = "" if current else ' <span class="fb-stale-tag">(last good budget)</span>'
    return (f'<div class="fb-headline">{escape(label)}{pretty_symbol(name)} = <span class="fb-headline-value">'
            f"{escape(fmt_si(result.estimate, pretty_unit(unit), U))}</span>, "
            f'<span class="fb-U">U = {escape(format_u(U, unit))}</span>{stale}'
            f'<span class="fb-headline-sub">u<sub>c</sub> = {escape(format_u(result.standard_uncertainty, unit))}, '
            f"k = {escape(fmt(k, 3))}{escape(ptxt)}, \u03bd<sub>eff</sub>{_eq_dof(result.effective_dof)}"
            "</span></div>")


def summary_html(result: Any) -> str:
    """The uncertainty statement under the table."""
    return f'<div class="fb-statement">{escape(_statement(result))}</div>'


class BudgetView(w.VBox):
    """The live budget of a draft (anything with ``result``, ``current``, ``errors`` and ``subscribe``)."""

    def __init__(self, draft: Any, *, chart: bool = True, headline: bool = True, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.note = css(w.HTML(), "fb-stale-note")
        self.headline = css(w.HTML(), "fb-headline-box")
        self.table = css(w.HTML(layout=w.Layout(overflow="auto", max_width="100%")), "fb-budget")
        self.chart = css(w.HTML(), "fb-chart")
        self.summary = css(w.HTML(), "fb-result")
        self.warnings = css(w.HTML(), "fb-warnings")
        self.status = css(w.HTML(), "fb-status")
        self._chart_key: tuple = ()
        self.headline.layout.display = None if headline else "none"
        self.children = [self.headline, self.note, self.table, self.chart, self.summary, self.warnings, self.status]
        self.chart.layout.display = None if chart else "none"
        css(self, "fb-budget-view")
        self._unsubscribe = draft.subscribe(lambda d: self.render())
        self.render()

    @guarded
    def render(self) -> None:
        d = self.draft
        r = d.result
        with self.hold_sync():
            if r is None:
                self.note.value = status_html("No budget yet: " + ("; ".join(d.errors.values()) or "add inputs"),
                                              "note")
                self.table.value = self.chart.value = self.summary.value = self.warnings.value = ""
                self.headline.value = ""
                self._chart_key = ()
                return
            self.note.value = "" if d.current else status_html(
                "Showing the last budget that could be evaluated; fix the marked fields to update it.", "note")
            self.headline.value = headline_html(r, current=d.current)
            self.table.value = budget_table_html(r)
            if self.chart.layout.display != "none":
                key = tuple((c.symbol, round(1000 * (c.variance_share or 0.0))) for c in r.contributions)
                if key != self._chart_key:
                    self.chart.value = share_chart_html(r)
                    self._chart_key = key
            self.summary.value = summary_html(r)
            ws = tuple(getattr(r, "warnings", ()) or ())
            self.warnings.value = "".join(finding_html(x) for x in ws)
            self.status.value = ""

    def close(self) -> None:
        self._unsubscribe()
        super().close()

    def __repr__(self) -> str:
        return f"<BudgetView over {self.draft!r}>"
