"""The guided, step-by-step form over a :class:`~fieldbudget.procedure.ProcedureRun`.

A thin view: each callback reads a widget value, calls one ``ProcedureRun``
method and re-renders from the run's state.  The run (plain Python) decides
what is allowed, builds the measurement and judges the acceptance limits; the
NMR layer builds and evaluates the budget.

Stable CSS classes (for lab style sheets and the browser test):

``fb-proc`` (the whole app), ``fb-proc-header``, ``fb-proc-safety``,
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
record and reports), ``fb-proc-status``.
"""

from __future__ import annotations

import os
from typing import Any

import ipywidgets as w

from .._display import escape
from ..errors import FieldbudgetError
from ..procedure import Component, ProcedureRun, load_procedure
from ._binding import css, guarded, status_html
from .budget_view import BudgetView, format_u
from .export_bar import ExportBar

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
    return str(err)


class _FieldRow:
    """One component's entry widget, its unit, its message and its training panel."""

    def __init__(self, comp: Component, run: ProcedureRun, on_value) -> None:
        self.comp = comp
        self._on_value = on_value
        self._syncing = False
        value = run.value(comp.id)
        layout = w.Layout(width="22em")
        if comp.fixed:
            self.input = w.HTML(f"<code>{escape(_text_of(value))}</code>")
        elif comp.kind == "choice":
            self.input = w.Dropdown(options=[(str(c), c) for c in comp.choices], value=value, layout=layout)
        elif comp.kind == "boolean":
            self.input = w.Checkbox(value=bool(value), indent=False)
        elif comp.kind == "numbers":
            self.input = w.Textarea(value=_text_of(value), continuous_update=False, rows=5, layout=layout)
        else:
            self.input = w.Text(value=_text_of(value), continuous_update=False, layout=layout)
        css(self.input, "fb-proc-field", f"fb-proc-field-{comp.id}")
        if comp.fixed:
            self.input.add_class("fb-proc-fixed-value")
        else:
            self.input.observe(self._changed, names="value")
        self.msg = css(w.HTML(""), "fb-proc-msg", f"fb-proc-msg-{comp.id}")
        label = escape(comp.label) + (" <em>(fixed by the lab)</em>" if comp.fixed else "")
        unit = escape(comp.unit)
        self.label = w.HTML(f'<span class="fb-proc-label">{label}</span>', layout=w.Layout(width="20em"))
        side = [w.HTML(f"<span>{unit}</span>")]
        if comp.fixed and comp.source:
            side.append(w.HTML(f'<span class="fb-proc-source">source: {escape(comp.source)}</span>'))
        if comp.help:
            side.append(w.HTML(f'<span class="fb-proc-help">{escape(comp.help)}</span>'))
        self.training = css(w.HTML(comp.training._repr_html_() if comp.training else ""), "fb-proc-training")
        row = w.HBox([self.label, w.VBox([self.input, self.msg]), w.VBox(side)])
        self.widget = css(w.VBox([row, self.training]), "fb-proc-row", f"fb-proc-row-{comp.id}")

    def _changed(self, change) -> None:
        if not self._syncing:
            self._on_value(self, change["new"])

    def show_training(self, on: bool) -> None:
        self.training.layout.display = None if on and self.comp.training else "none"

    def set_message(self, text: str) -> None:
        self.msg.value = f'<span class="fb-msg-text">{escape(text)}</span>' if text else ""
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

    def __init__(self, run: ProcedureRun) -> None:
        self.run = run
        proc = run.procedure
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
        cautions = "".join(f"<li><strong>{escape(s.title)}.</strong> {escape(s.text)}</li>" for s in proc.safety)
        self.safety = css(w.HTML(
            f'<div><strong>Safety.</strong> The lab\'s own safety rules and local regulations come first.'
            f"<ul>{cautions}</ul></div>"), "fb-proc-safety")
        self.steps_list = css(w.HTML(), "fb-proc-steps")
        self.step_title = css(w.HTML(), "fb-proc-step-title")
        self.instruction = css(w.HTML(), "fb-proc-instruction")
        self.step_cautions = css(w.HTML(), "fb-proc-cautions")
        self.back_button = css(w.Button(description="Back", icon="arrow-left"), "fb-proc-back")
        self.next_button = css(w.Button(description="Next", icon="arrow-right"), "fb-proc-next")
        self.training_toggle = css(w.ToggleButton(value=run.training, description="Training mode",
                                                  icon="graduation-cap"), "fb-proc-training-toggle")
        self.fields = css(w.VBox(self._step_boxes), "fb-proc-fields")
        fixed_rows = "".join(
            f"<tr><td>{escape(c.label)}</td><td>{escape(_text_of(c.value))} {escape(c.unit)}</td>"
            f"<td>{escape(c.source)}</td></tr>" for c in proc.fixed_components)
        self.fixed = css(w.HTML(
            "<details><summary>Values the lab fixes</summary><table class=\"fb-table\"><thead><tr>"
            f"<th>component</th><th>value</th><th>source</th></tr></thead><tbody>{fixed_rows}</tbody>"
            "</table></details>"), "fb-proc-fixed")
        self.budget = css(BudgetView(run), "fb-proc-budget")
        self.u_text = css(w.HTML(), "fb-proc-u")
        self.outcome = css(w.HTML(), "fb-proc-outcome")
        self.acceptance = css(w.HTML(), "fb-proc-acceptance")
        self.export = css(ExportBar(_ExportSource(run), stem=run.procedure.id), "fb-proc-export")
        self.status = css(w.HTML(), "fb-proc-status")
        self.back_button.on_click(self._back)
        self.next_button.on_click(self._next)
        self.training_toggle.observe(self._training, names="value")
        nav = w.HBox([self.back_button, self.next_button, self.training_toggle])
        step_box = w.VBox([self.step_title, self.instruction, self.step_cautions, self.fields, nav])
        self.widget = css(w.VBox([self.header, self.safety, self.steps_list, step_box, self.fixed,
                                  self.status, self.u_text, self.budget, self.outcome,
                                  self.acceptance, self.export]), "fb-proc")
        self._unsubscribe = run.subscribe(self._run_changed)
        self._shown_step = -1
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
            row.set_message(_message(err))

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
            self.step_cautions.value = "".join(
                f'<div class="fb-proc-caution">&#9888; <strong>{escape(c.title)}:</strong> {escape(c.text)}</div>'
                for c in (run.procedure.caution(cid) for cid in step.cautions))
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
        if run.current:
            self.status.value = ""
        elif run.missing():
            names = ", ".join(run.procedure.component(cid).label for cid in run.missing())
            self.status.value = status_html(f"still to enter: {names}", "info")
        else:
            self.status.value = "".join(status_html(m) for m in run.errors.values())
            for cid, text in run.errors.items():
                if cid in self._all_rows:
                    self._all_rows[cid].set_message(text)
        r = run.result
        # A calibration's own summary (every point, the curve, conformity); an NMR run's budget says it all.
        o = run.outcome
        self.outcome.value = "" if o is None or run.procedure.kind == "nmr-field" else o._repr_html_()
        sym = escape(getattr(getattr(r, "measurand", None), "symbol", "") or "y")
        unit = escape(getattr(getattr(r, "measurand", None), "unit", "") or "")
        note = "" if run.procedure.kind == "nmr-field" else (
            " &middot; first-order budget of the point with the largest U(E); the table of points below "
            "gives the propagated values")
        self.u_text.value = "" if r is None else (
            f'<div>u<sub>c</sub>({sym}) = <span class="fb-proc-u-value">{escape(format_u(r.standard_uncertainty))}'
            f"</span> {unit} &middot; U = {escape(format_u(r.expanded_uncertainty))} {unit}"
            f"{'' if run.current else ' (last good budget)'}{note}</div>")
        self.acceptance.value = run.check()._repr_html_()

    # ------------------------------------------------------------ display and teardown
    def _repr_mimebundle_(self, **kwargs):
        return self.widget._repr_mimebundle_(**kwargs)

    def close(self) -> None:
        """Stop listening to the run and close every widget."""
        self._unsubscribe()
        self.budget.close()
        self.export.close()
        for row in self._all_rows.values():
            row.close()
        self.widget.close()

    def __repr__(self) -> str:
        return f"<ProcedureView over {self.run!r}>"


def procedure_app(path: str | os.PathLike, *, training: bool = False) -> ProcedureView | w.HTML:
    """Build the guided app from a procedure file: the one call a template notebook makes.

    Parameters
    ----------
    path : path-like
        The lab's procedure file (TOML, ``fieldbudget-procedure/1``).
    training : bool
        Start with training mode on.

    Returns
    -------
    ProcedureView, or an ``HTML`` widget (CSS class ``fb-proc-error``) with the
    one-line message when the file cannot be used: a mistake in a procedure
    file is shown as a message, not as a traceback.
    """
    try:
        return ProcedureView(ProcedureRun(load_procedure(path), training=training))
    except FieldbudgetError as err:
        return css(w.HTML(status_html(f"The procedure cannot be shown: {err}")), "fb-proc-error")
