"""The glue between ipywidgets and the drafts: bound entry boxes and the one callback guard.

Every callback in :mod:`fieldbudget.widgets` is wrapped by :func:`guarded`, so
no exception escapes into the front end (where JupyterLab would swallow it
silently): a :class:`~fieldbudget.errors.FieldbudgetError` becomes a short
message in the view's status line, anything else an "internal error" banner
plus a log record.
"""

from __future__ import annotations

import functools
import logging
import re
from collections.abc import Callable

import ipywidgets as w

from .._display import escape
from ..drafts.field import Field, message_for
from ..errors import FieldbudgetError, is_note

__all__ = ["BoundText", "Cell", "css", "guarded", "message_html", "shared_blank", "shared_layout", "shared_style",
           "status_html", "user_words", "LAST_GOOD"]

#: Said beside a refused entry while a budget is on screen.
LAST_GOOD = "The budget shown is the last good one."

# "file.json, at #/frequency/readings_Hz: " or "procedure values, at #/a/b: " in front of a message
_WHERE = re.compile(r"^(?:[^:]*?, )?at #/[^\s:]*: ")
# "sample.u_temperature_C must be ..." -> "must be ..." (the field's own label stands beside it)
_KEY = re.compile(r"^[A-Za-z_][\w.\[\]]*(?: \[\d+\])? (must |is |has )")

log = logging.getLogger("fieldbudget.widgets")


def css(widget: w.Widget, *classes: str) -> w.Widget:
    """Add stable CSS classes (the browser test and lab style sheets rely on them)."""
    for c in classes:
        widget.add_class(c)
    return widget


_SHARED: dict[tuple, w.Widget] = {}


def _shared(key: tuple, make: Callable[[], w.Widget]) -> w.Widget:
    obj = _SHARED.get(key)
    if obj is None or obj.comm is None:  # a closed one (Widget.close_all()) is made again
        obj = _SHARED[key] = make()
    return obj


def shared_layout(**props: str) -> w.Layout:
    """One Layout per set of properties, shared by every widget given it.

    Never change a shared Layout in place (it would change every widget using
    it): give the widget another one instead, as :meth:`Cell.set_visible` does.
    """
    return _shared(("layout", *sorted(props.items())), lambda: w.Layout(**props))


def shared_style(widget_class: type) -> w.Widget:
    """The default style object of ``widget_class`` (e.g. ``ipywidgets.Text``), one for all; never changed."""
    return _shared(("style", widget_class), widget_class.style.klass)


def shared_blank(width: str) -> w.HTML:
    """An empty widget ``width`` wide, holding the place of a box not made yet (the same one in every row)."""
    return _shared(("blank", width), lambda: w.HTML(layout=shared_layout(width=width), style=shared_style(w.HTML)))


def user_words(text: str | None, label: str = "") -> str:
    """A message in the user's words: no JSON pointer or key path; ``label`` (the field's label) instead."""
    if not text:
        return ""
    out = _WHERE.sub("", str(text).strip())
    m = _KEY.match(out)
    if m:
        out = (f"{label} " if label else "") + out[m.start(1):]
    return out[:1].upper() + out[1:] if label else out


def message_html(text: str | None, *, last_good: bool = False) -> str:
    """The message under an entry (``fb-msg-text``); ``last_good`` adds that the budget shown is the last good one."""
    if not text:
        return ""
    tail = f' <span class="fb-msg-last-good">{escape(LAST_GOOD)}</span>' if last_good else ""
    return f'<span class="fb-msg-text">{escape(user_words(text))}{tail}</span>'



def status_html(text: str | None, kind: str = "error") -> str:
    return f'<div class="fb-status-{kind}">{escape(text)}</div>' if text else ""


def finding_html(text) -> str:
    """One warning as HTML; a finding of severity "note" (a documented choice) is shown as a note, not a warning."""
    if is_note(text):
        return status_html(str(text), "note")
    return f'<div class="fb-warning">{escape(text)}</div>'


def guarded(fn: Callable) -> Callable:
    """Decorate a view method used as a callback: nothing it raises escapes.

    The view must have a ``status`` HTML widget.
    """

    @functools.wraps(fn)
    def wrapper(self, *args, **kwargs):
        try:
            return fn(self, *args, **kwargs)
        except FieldbudgetError as err:
            self.status.value = status_html(message_for(err))
        except Exception as err:
            log.exception("internal error in %s", fn.__qualname__)
            self.status.value = status_html(f"internal error ({type(err).__name__}: {err}); "
                                            "please report it with the notebook", "internal")
        return None

    return wrapper


