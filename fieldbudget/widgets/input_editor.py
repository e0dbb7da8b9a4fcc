"""The input editor: one row per input quantity, over a :class:`~fieldbudget.drafts.BudgetDraft`.

Each callback reads a widget's value, hands it to one draft method and
re-renders from the draft; the draft and the engine decide what is allowed.
"""

from __future__ import annotations

import ipywidgets as w

from ..drafts.budget_draft import DISTRIBUTIONS, BudgetDraft, InputRow
from ._binding import BoundText, Cell, css, guarded, message_html, shared_blank, shared_layout, shared_style, status_html

__all__ = ["InputEditor"]

_MEANING_LABELS = (("standard u", "standard"), ("half-width a", "half-width"),
                   ("expanded U (with k)", "expanded"), ("readings (Type A)", "readings"))
_MEANINGS = tuple(v for _, v in _MEANING_LABELS)
_WIDTHS = {"symbol": "6em", "estimate": "10em", "unit": "5em", "uncertainty": "8em", "k": "4em",
           "dof": "5em", "source": "14em", "readings": "30em"}


_TEXT_KEYS = ("symbol", "estimate", "unit", "uncertainty", "k", "dof", "source", "readings")
# boxes most rows never show (k only for an expanded uncertainty): made on first need
_ON_NEED = ("k", "readings")
# the cells of a row, left to right (then the three buttons)
_CELLS = ("symbol", "estimate", "unit", "distribution", "uncertainty", "meaning", "k", "dof", "source")


