"""The NMR measurement form over an :class:`~fieldbudget.drafts.NMRDraft`.

One box per key of the measurement description, grouped by section, with
the message for a rejected value and the physics warnings shown beside the
field they concern.  The readings can be typed, pasted, or loaded from the
counter's CSV file.
"""

from __future__ import annotations

import ipywidgets as w

from .._display import escape, pretty_unit
from ..drafts.nmr_draft import FieldSpec, NMRDraft
from ._binding import BoundText, css, finding_html, guarded, message_html, status_html

__all__ = ["NMRForm"]


def _css_key(path: str) -> str:
    return path.replace(".", "-").replace("_", "-")


class _ChoiceBox:
    """A dropdown over a choice field, with its message."""

    def __init__(self, form: NMRForm, spec: FieldSpec, options: tuple) -> None:
        self.field = form.draft.fields[spec.path]
        opts = list(options)
        if self.field.text not in opts:
            opts.insert(0, self.field.text)
        self.box = css(w.Dropdown(options=opts, value=self.field.text, layout=w.Layout(width="16em")),
                       "fb-field", f"fb-field-{_css_key(spec.path)}")
        self.msg = css(w.HTML(), "fb-msg")
        self.widget = w.VBox([self.box, self.msg])
        self._syncing = False
        self.box.observe(lambda ch: self._syncing or form._set(spec.path, ch["new"]), names="value")

    def sync(self, last_good: bool = False) -> None:
        self._syncing = True
        try:
            if self.box.value != self.field.text and self.field.text in self.box.options:
                self.box.value = self.field.text
            self.msg.value = message_html(self.field.error, last_good=last_good)
        finally:
            self._syncing = False


class NMRForm(w.VBox):
    """Every key of the measurement file, grouped as the NMR components declare them
    (``fieldbudget.nmr.components``): nucleus and constants, frequency, line, frequency standard,
    drift, sample, probe, gradient and position, curvature."""

    def __init__(self, draft: NMRDraft, *, sections: tuple[str, ...] | None = None, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.status = css(w.HTML(), "fb-status")
        self.boxes: dict[str, BoundText | _ChoiceBox] = {}
        self.warnings: dict[str, w.HTML] = {}
        children = []
        for section, specs in draft.sections().items():
            if sections is not None and section not in sections:
                continue
            rows = [self._row(s) for s in specs]
            if section == "frequency":
                rows.insert(1, self._upload_row())
            children.append(css(w.VBox([w.HTML(f"<h4>{escape(section)}</h4>"), *rows]),
                                "fb-section", f"fb-section-{section.replace(' ', '-')}"))
        self.other = css(w.HTML(), "fb-warnings")
        self.children = [*children, self.other, self.status]
        css(self, "fb-nmr-form")
        self._unsubscribe = draft.subscribe(lambda d: self.render())
        self.render()

    def _row(self, spec: FieldSpec) -> w.Widget:
        label = spec.label + (f" / {pretty_unit(spec.unit)}" if pretty_unit(spec.unit) else "")
        options = self.draft.choices.get(spec.path, spec.choices)
        if spec.kind == "boolean":
            box = _ChoiceBox(self, spec, ("", "true", "false"))
        elif spec.kind in ("choice", "edition") and options:
            box = _ChoiceBox(self, spec, tuple(str(o) for o in options))
        else:
            box = BoundText(self.draft.fields[spec.path], lambda t, p=spec.path: self._set(p, t),
                            width="22em" if spec.kind == "numbers" else "16em", key=_css_key(spec.path),
                            area=spec.path == "frequency.readings_Hz", tooltip=spec.help)
        self.boxes[spec.path] = box
        warn = css(w.HTML(layout=w.Layout(max_width="36em")), "fb-field-warning",
                   f"fb-warning-{_css_key(spec.path)}")
        self.warnings[spec.path] = warn
        lab = w.HTML(f'<div class="fb-nmr-label" title="{escape(spec.help)}">{escape(label)}</div>',
                     layout=w.Layout(width="18em", min_width="18em"))
        return css(w.HBox([lab, box.widget, warn]), "fb-nmr-row", f"fb-row-{_css_key(spec.path)}")

    def _upload_row(self) -> w.Widget:
        self.upload = css(w.FileUpload(accept=".csv,.txt", multiple=False, description="counter CSV file"),
                          "fb-readings-upload")
        self.upload.observe(self._uploaded, names="value")
        return w.HBox([w.HTML("", layout=w.Layout(width="18em")), self.upload])

    # -- callbacks -------------------------------------------------------------------
    @guarded
    def _set(self, path: str, text: str) -> None:
        self.draft.set(path, text)

    @guarded
    def _uploaded(self, change) -> None:
        for f in change["new"]:
            self.draft.load_counter_csv(bytes(f["content"]), name=f.get("name", "counter file"))

    # -- rendering ------------------------------------------------------------------------
    @guarded
    def render(self) -> None:
        d = self.draft
        with self.hold_sync():
            shown = d.result is not None
            for path, box in self.boxes.items():
                box.sync(last_good=shown)
                texts = d.warnings_by_field.get(path, ())
                html = "".join(finding_html(t) for t in texts)
                if self.warnings[path].value != html:
                    self.warnings[path].value = html
            self.other.value = "".join(finding_html(t) for t in d.other_warnings)
            self.status.value = status_html(d.general_error)

    def close(self) -> None:
        self._unsubscribe()
        super().close()

    def __repr__(self) -> str:
        return f"<NMRForm over {self.draft!r}>"