class Cell:
    """A control with its message below it; the message box is made on first need.

    Until a message is shown (or :attr:`msg` is read), :attr:`widget` is the
    control itself; then it becomes a ``VBox([control, msg])`` with the class
    ``fb-cell`` and ``on_reshape()`` is called so that the owner puts the new
    widget in place of the old.  ``on_reshape=None`` makes the message box at once.
    """

    __slots__ = ("_msg", "_on_reshape", "control", "widget", "width")

    def __init__(self, control: w.Widget, width: str, on_reshape: Callable[[], None] | None = None) -> None:
        self.control = control
        self.width = width
        self.widget = control
        self._msg: w.HTML | None = None
        self._on_reshape = on_reshape
        if on_reshape is None:
            self.msg  # noqa: B018 (made now: the owner places the widget once)

    @property
    def msg(self) -> w.HTML:
        """The message box (``fb-msg``), made now if it does not exist yet."""
        if self._msg is None:
            self._msg = w.HTML(layout=shared_layout(), style=shared_style(w.HTML), _dom_classes=("fb-msg",))
            outer = self.widget.layout  # the cell takes over the control's width and visibility
            self.control.layout = shared_layout(width=self.width)
            self.widget = w.VBox([self.control, self._msg], layout=outer, _dom_classes=("fb-cell",))
            if self._on_reshape is not None:
                self._on_reshape()
        return self._msg

    def show(self, html: str) -> None:
        """Show ``html`` below the control (an empty text makes no widget)."""
        if (html or self._msg is not None) and self.msg.value != html:
            self.msg.value = html

    def set_visible(self, visible: bool, keep_space: bool = False) -> None:
        """Show or hide; ``keep_space`` hides without moving the boxes after it (table-like rows)."""
        props = {"width": self.width}
        if not visible:
            props["visibility" if keep_space else "display"] = "hidden" if keep_space else "none"
        layout = shared_layout(**props)
        if self.widget.layout is not layout:
            self.widget.layout = layout

    def close(self) -> None:
        """Close the widgets this cell made and its control (shared layouts and styles stay)."""
        for widget in {id(x): x for x in (self.widget, self._msg, self.control) if x is not None}.values():
            widget.close()


class BoundText:
    """An entry box over a :class:`Field` with its message just below it.

    ``on_text(text)`` is called with the new text when the user commits it
    (Enter or leaving the box; ``continuous_update=False``).  With
    ``on_reshape`` the message box is made only when needed (see :class:`Cell`).
    """

    __slots__ = ("_on_text", "_syncing", "box", "cell", "field")

    def __init__(self, field: Field, on_text: Callable[[str], None], *, width: str = "8em",
                 placeholder: str = "", key: str = "", area: bool = False,
                 description: str = "", tooltip: str = "",
                 on_reshape: Callable[[], None] | None = None) -> None:
        self.field = field
        self._on_text = on_text
        self._syncing = False
        cls = w.Textarea if area else w.Text
        # only the options given are passed: each one costs a trait notification
        extra = {k: v for k, v in (("placeholder", placeholder), ("description", description),
                                   ("tooltip", tooltip)) if v}
        style = {"description_width": "initial"} if description else shared_style(cls)
        self.box = cls(value=field.text, continuous_update=False, style=style, layout=shared_layout(width=width),
                       _dom_classes=("fb-field", f"fb-field-{key or field.name}".replace(" ", "-")), **extra)
        self.cell = Cell(self.box, width, on_reshape)
        self.cell.show(message_html(field.error))
        self.box.observe(self._changed, names="value")

    @property
    def msg(self) -> w.HTML:
        return self.cell.msg

    @property
    def widget(self) -> w.Widget:
        return self.cell.widget

    def _changed(self, change) -> None:
        if not self._syncing:
            self._on_text(change["new"])

    def sync(self, field: Field | None = None, *, last_good: bool = False) -> None:
        """Show the field's text and message (a new field replaces the bound one)."""
        if field is not None:
            self.field = field
        self._syncing = True
        try:
            if self.box.value != self.field.text:
                self.box.value = self.field.text
            self.cell.show(message_html(self.field.error, last_good=last_good))
            if self.field.error:
                self.box.add_class("fb-bad")
            else:
                self.box.remove_class("fb-bad")
        finally:
            self._syncing = False

    def set_visible(self, visible: bool, keep_space: bool = False) -> None:
        """Show or hide; ``keep_space`` hides without moving the boxes after it (table-like rows)."""
        self.cell.set_visible(visible, keep_space)

    def close(self) -> None:
        self.cell.close()