class _RowView:
    """The widgets of one input row.

    A row is built from about a dozen widgets: the entry boxes sit straight in
    the row, a message box (and the cell holding box and message) is made the
    first time a field has a message, the k box and the readings area the
    first time the meaning needs them, and all rows share their Layout and
    style objects.  That keeps a 100-input editor near 1 300 widgets (issue 18).
    """

    def __init__(self, editor: InputEditor, row: InputRow) -> None:
        self.row = row
        self._editor = editor
        self._built = False
        f = row.fields
        self.texts: dict[str, BoundText] = {}
        for k in _TEXT_KEYS:
            if k not in _ON_NEED:
                self._text(k)
        dd_style = shared_style(w.Dropdown)
        self.dist = w.Dropdown(options=DISTRIBUTIONS, index=DISTRIBUTIONS.index(f["distribution"].value or "normal"),
                               layout=shared_layout(width="9em"), style=dd_style,
                               _dom_classes=("fb-field", "fb-field-distribution"))
        self.meaning = w.Dropdown(options=_MEANING_LABELS, index=_MEANINGS.index(f["meaning"].value or "standard"),
                                  layout=shared_layout(width="11em"), style=dd_style,
                                  _dom_classes=("fb-field", "fb-field-meaning"))
        self.choices = {"distribution": Cell(self.dist, "9em", self._reshape),
                        "meaning": Cell(self.meaning, "11em", self._reshape)}
        self._syncing = False
        self.dist.observe(lambda ch: self._syncing or editor._set(self.row, "distribution", ch["new"]),
                          names="value")
        self.meaning.observe(lambda ch: self._syncing or editor._set(self.row, "meaning", ch["new"]),
                             names="value")
        buttons = [("\u2191", "move up", lambda _: editor._move(self.row, -1), "fb-row-up"),
                   ("\u2193", "move down", lambda _: editor._move(self.row, +1), "fb-row-down"),
                   ("\u2715", "remove this input", lambda _: editor._remove(self.row), "fb-row-remove")]
        self.buttons = []
        b_layout, b_style = shared_layout(width="2.5em"), shared_style(w.Button)
        for label, tip, fn, cls in buttons:
            b = w.Button(description=label, tooltip=tip, layout=b_layout, style=b_style, _dom_classes=(cls,))
            b.on_click(fn)
            self.buttons.append(b)
        self.main = w.HBox(self._cells(), layout=shared_layout(), _dom_classes=("fb-input-row",))
        self.widget: w.Widget = self.main  # a VBox with the readings below, once there are readings
        self._built = True
        self._shown: tuple | None = None
        self.sync()

    @property
    def dist_msg(self) -> w.HTML:
        return self.choices["distribution"].msg

    @property
    def meaning_msg(self) -> w.HTML:
        return self.choices["meaning"].msg

    def _cells(self) -> list[w.Widget]:
        return [self.choices[k].widget if k in self.choices else
                self.texts[k].widget if k in self.texts else shared_blank(_WIDTHS[k]) for k in _CELLS] + self.buttons

    def _reshape(self) -> None:
        """A cell became a box-and-message pair (or the readings appeared): put the new widgets in place."""
        if not self._built:
            return
        cells = self._cells()
        if list(self.main.children) != cells:
            self.main.children = cells
        if "readings" in self.texts:
            below = [self.main, self.texts["readings"].widget]
            if self.widget is self.main:
                self.widget = w.VBox(below, layout=shared_layout(), _dom_classes=("fb-input",))
                self._editor._place_rows()
            elif list(self.widget.children) != below:
                self.widget.children = below

    def _text(self, key: str) -> BoundText:
        """The entry box of ``key``, made now if it does not exist yet."""
        bt = self.texts.get(key)
        if bt is None:
            area = key == "readings"
            bt = BoundText(self.row.fields[key], lambda t: self._editor._set(self.row, key, t), width=_WIDTHS[key],
                           key=key, area=area, placeholder="readings, one per line" if area else "",
                           on_reshape=self._reshape)
            self.texts[key] = bt
            self._reshape()
        return bt

    def close(self) -> None:
        """Close the widgets of this row (a removed row, or the editor closing)."""
        for part in (*self.texts.values(), *self.choices.values()):
            part.close()
        for widget in (*self.buttons, self.main, self.widget):
            widget.close()

    def _state(self, last_good: bool) -> tuple:
        """Everything the row shows; an unchanged state means no widget needs touching."""
        return (last_good, self.row.relevant(),
                tuple((k, fl.text, fl.error, fl.value if k in ("distribution", "meaning") else None)
                      for k, fl in self.row.fields.items()))

    def sync(self, last_good: bool = False) -> None:
        state = self._state(last_good)
        if state == self._shown:
            return  # a change elsewhere in the budget: this row shows the same as before
        self._shown = state
        f = self.row.fields
        keys = self.row.relevant()
        for k in _ON_NEED:
            if k in keys:  # a box not shown has nothing to show: its text stays in the draft
                self._text(k)
        for bt in self.texts.values():
            bt.sync(last_good=last_good)
        self._syncing = True
        try:
            for dd, key in ((self.dist, "distribution"), (self.meaning, "meaning")):
                if f[key].value is not None and dd.value != f[key].value:
                    dd.value = f[key].value
                self.choices[key].show(message_html(f[key].error))
        finally:
            self._syncing = False
        for k, bt in self.texts.items():
            bt.set_visible(k in keys, keep_space=k != "readings")
        for key, cell in self.choices.items():
            cell.set_visible(key in keys, keep_space=True)


