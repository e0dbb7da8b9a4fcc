"""The calibration form over a :class:`~fieldbudget.drafts.CalibrationDraft`.

Points (reference field and the instrument's readings), the settings the
points share, the per-point errors with their expanded uncertainties, the
calibration curve and the conformity decision per point.  The live budget of
the selected point is a :class:`~fieldbudget.widgets.BudgetView` over the
same draft (the app shows it).
"""

from __future__ import annotations

import ipywidgets as w

from .._display import escape, fmt, fmt_si
from ..drafts.calibration_draft import CalibrationDraft
from ._binding import BoundText, css, guarded, message_html, status_html
from .budget_view import format_u
from .screens import verdict_word

__all__ = ["CalibrationForm", "calibration_results_html", "curve_html"]

_POINT_COLUMNS = (("name", "name", "5em"), ("reference_t", "B reference / T", "9em"),
                  ("u_reference_t", "u(B ref) / T", "7em"), ("readings_t", "readings / T", "18em"),
                  ("temperature_difference_k", "\u0394T / K", "5em"),
                  ("u_temperature_difference_k", "u(\u0394T) / K", "5em"),
                  ("gradient_t_per_m", "gradient / (T/m)", "6em"), ("u_gradient_t_per_m", "u / (T/m)", "6em"))
_SETTINGS = (("instrument", "instrument", "text"), ("resolution_t", "display resolution / T", "text"),
             ("zero_offset_t", "zero offset / T", "text"), ("u_zero_offset_t", "its u / T", "text"),
             ("temperature_coefficient_per_k", "temperature coefficient / (1/K)", "text"),
             ("u_temperature_coefficient_per_k", "its u / (1/K)", "text"),
             ("tilt_u_rad", "u of probe tilt / rad", "text"),
             ("position_offset_m", "Hall element minus NMR sample / m", "text"),
             ("u_position_offset_m", "its u / m", "text"),
             ("propagation", "propagation", ("gum", "auto", "monte carlo")),
             ("degree", "curve degree", ("0", "1", "2", "3")),
             ("tolerance_t", "tolerance on the error \u00b1 / T", "text"),
             ("tolerance_source", "tolerance from", "text"),
             ("decision_rule", "decision rule (JCGM 106)", ("simple acceptance", "guarded acceptance")))


def calibration_results_html(draft: CalibrationDraft) -> str:
    res = draft.calibration
    if res is None:
        return ""
    conf = draft.conformity
    head = ["point", "indication", "reference", "error E", "U(E)", "k"] + (["decision", "p of conformity"] if conf else [])
    rows = []
    for i, p in enumerate(res.points):
        U = p.expanded_uncertainty
        cells = [escape(x) for x in (p.name, fmt_si(p.indication, "T", digits=8),
                                     fmt_si(p.reference, "T", p.u_error / 10 if p.u_error else None),
                                     fmt_si(p.error, "T", U / 2 if U else None), format_u(U, "T"),
                                     f"{p.coverage_factor:.2f}")]
        if conf:
            c = conf[i]
            cells += [verdict_word(bool(c.accepted)), escape(f"{100 * c.probability_of_conformity:.1f} %")]
        cls = ' class="fb-cal-selected"' if i == draft.selected else ""
        rows.append(f"<tr{cls}>" + "".join(f"<td>{x}</td>" for x in cells) + "</tr>")
    warn = "".join(f'<div class="fb-warning">{escape(x)}</div>' for x in res.warnings)
    return (f'<table class="fb-table fb-cal-results"><thead><tr>{"".join(f"<th>{escape(h)}</th>" for h in head)}'
            f'</tr></thead><tbody>{"".join(rows)}</tbody></table><div>{escape(res.propagation)}</div>{warn}')


def curve_html(draft: CalibrationDraft) -> str:
    c = draft.curve
    if c is None:
        return ""
    fit = c.fit
    terms = ", ".join(f"a{j} = {fmt(a, 6)} \u00b1 {fmt(u, 2)}" for j, (a, u) in
                      enumerate(zip(fit.coefficients, fit.standard_uncertainties)))
    return (f'<div class="fb-cal-curve-text"><b>calibration curve</b> ({escape(c.form)} form, degree '
            f"{fit.degree}, {escape(fit.method)}): {escape(terms)} (standard uncertainties)</div>"
            + "".join(f'<div class="fb-warning">{escape(x)}</div>' for x in c.warnings))


