"""The guided, step-by-step form over a :class:`~fieldbudget.procedure.ProcedureRun`.

A thin view: each callback reads a widget value, calls one ``ProcedureRun``
method and re-renders from the run's state.  The run (plain Python) decides
what is allowed, builds the measurement and judges the acceptance limits; the
NMR layer builds and evaluates the budget.

Stable CSS classes (for lab style sheets and the browser test):

``fb-proc`` (the whole app), ``fb-proc-header``, ``fb-proc-authorisation``
(who runs it, when checked at the start), ``fb-proc-safety``,
``fb-proc-steps`` (the list of steps), ``fb-proc-step-title``,
``fb-proc-instruction``, ``fb-proc-cautions``, ``fb-proc-back``,
``fb-proc-next``, ``fb-proc-training-toggle``, ``fb-proc-fields``,
``fb-proc-field`` and ``fb-proc-field-<component id>`` (the entry widget;
its ``input``/``textarea`` sits inside), ``fb-proc-msg`` and
``fb-proc-msg-<component id>`` (the message beside it),
``fb-proc-training`` (training panels), ``fb-proc-fixed`` (values the lab
fixes), ``fb-proc-budget`` (the live budget; the table inside has class
``fb-table``), ``fb-proc-u`` (the combined standard uncertainty as text),
``fb-proc-outcome`` (a calibration's points, curve and conformity),
``fb-proc-acceptance``, ``fb-proc-export`` (save the budget, measurement,
record and reports), ``fb-proc-status``, ``fb-proc-mc`` (the Monte Carlo
panel of an NMR procedure), ``fb-proc-step-training`` (a step's training
text), ``fb-curve-img`` (a calibration's curve plot).

Layout, top to bottom: the procedure's name; the safety cautions, once and
collapsible; the steps; the current step (instruction, a pointer to its
cautions, its training text in training mode, its fields, Back/Next); the
result on top of its budget; for a calibration, one table of the points with
the U(E) reported, the curve plot and the CMC table; the Monte Carlo check
(NMR); the acceptance limits; the export bar.
"""

from __future__ import annotations

import os
from typing import Any

import ipywidgets as w

from .._display import escape, fmt_si, fmt_u, pretty_unit
from ..drafts.mc_job import MonteCarloJob
from ..errors import FieldbudgetError
from ..procedure import Component, ProcedureRun, load_procedure
from ._binding import LAST_GOOD, css, guarded, status_html, user_words
from ._style import style_widget
from .budget_view import BudgetView
from .export_bar import ExportBar
from .montecarlo_panel import MonteCarloPanel
from .screens import acceptance_html, calibration_outcome_html, cmc_html

__all__ = ["ProcedureView", "procedure_app"]


def _text_of(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, (list, tuple)):
        return "\n".join(_text_of(v) for v in value)
    if isinstance(value, float):
        s = repr(value)
        return s.removesuffix(".0")
    return str(value)


def _message(err: Exception) -> str:
    """The short message shown beside a field: what is allowed and what was given."""
    allowed = getattr(err, "allowed", None)
    if allowed is not None:
        return f"must be {allowed} (got {getattr(err, 'value', '')!r})"
    return user_words(str(err))


def _width(text: str, least: float = 22.0, most: float = 44.0) -> str:
    """A box wide enough for its text (about 0.6 em a character), so no value is cut off."""
    longest = max((len(line) for line in text.splitlines()), default=0)
    return f"{min(most, max(least, 0.62 * longest + 2)):.0f}em"


