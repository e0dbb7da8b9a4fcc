"""The Monte Carlo panel: trials, seed, progress, Cancel, the histogram and the validation verdict.

The run happens in :class:`~fieldbudget.drafts.MonteCarloJob`'s worker thread
so the kernel keeps receiving the Cancel click; the panel only shows the
job's state.
"""

from __future__ import annotations

import math
import time
from typing import Any

import ipywidgets as w

from .._display import escape, fmt, fmt_si, fmt_u
from ..drafts.mc_job import MonteCarloJob
from ._binding import BoundText, css, guarded, status_html
from .budget_view import format_u

__all__ = ["MonteCarloPanel", "intervals_html", "verdict_html"]


def intervals_html(mc: Any, gum: Any) -> str:
    """The coverage intervals, each end to two significant digits of the interval's half-width."""
    unit = getattr(mc, "unit", "") or ""
    half = abs(mc.interval[1] - mc.interval[0]) / 2
    u = half if half > 0 and math.isfinite(half) else None
    p = 100 * mc.coverage_probability
    rows = [("Monte Carlo, probabilistically symmetric", *mc.interval),
            ("Monte Carlo, shortest", *mc.shortest_interval)]
    if gum is not None:
        rows.append((f"GUM, y \u00b1 U (k = {fmt(gum.coverage_factor, 3)})",
                     gum.estimate - gum.expanded_uncertainty, gum.estimate + gum.expanded_uncertainty))
    body = "".join(f'<tr><td>{escape(n)}</td><td class="fb-num">{escape(fmt_si(lo, unit, u))}</td>'
                   f'<td class="fb-num">{escape(fmt_si(hi, unit, u))}</td></tr>' for n, lo, hi in rows)
    trials = f"{mc.trials:,}".replace(",", "\u2009")
    return (f'<table class="fb-table fb-mc-intervals"><thead><tr><th>{escape(f"{p:.4g} % coverage interval")}'
            f"</th><th>low end</th><th>high end</th></tr></thead><tbody>{body}"
            f'</tbody></table><div class="fb-mc-u">Monte Carlo: {escape(getattr(mc, "output", "y"))} = '
            f"{escape(fmt_si(mc.estimate, unit, mc.standard_uncertainty))}, "
            f"u = {escape(format_u(mc.standard_uncertainty, unit))}, M = {escape(trials)} trials, seed {mc.seed}</div>")


def verdict_html(v: Any) -> str:
    """The JCGM 101:2008 clause 8 comparison: validated or not validated, with delta, d_low and d_high."""
    if v is None:
        return ""
    ok = v.passed
    word = {True: "validated", False: "not validated", None: "undecided"}[None if ok is None else bool(ok)]
    cls = {True: "fb-verdict-pass", False: "fb-verdict-fail", None: "fb-verdict-open"}[None if ok is None else bool(ok)]
    unit = getattr(v, "unit", "") or ""
    advice = getattr(v, "advice", "") or ""
    return (f'<div class="fb-verdict-banner {cls} fb-mc-verdict-{"pass" if ok else "fail"}">'
            f'GUM result <span class="fb-verdict {cls}">{word}</span> by Monte Carlo: '
            f"d<sub>low</sub> = {escape(fmt_u(abs(v.d_low), unit))}, d<sub>high</sub> = {escape(fmt_u(abs(v.d_high), unit))}, "
            f"tolerance \u03b4 = {escape(fmt_u(v.delta, unit))} (JCGM 101:2008, 8.2)"
            + (f"<br/>{escape(advice)}" if advice else "") + "</div>")


class MonteCarloPanel(w.VBox):
    """Runs Monte Carlo on the draft's last good budget and shows the outcome.

    Parameters
    ----------
    draft
        Anything with ``budget`` and ``result`` (a :class:`BudgetDraft`, an NMR draft).
    job : MonteCarloJob, optional
        The job to show (a new one by default).
    """

    def __init__(self, draft: Any, job: MonteCarloJob | None = None, *, histogram: bool = True, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.job = job or MonteCarloJob()
        self.status = css(w.HTML(), "fb-status")
        self.trials = BoundText(self.job.trials, self._set_trials, width="16em", key="trials",
                                description="trials M")
        self.seed = BoundText(self.job.seed, self._set_seed, width="14em", key="seed", description="seed")
        self.run_button = css(w.Button(description="run Monte Carlo", button_style="primary",
                                       layout=w.Layout(width="auto")), "fb-mc-run")
        self.cancel_button = css(w.Button(description="Cancel", disabled=True, layout=w.Layout(width="auto")),
                                 "fb-mc-cancel")
        self.run_button.on_click(self._run)
        self.cancel_button.on_click(self._cancel)
        self.progress = css(w.FloatProgress(value=0.0, min=0.0, max=1.0, description="0 %"), "fb-mc-progress")
        self.state = css(w.HTML(), "fb-mc-state")
        self.histogram = css(w.HTML(), "fb-mc-hist")
        self.histogram.layout.display = None if histogram else "none"
        self.intervals = css(w.HTML(), "fb-mc-result")
        self.verdict = css(w.HTML(), "fb-mc-verdict")
        self.children = [w.HBox([self.trials.widget, self.seed.widget, self.run_button, self.cancel_button]),
                         w.HBox([self.progress, self.state]), self.histogram, self.intervals, self.verdict,
                         self.status]
        css(self, "fb-mc-panel")
        self._last = (None, 0.0)
        self._unsubscribe = self.job.subscribe(self._on_job)
        self.render()

    def _on_job(self, job: MonteCarloJob) -> None:
        # at most ten progress redraws a second; every change of state is drawn
        now = time.monotonic()
        if job.state != self._last[0] or now - self._last[1] >= 0.1:
            self._last = (job.state, now)
            self.render()

    @guarded
    def _set_trials(self, text: str) -> None:
        self.job.trials.set(text)
        self.render()

    @guarded
    def _set_seed(self, text: str) -> None:
        self.job.seed.set(text)
        self.render()

    @guarded
    def _run(self, _button=None) -> None:
        self.job.start(self.draft.budget, self.draft.result)

    @guarded
    def _cancel(self, _button=None) -> None:
        self.job.cancel()

    @guarded
    def render(self) -> None:
        j = self.job
        with self.hold_sync():
            self.trials.sync()
            self.seed.sync()
            self.run_button.disabled = j.running
            self.cancel_button.disabled = not j.running
            self.progress.value = j.fraction if j.running else (1.0 if j.state == "done" else self.progress.value)
            self.progress.description = f"{100 * self.progress.value:.0f} %"
            self.state.value = escape(f"{j.state}: {j.done} of {j.planned} trials" if j.planned else j.state)
            self.status.value = status_html(j.error, "note" if j.state == "cancelled" else "error")
            if j.state == "done" and not j.running:
                self._show_result()

    def _show_result(self) -> None:
        j = self.job
        key = (id(j.result), self.histogram.layout.display)
        if getattr(self, "_shown", None) == key:
            return
        self._shown = key
        if self.histogram.layout.display != "none":
            from .. import plots

            self.histogram.value = plots.img_html(plots.mc_histogram(j.result, j.gum), "fb-mc-hist-img",
                                                  alt="histogram of the Monte Carlo trials with the intervals")
        self.intervals.value = intervals_html(j.result, j.gum)
        self.verdict.value = verdict_html(j.validation)

    def close(self) -> None:
        self.job.cancel()
        self._unsubscribe()
        super().close()

    def __repr__(self) -> str:
        return f"<MonteCarloPanel {self.job!r}>"