class _PointRow:
    def __init__(self, form: CalibrationForm, index: int) -> None:
        fields = form.draft.points[index]
        self.texts = {k: BoundText(fields[k], lambda t, k=k: form._set(index, k, t), width=wd, key=f"cal-{k}")
                      for k, _, wd in _POINT_COLUMNS}
        self.show = css(w.Button(description="budget", tooltip="show this point's budget",
                                 layout=w.Layout(width="5.5em")), "fb-cal-show")
        self.show.on_click(lambda _: form._select(index))
        self.remove = css(w.Button(description="\u2715", tooltip="remove this point", layout=w.Layout(width="2.5em")),
                          "fb-cal-remove")
        self.remove.on_click(lambda _: form._remove(index))
        self.widget = css(w.HBox([*(t.widget for t in self.texts.values()), self.show, self.remove]), "fb-cal-point")


class CalibrationForm(w.VBox):
    """Calibration points, shared settings, results, curve and conformity over a :class:`CalibrationDraft`."""

    def __init__(self, draft: CalibrationDraft, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.status = css(w.HTML(), "fb-status")
        self.settings: dict[str, object] = {}
        setting_rows = []
        for key, label, kind in _SETTINGS:
            field = draft.settings[key]
            if isinstance(kind, tuple):
                box = css(w.Dropdown(options=kind, value=field.text if field.text in kind else kind[0],
                                     layout=w.Layout(width="14em")), "fb-field", f"fb-field-cal-{key}")
                box.observe(lambda ch, key=key: self._set(None, key, ch["new"]), names="value")
                msg = css(w.HTML(), "fb-msg")
                self.settings[key] = (box, msg)
                cell = w.VBox([box, msg])
            else:
                bt = BoundText(field, lambda t, key=key: self._set(None, key, t), width="14em", key=f"cal-{key}")
                self.settings[key] = bt
                cell = bt.widget
            setting_rows.append(w.HBox([w.HTML(escape(label), layout=w.Layout(width="18em")), cell]))
        header = w.HBox([w.HTML(f"<b>{escape(h)}</b>", layout=w.Layout(width=wd)) for _, h, wd in _POINT_COLUMNS])
        self.points_box = css(w.VBox(), "fb-cal-points")
        self.add_button = css(w.Button(description="add point", icon="plus"), "fb-cal-add")
        self.add_button.on_click(self._add)
        self.results = css(w.HTML(), "fb-cal-results-box")
        self.curve = css(w.HTML(), "fb-cal-curve")
        self._rows: list[_PointRow] = []
        self.children = [css(w.VBox(setting_rows), "fb-cal-settings"), w.HTML("<h4>points</h4>"), header,
                         self.points_box, self.add_button, self.results, self.curve, self.status]
        css(self, "fb-calibration-form")
        self._unsubscribe = draft.subscribe(lambda d: self.render())
        self.render()

    @guarded
    def _set(self, point: int | None, key: str, text: str) -> None:
        self.draft.set(point, key, text)

    @guarded
    def _add(self, _button=None) -> None:
        self.draft.add_point()

    @guarded
    def _remove(self, index: int) -> None:
        self.draft.remove_point(index)

    @guarded
    def _select(self, index: int) -> None:
        self.draft.select(index)

    @guarded
    def render(self) -> None:
        d = self.draft
        with self.hold_sync():
            if len(self._rows) != len(d.points) or any(r.texts["name"].field is not p["name"]
                                                       for r, p in zip(self._rows, d.points)):
                self._rows = [_PointRow(self, i) for i in range(len(d.points))]
                self.points_box.children = [r.widget for r in self._rows]
            shown = d.calibration is not None
            for r in self._rows:
                for bt in r.texts.values():
                    bt.sync(last_good=shown)
            for key, part in self.settings.items():
                if isinstance(part, BoundText):
                    part.sync()
                else:
                    part[1].value = message_html(d.settings[key].error)
            self.results.value = calibration_results_html(d)
            self.curve.value = curve_html(d)
            self.status.value = status_html(d.general_error)
            if not d.current and d.calibration is not None:
                self.status.value += status_html("Showing the last calibration that could be evaluated.", "note")

    def close(self) -> None:
        self._unsubscribe()
        super().close()

    def __repr__(self) -> str:
        return f"<CalibrationForm over {self.draft!r}>"