class _FieldRow:
    """One component's entry widget, its unit, its message and its training panel."""

    def __init__(self, comp: Component, run: ProcedureRun, on_value) -> None:
        self.comp = comp
        self._on_value = on_value
        self._syncing = False
        value = run.value(comp.id)
        layout = w.Layout(width=_width(_text_of(value)))
        if comp.fixed:
            self.input = w.HTML(f"<code>{escape(_text_of(value))}</code>")
        elif comp.kind == "choice":
            self.input = w.Dropdown(options=[(str(c), c) for c in comp.choices], value=value, layout=layout)
        elif comp.kind == "boolean":
            self.input = w.Checkbox(value=bool(value), indent=False)
        elif comp.kind == "numbers":
            self.input = w.Textarea(value=_text_of(value), continuous_update=False, rows=5, layout=layout)
        elif comp.kind == "text" and len(_text_of(value)) > 60:
            # a long name (instrument and probe with serials) wraps instead of running out of its box
            self.input = w.Textarea(value=_text_of(value), continuous_update=False, rows=2,
                                    layout=w.Layout(width="36em"))
        else:
            self.input = w.Text(value=_text_of(value), continuous_update=False, layout=layout)
        css(self.input, "fb-proc-field", f"fb-proc-field-{comp.id}")
        if comp.fixed:
            self.input.add_class("fb-proc-fixed-value")
        else:
            self.input.observe(self._changed, names="value")
        self.msg = css(w.HTML(""), "fb-proc-msg", f"fb-proc-msg-{comp.id}")
        label = escape(comp.label) + (" <em>(fixed by the lab)</em>" if comp.fixed else "")
        unit = escape(pretty_unit(comp.unit))
        self.label = w.HTML(f'<div class="fb-proc-label">{label}</div>', layout=w.Layout(width="18em", min_width="18em"))
        side = []
        if comp.fixed and comp.source:
            side.append(w.HTML(f'<span class="fb-proc-source">source: {escape(comp.source)}</span>'))
        if comp.help:
            side.append(w.HTML(f'<span class="fb-proc-help">{escape(comp.help)}</span>'))
        self.training = css(w.HTML(comp.training._repr_html_() if comp.training else ""), "fb-proc-training")
        # The unit stays beside the box and the message wraps under both, inside a column of fixed
        # width: a message never moves the entry, its unit or the help beside them.
        box_width = getattr(getattr(self.input, "layout", None), "width", None) or "22em"
        entry = w.HBox([self.input, w.HTML(f'<span class="fb-proc-unit">{unit}</span>',
                                           layout=w.Layout(width="5em", min_width="5em"))])
        middle = w.VBox([entry, self.msg], layout=w.Layout(width=f"calc({box_width} + 5.5em)",
                                                           min_width=f"calc({box_width} + 5.5em)"))
        row = w.HBox([self.label, middle, w.VBox(side, layout=w.Layout(flex="1 1 auto"))])
        self.widget = css(w.VBox([row, self.training]), "fb-proc-row", f"fb-proc-row-{comp.id}")

    def _changed(self, change) -> None:
        if not self._syncing:
            self._on_value(self, change["new"])

    def show_training(self, on: bool) -> None:
        self.training.layout.display = None if on and self.comp.training else "none"

    def set_message(self, text: str, last_good: bool = False) -> None:
        tail = f' <span class="fb-msg-last-good">{escape(LAST_GOOD)}</span>' if text and last_good else ""
        self.msg.value = f'<span class="fb-msg-text">{escape(text)}{tail}</span>' if text else ""
        (self.input.add_class if text else self.input.remove_class)("fb-bad")

    def close(self) -> None:
        if not self.comp.fixed:
            self.input.unobserve(self._changed, names="value")
        self.widget.close()


class _ExportSource:
    """What the export bar reads (``budget``, ``result``, ``save_measurement``), from the run."""

    def __init__(self, run: ProcedureRun) -> None:
        self.run = run

    @property
    def budget(self) -> Any:
        return self.run.last_budget

    @property
    def result(self) -> Any:
        return self.run.result

    def save_measurement(self, path):
        return self.run.save_measurement(path)

    def make_record(self, **kw):
        # the run names its operator, procedure and acceptance results in the record
        return self.run.make_record(**kw)


