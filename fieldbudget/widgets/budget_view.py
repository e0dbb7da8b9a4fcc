"""The live budget: table of contributions, a bar chart of the variance shares, U and the statement.

Re-rendered from the draft's ``last_good_result`` after every change; when
the latest edit was rejected, the last good budget stays on screen under a
note saying so.  The bars are plain HTML (no plotting library on the hot
path) so that a re-render stays well inside the 50 ms goal
(``benchmarks/bench_widgets.py``).
"""

from __future__ import annotations

import math
from typing import Any

import ipywidgets as w

from .._display import escape, fmt, fmt_dof
from ._binding import css, guarded, status_html

__all__ = ["BudgetView", "budget_table_html", "format_u", "share_bars_html", "summary_html"]


def format_u(x: float | None, unit: str = "") -> str:
    """How an uncertainty is printed on screen: three significant digits and the unit."""
    if x is None:
        return ""
    s = fmt(x, 3) if x == 0 or not math.isfinite(x) else f"{x:#.3g}".rstrip(".")
    return f"{s} {unit}".strip()


def _inputs(result: Any) -> dict:
    b = getattr(result, "budget", None)
    return {q.symbol: q for q in getattr(b, "inputs", ())}


def _unit(result: Any) -> str:
    m = getattr(result, "measurand", None)
    return getattr(m, "unit", "") or ""


_PAD = ' style="padding:0 0.5em"'
_SRC = ' style="padding:0 0.5em;min-width:22em" width="320"'
_NUM = ' style="padding:0 0.5em;white-space:nowrap;text-align:right"'


def _dof(nu: float | None) -> str:
    """Degrees of freedom for the screen: 'inf', or at most three significant digits when large."""
    return fmt(nu, 3) if nu is not None and math.isfinite(nu) and nu >= 1000 else fmt_dof(nu)


def budget_table_html(result: Any) -> str:
    """The contributions table: one row per input, then the combined standard uncertainty."""
    qs = _inputs(result)
    unit = _unit(result)
    cols = ("input", "estimate x\u1d62", "u(x\u1d62)", "distribution", "\u03bd\u1d62",
            "sensitivity c\u1d62", "|c\u1d62| u(x\u1d62)", "share of variance", "source")
    out = ['<div class="fb-budget-scroll" style="overflow-x:auto"><table class="fb-table fb-budget-table"><thead><tr>',
           *(f'<th{_SRC if c == "source" else ""}>{escape(c)}</th>' for c in cols), "</tr></thead><tbody>"]
    for c in result.contributions:
        q = qs.get(c.symbol)
        qu = c.unit or ""
        share = c.variance_share
        cells = (c.symbol, f"{fmt(c.estimate, 10)} {qu}".strip(), format_u(c.standard_uncertainty, qu),
                 c.description or c.distribution, _dof(c.dof), fmt(c.sensitivity, 4),
                 format_u(c.u_contribution, unit), "" if share is None else f"{100 * share:.1f} %",
                 c.source or (getattr(q, "source", "") if q is not None else ""))
        out.append(f'<tr class="fb-row-{escape(c.symbol)}">'
                   + "".join(f"<td{_NUM if 0 < i < 8 else _SRC if i == 8 else _PAD}>{escape(x)}</td>"
                             for i, x in enumerate(cells))
                   + "</tr>")
    out.append("</tbody><tfoot><tr>"
               f'<td colspan="6">combined standard uncertainty u<sub>c</sub></td>'
               f'<td class="fb-uc"{_NUM}>{escape(format_u(result.standard_uncertainty, unit))}</td>'
               f'<td colspan="2">\u03bd<sub>eff</sub> = {escape(_dof(result.effective_dof))}</td>'
               "</tr></tfoot></table></div>")
    return "".join(out)


_EIGHTHS = ("", "\u258f", "\u258e", "\u258d", "\u258c", "\u258b", "\u258a", "\u2589")


def _bar(share: float, cells: int) -> str:
    """A bar of block characters, to 1/8 of a character (survives any HTML sanitiser)."""
    eighths = round(share * cells * 8)
    return "\u2588" * (eighths // 8) + _EIGHTHS[eighths % 8]


def share_bars_html(result: Any, cells: int = 40) -> str:
    """A bar chart of each input's share of the variance of y, drawn with block characters."""
    rows = []
    for c in result.contributions:
        share = c.variance_share or 0.0
        share = 0.0 if not math.isfinite(share) else max(0.0, min(1.0, share))
        rows.append(f'<tr><td class="fb-bar-label">{escape(c.symbol)}</td>'
                    f'<td class="fb-bar-value" style="text-align:right">{100 * share:.1f} %</td>'
                    f'<td class="fb-bar" style="color:#4a7ab5;font-family:monospace">{_bar(share, cells)}</td></tr>')
    return ('<table class="fb-share-chart"><caption style="text-align:left"><b>share of the variance of the '
            'result</b></caption><tbody>' + "".join(rows) + "</tbody></table>")


def _statement(result: Any) -> str:
    st = getattr(result, "statement", None)
    try:
        return st() if callable(st) else (st or "")
    except Exception:  # noqa: BLE001 - the statement is a nicety; the numbers are shown anyway
        return ""


def summary_html(result: Any) -> str:
    unit = _unit(result)
    k, p = result.coverage_factor, getattr(result, "coverage_probability", None)
    ptxt = f" (p \u2248 {100 * p:.2f} %)" if p else ""
    name = getattr(getattr(result, "measurand", None), "symbol", "y")
    return (f'<div class="fb-summary"><span class="fb-estimate">{escape(name)} = {escape(fmt(result.estimate, 10))} '
            f'{escape(unit)}</span>; <span class="fb-uc-summary">u<sub>c</sub> = '
            f'{escape(format_u(result.standard_uncertainty, unit))}</span>; k = {escape(fmt(k, 3))}; '
            f'<span class="fb-U">U = {escape(format_u(result.expanded_uncertainty, unit))}</span>'
            f"{escape(ptxt)}</div>"
            f'<div class="fb-statement">{escape(_statement(result))}</div>')


class BudgetView(w.VBox):
    """The live budget of a draft (anything with ``result``, ``current``, ``errors`` and ``subscribe``)."""

    def __init__(self, draft: Any, *, chart: bool = True, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.note = css(w.HTML(), "fb-stale-note")
        self.table = css(w.HTML(layout=w.Layout(overflow="auto", max_width="100%")), "fb-budget")
        self.chart = css(w.HTML(), "fb-chart")
        self.summary = css(w.HTML(), "fb-result")
        self.warnings = css(w.HTML(), "fb-warnings")
        self.status = css(w.HTML(), "fb-status")
        self.children = [self.note, self.table, self.chart, self.summary, self.warnings, self.status]
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
                self.note.value = status_html("no budget yet: " + ("; ".join(d.errors.values()) or "add inputs"),
                                              "note")
                self.table.value = self.chart.value = self.summary.value = self.warnings.value = ""
                return
            self.note.value = "" if d.current else status_html(
                "Showing the last budget that could be evaluated; fix the marked fields to update it.", "note")
            self.table.value = budget_table_html(r)
            if self.chart.layout.display != "none":
                self.chart.value = share_bars_html(r)
            self.summary.value = summary_html(r)
            ws = tuple(getattr(r, "warnings", ()) or ())
            self.warnings.value = "".join(f'<div class="fb-warning">{escape(x)}</div>' for x in ws)
            self.status.value = ""

    def close(self) -> None:
        self._unsubscribe()
        super().close()

    def __repr__(self) -> str:
        return f"<BudgetView over {self.draft!r}>"