class InputEditor(w.VBox):
    """Rows of inputs (symbol, estimate, unit, distribution, uncertainty and its meaning, k, dof,
    source), the model expression and the correlations of one :class:`BudgetDraft`."""

    def __init__(self, draft: BudgetDraft, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.status = css(w.HTML(), "fb-status")
        self.model = BoundText(draft.model, self._set_model, width="32em", key="model",
                               description="model", tooltip="expression of the input symbols")
        self.measurand = BoundText(draft.measurand, lambda t: self._set_measurand(name=t), width="10em",
                                   key="measurand", description="measurand")
        self.measurand_unit = BoundText(draft.measurand_unit, lambda t: self._set_measurand(unit=t), width="8em",
                                        key="measurand-unit", description="unit")
        self.add_button = css(w.Button(description="add input", icon="plus"), "fb-add-input")
        self.add_button.on_click(self._add)
        header = w.HBox([w.HTML(f"<b>{h}</b>", layout=w.Layout(width=wd)) for h, wd in (
            ("symbol", "6em"), ("estimate", "10em"), ("unit", "5em"), ("distribution", "9em"),
            ("uncertainty", "8em"), ("stated as", "11em"), ("k", "4em"), ("dof", "5em"), ("source", "14em"))])
        self.rows_box = css(w.VBox(), "fb-input-rows")
        self.corr_box = css(w.VBox(), "fb-correlations")
        self.corr_a = w.Dropdown(layout=w.Layout(width="8em"))
        self.corr_b = w.Dropdown(layout=w.Layout(width="8em"))
        self.corr_r = css(w.Text(placeholder="r", continuous_update=False, layout=w.Layout(width="6em")),
                          "fb-field", "fb-field-correlation")
        self.corr_add = css(w.Button(description="set correlation"), "fb-add-correlation")
        self.corr_add.on_click(self._add_correlation)
        self._row_views: dict[int, _RowView] = {}
        self._corr_views: list[BoundText] = []
        self._layout_key: tuple = ()
        self.children = [
            css(w.HBox([self.measurand.widget, self.measurand_unit.widget, self.model.widget]), "fb-model-row"),
            header, self.rows_box, self.add_button,
            w.HTML("<b>correlations</b> (coefficient r between two inputs; blank removes)"),
            self.corr_box, w.HBox([self.corr_a, self.corr_b, self.corr_r, self.corr_add]), self.status]
        css(self, "fb-input-editor")
        self._unsubscribe = draft.subscribe(lambda d: self.render())
        self.render()

    # -- callbacks: read -> one draft call -> render (the draft notifies) ---------------
    @guarded
    def _set(self, row: InputRow, key: str, text: str) -> None:
        self.draft.set(row, key, text)

    @guarded
    def _set_model(self, text: str) -> None:
        self.draft.set_model(text)

    @guarded
    def _set_measurand(self, name: str | None = None, unit: str | None = None) -> None:
        self.draft.set_measurand(name, unit)

    @guarded
    def _add(self, _button=None) -> None:
        self.draft.add_row(symbol=f"x{len(self.draft.rows) + 1}")

    @guarded
    def _remove(self, row: InputRow) -> None:
        self.draft.remove_row(row)

    @guarded
    def _move(self, row: InputRow, offset: int) -> None:
        self.draft.move_row(row, offset)

    @guarded
    def _add_correlation(self, _button=None) -> None:
        self.draft.set_correlation(self.corr_a.value, self.corr_b.value, self.corr_r.value)

    # -- rendering ----------------------------------------------------------------------
    @guarded
    def render(self) -> None:
        d = self.draft
        with self.hold_sync():
            key = tuple(r.id for r in d.rows) + ("|",) + tuple((a, b) for a, b, _ in d.correlations)
            if key != self._layout_key:
                self._rebuild_layout()
                self._layout_key = key
            for bt in (self.model, self.measurand, self.measurand_unit, *self._corr_views):
                bt.sync()
            shown = d.result is not None
            for rv in self._row_views.values():
                rv.sync(shown)
            self.status.value = status_html(d.general_error)

    def _rebuild_layout(self) -> None:
        d = self.draft
        views = {}
        for r in d.rows:
            views[r.id] = self._row_views.get(r.id) or _RowView(self, r)
        for rid, old in self._row_views.items():
            if rid not in views:
                old.close()  # a removed row
        self._row_views = views
        self._place_rows()
        self._corr_views = [BoundText(f, lambda t, a=a, b=b: self._set_corr(a, b, t), width="6em",
                                      key="correlation") for a, b, f in d.correlations]
        self.corr_box.children = [w.HBox([w.HTML(f"r({a}, {b})", layout=w.Layout(width="10em")), bt.widget])
                                  for (a, b, _), bt in zip(d.correlations, self._corr_views)]
        symbols = [r.symbol for r in d.rows if r.symbol]
        self.corr_a.options = symbols
        self.corr_b.options = symbols
        if len(symbols) > 1:
            self.corr_a.value, self.corr_b.value = symbols[0], symbols[1]

    def _place_rows(self) -> None:
        children = [self._row_views[r.id].widget for r in self.draft.rows if r.id in self._row_views]
        if list(self.rows_box.children) != children:
            self.rows_box.children = children

    @guarded
    def _set_corr(self, a: str, b: str, text: str) -> None:
        self.draft.set_correlation(a, b, text)

    def close(self) -> None:
        self._unsubscribe()
        for rv in self._row_views.values():
            rv.close()
        super().close()

    def __repr__(self) -> str:
        return f"<InputEditor over {self.draft!r}>"