class ProcedureView:
    """The guided form for one :class:`ProcedureRun`; ``view.widget`` is what the notebook shows.

    Parameters
    ----------
    run : ProcedureRun
        The state to show and edit; the view subscribes to it.
    """

    def __init__(self, run: ProcedureRun, *, trials: int = 200_000, seed: int = 1) -> None:
        self.run = run
        proc = run.procedure
        self._nmr = proc.kind == "nmr-field"
        # Every step's rows are built once; moving between steps only shows one box and hides
        # the others (no widgets created or closed while the operator walks through the steps).
        self._step_rows: list[dict[str, _FieldRow]] = [
            {c.id: _FieldRow(c, run, self._value) for c in run.step_components(step)} for step in run.steps]
        self._all_rows = {cid: row for rows in self._step_rows for cid, row in rows.items()}
        self._step_boxes = [css(w.VBox([r.widget for r in rows.values()]), "fb-proc-step-fields",
                                f"fb-proc-step-fields-{step.id}") for rows, step in zip(self._step_rows, run.steps)]
        self.header = css(w.HTML(
            f'<h3>{escape(proc.name)}</h3><div>{escape(proc.lab)} &middot; version {escape(proc.version)}'
            f'{" &middot; issued " + escape(proc.issued) if proc.issued else ""}</div>'
            f"<p>{escape(proc.summary)}</p>"), "fb-proc-header")
        # who runs it, as the lab's competence records found at the start (procedure.authorised.start_run)
        check = getattr(run, "authorisation", None)
        self.authorisation = css(w.HTML(check._repr_html_() if check is not None else ""), "fb-proc-authorisation")
        # The cautions once, at the top, open until the operator folds them away.
        cautions = "".join(f"<li><strong>{escape(s.title)}.</strong> {escape(s.text)}</li>" for s in proc.safety)
        self.safety = css(w.HTML(
            f"<details open><summary>Safety at the magnet ({len(proc.safety)} cautions): read before you start"
            "</summary><p><strong>Your lab's own safety rules and local regulations come first</strong>; these "
            f"are the usual cautions only.</p><ul>{cautions}</ul></details>"), "fb-proc-safety")
        self.steps_list = css(w.HTML(), "fb-proc-steps")
        self.step_title = css(w.HTML(), "fb-proc-step-title")
        self.instruction = css(w.HTML(), "fb-proc-instruction")
        self.step_cautions = css(w.HTML(), "fb-proc-cautions")
        self.step_training = css(w.HTML(), "fb-proc-step-training")
        self.back_button = css(w.Button(description="Back", icon="arrow-left"), "fb-proc-back")
        self.next_button = css(w.Button(description="Next", icon="arrow-right"), "fb-proc-next")
        self.training_toggle = css(w.ToggleButton(value=run.training, description="Training mode",
                                                  icon="graduation-cap", layout=w.Layout(width="auto")),
                                   "fb-proc-training-toggle")
        self.fields = css(w.VBox(self._step_boxes), "fb-proc-fields")
        fixed_rows = "".join(
            f"<tr><td>{escape(c.label)}</td><td>{escape(_text_of(c.value))} {escape(pretty_unit(c.unit))}</td>"
            f"<td>{escape(c.source)}</td></tr>" for c in proc.fixed_components)
        self.fixed = css(w.HTML(
            "<details><summary>Values the lab fixes</summary><table class=\"fb-table\"><thead><tr>"
            f"<th>component</th><th>value</th><th>source</th></tr></thead><tbody>{fixed_rows}</tbody>"
            "</table></details>"), "fb-proc-fixed")
        self.budget = css(BudgetView(run, headline=self._nmr), "fb-proc-budget")
        if not self._nmr:  # a point's first-order statement would be a second U beside the one reported
            self.budget.summary.layout.display = "none"
        self.u_text = css(w.HTML(), "fb-proc-u")
        self.outcome = css(w.HTML(), "fb-proc-outcome")
        self.curve = css(w.HTML(), "fb-proc-curve")
        self.acceptance = css(w.HTML(), "fb-proc-acceptance")
        source = _ExportSource(run)
        self.monte_carlo = css(MonteCarloPanel(source, MonteCarloJob(trials=trials, seed=seed)), "fb-proc-mc") \
            if self._nmr else None
        self.export = css(ExportBar(source, stem=run.procedure.id,
                                    job=self.monte_carlo.job if self.monte_carlo is not None else None),
                          "fb-proc-export")
        self.status = css(w.HTML(), "fb-proc-status")
        self.back_button.on_click(self._back)
        self.next_button.on_click(self._next)
        self.training_toggle.observe(self._training, names="value")
        nav = w.HBox([self.back_button, self.next_button, self.training_toggle])
        step_box = css(w.VBox([self.step_title, self.instruction, self.step_cautions, self.step_training,
                               self.fields, nav]), "fb-proc-step")

        def section(title: str, *parts: w.Widget, cls: str) -> w.Widget:
            return css(w.VBox([w.HTML(f"<h4>{escape(title)}</h4>"), *parts]), cls)

        if self._nmr:
            results = [section("Result and its budget", self.u_text, self.status, self.budget, cls="fb-proc-result"),
                       section("Monte Carlo check (JCGM 101)", self.monte_carlo, cls="fb-proc-mc-section")]
        else:
            results = [section("Calibration result", self.u_text, self.status, self.outcome, self.curve,
                               cls="fb-proc-result"),
                       section("Budget of one point", self.budget, cls="fb-proc-point-budget")]
        self.widget = css(w.VBox([style_widget(), self.header, self.authorisation, self.safety, self.steps_list,
                                  step_box, self.fixed,
                                  *results, section("Acceptance limits", self.acceptance, cls="fb-proc-limits"),
                                  section("Save", self.export, cls="fb-proc-save")]), "fb-proc")
        self._unsubscribe = run.subscribe(self._run_changed)
        self._shown_step = -1
        self._curve_for: Any = None
        self.render()

    # ------------------------------------------------------------ callbacks (thin)
    @guarded
    def _back(self, _button) -> None:
        self.run.back()

    @guarded
    def _next(self, _button) -> None:
        self.run.next()

    @guarded
    def _training(self, change) -> None:
        self.run.set_training(change["new"])

    def _value(self, row: _FieldRow, value: Any) -> None:
        row.set_message("")  # the re-render may put the domain layer's message back
        try:
            self.run.set(row.comp.id, value)
        except FieldbudgetError as err:
            row.set_message(_message(err), last_good=self.run.result is not None)

    def _run_changed(self, _run: ProcedureRun) -> None:
        self.render()

    # ------------------------------------------------------------ rendering
    @property
    def rows(self) -> dict[str, _FieldRow]:
        """The rows of the current step, by component id."""
        return self._step_rows[self.run.step_index]

    def _render_step(self) -> None:
        for i, box in enumerate(self._step_boxes):
            box.layout.display = None if i == self.run.step_index else "none"
        self._shown_step = self.run.step_index

    def render(self) -> None:
        """Re-render everything from the run's state (one batch of widget updates)."""
        run = self.run
        with self.widget.hold_sync():
            if self._shown_step != run.step_index:
                self._render_step()
            items = "".join(
                f'<li class="{"fb-proc-current" if i == run.step_index else ""}">'
                f"{'<strong>' if i == run.step_index else ''}{escape(s.title)}"
                f"{'</strong>' if i == run.step_index else ''}</li>" for i, s in enumerate(run.steps))
            self.steps_list.value = f"<ol>{items}</ol>"
            step = run.step
            self.step_title.value = (f"<h4>Step {run.step_index + 1} of {len(run.steps)}: "
                                     f"{escape(step.title)}</h4>")
            self.instruction.value = f"<p>{escape(step.instruction)}</p>"
            titles = [run.procedure.caution(cid).title for cid in step.cautions]
            self.step_cautions.value = (
                f'<div class="fb-proc-caution-ref">&#9888; Cautions for this step: {escape(", ".join(titles))} '
                "(see Safety at the top).</div>" if titles else "")
            self.step_training.value = (
                f'<div class="fb-step-training"><strong>Training.</strong> {escape(step.training)}</div>'
                if run.training and step.training else "")
            self.back_button.disabled = run.is_first
            self.next_button.disabled = run.is_last
            if self.training_toggle.value != run.training:
                self.training_toggle.value = run.training
            for row in self._all_rows.values():
                row.show_training(run.training)
            self._render_budget()

    def _render_budget(self) -> None:
        # The budget table itself is the BudgetView's (it subscribes to the run).
        run = self.run
        labels = {c.id: c.label for c in run.procedure.components}
        if run.current:
            self.status.value = ""
        elif run.missing():
            names = ", ".join(run.procedure.component(cid).label for cid in run.missing())
            self.status.value = status_html(f"still to enter: {names}", "info")
            self.budget.note.value = ""  # the line above says what the budget waits for
        else:
            last = " " + LAST_GOOD if run.result is not None else ""
            self.status.value = "".join(status_html(f"{labels.get(cid, 'The measurement')}: {user_words(m)}{last}")
                                        for cid, m in run.errors.items())
            for cid, text in run.errors.items():
                if cid in self._all_rows:
                    self._all_rows[cid].set_message(user_words(text), last_good=run.result is not None)
        r = run.result
        o = run.outcome
        stale = "" if run.current else ' <span class="fb-stale-tag">(last good result)</span>'
        if self._nmr:
            self.u_text.value = ""
        elif o is None:
            self.u_text.value = self.outcome.value = self.curve.value = ""
        else:
            cal = o.calibration
            refs = [p.reference for p in cal.points]
            conf = tuple(o.conformity or ())
            verdict = (f"; {sum(1 for c in conf if c.accepted)} of {len(conf)} points accepted" if conf else "")
            self.u_text.value = (
                f'<div class="fb-headline">{escape(cal.instrument)}: <span class="fb-headline-value">'
                f"{len(cal.points)} points from {escape(fmt_si(min(refs), 'T', digits=3))} to "
                f"{escape(fmt_si(max(refs), 'T', digits=3))}</span>{stale}<span class=\"fb-headline-sub\">largest |E| = "
                f"{escape(fmt_si(o.max_abs_error, 'T', digits=3))}, largest U(E) = "
                f'<span class="fb-proc-u-value">{escape(fmt_u(o.max_expanded_uncertainty, "T"))}</span>'
                f"{escape(verdict)}</span></div>")
            self.outcome.value = calibration_outcome_html(o)
            if self._curve_for is not o:
                self._curve_for = o
                self.curve.value = self._curve_html(o)
        self.acceptance.value = acceptance_html(run.check(), run.procedure)
        if not self._nmr and r is not None:
            worst = o.worst_point.name if o is not None else ""
            self.budget.note.value = self.budget.note.value or (
                f'<div class="fb-status-note">First-order budget of the error at {escape(worst)}, the point with the '
                "largest U(E): it shows what each input contributes. The U(E) reported is the one in the table of "
                "points above.</div>")

    def _curve_html(self, o: Any) -> str:
        from .. import plots

        parts = []
        if o.curve is not None:
            fit = o.curve.fit
            terms = ", ".join(f"a{j} = {a:.4g} \u00b1 {u:.2g}" for j, (a, u) in
                              enumerate(zip(fit.coefficients, fit.standard_uncertainties)))
            parts.append(f'<div class="fb-cal-curve-text"><b>Calibration curve</b>, degree {fit.degree} '
                         f"({escape(fit.method)} least squares): {escape(terms)} (T, T/T; standard uncertainties)"
                         "</div>")
        fig = plots.calibration_curve(o.calibration.points, o.curve, title="Error of indication and calibration curve")
        parts.append(plots.img_html(fig, "fb-curve-img", alt="calibration curve with error bars and residuals"))
        parts.append(cmc_html(o, self.run.procedure))
        r = o.calibration.correlation
        names = [p.name for p in o.calibration.points]
        head = "".join(f"<th>{escape(n)}</th>" for n in names)
        body = "".join(f"<tr><th>{escape(n)}</th>" + "".join(f'<td class="fb-num">{v:.3f}</td>' for v in row) + "</tr>"
                       for n, row in zip(names, r))
        parts.append("<details><summary>Correlation of the errors between points</summary>"
                     f'<table class="fb-table"><thead><tr><th></th>{head}</tr></thead><tbody>{body}</tbody></table>'
                     "</details>")
        parts += [f'<div class="fb-warning">{escape(x)}</div>' for x in dict.fromkeys(o.warnings)]
        return "".join(parts)

    # ------------------------------------------------------------ display and teardown
    def _repr_mimebundle_(self, **kwargs):
        return self.widget._repr_mimebundle_(**kwargs)

    def close(self) -> None:
        """Stop listening to the run and close every widget."""
        self._unsubscribe()
        self.budget.close()
        self.export.close()
        if self.monte_carlo is not None:
            self.monte_carlo.close()
        for row in self._all_rows.values():
            row.close()
        self.widget.close()

    def __repr__(self) -> str:
        return f"<ProcedureView over {self.run!r}>"


def procedure_app(path: str | os.PathLike, *, training: bool = False, operator: str | None = None,
                  lab: str | os.PathLike | None = None, supervisor: str = "") -> ProcedureView | w.HTML:
    """Build the guided app from a procedure file: the one call a template notebook makes.

    Parameters
    ----------
    path : path-like
        The lab's procedure file (TOML, ``fieldbudget-procedure/1``).
    training : bool
        Start with training mode on.
    operator, lab, supervisor : optional
        With ``operator`` and ``lab`` (the laboratory folder), the operator's
        authorisation for the procedure is checked first: an operator who is
        not authorised is refused, or the run is marked supervised by
        ``supervisor``, as the lab's settings choose (docs/training.md).

    Returns
    -------
    ProcedureView, or an ``HTML`` widget (CSS class ``fb-proc-error``) with the
    one-line message when the file cannot be used: a mistake in a procedure
    file is shown as a message, not as a traceback.
    """
    try:
        procedure = load_procedure(path)
        if operator is not None or lab is not None:
            from ..procedure.authorised import start_run

            return ProcedureView(start_run(procedure, operator=operator or "", lab=lab, supervisor=supervisor,
                                           training=training))
        return ProcedureView(ProcedureRun(procedure, training=training))
    except FieldbudgetError as err:
        return css(w.HTML(status_html(f"The procedure cannot be shown: {err}")), "fb-proc-error")
