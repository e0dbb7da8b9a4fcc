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
from ..errors import FieldbudgetError

__all__ = ["BoundText", "css", "guarded", "message_html", "status_html", "user_words", "LAST_GOOD"]

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


class BoundText:
    """An entry box over a :class:`Field` with its message just below it.

    ``on_text(text)`` is called with the new text when the user commits it
    (Enter or leaving the box; ``continuous_update=False``).
    """

    __slots__ = ("_on_text", "_syncing", "box", "field", "msg", "widget")

    def __init__(self, field: Field, on_text: Callable[[str], None], *, width: str = "8em",
                 placeholder: str = "", key: str = "", area: bool = False,
                 description: str = "", tooltip: str = "") -> None:
        self.field = field
        self._on_text = on_text
        self._syncing = False
        cls = w.Textarea if area else w.Text
        style = {"description_width": "initial"} if description else {}
        self.box = cls(value=field.text, placeholder=placeholder, continuous_update=False,
                       description=description, tooltip=tooltip or None, style=style,
                       layout=w.Layout(width=width))
        css(self.box, "fb-field", f"fb-field-{key or field.name}".replace(" ", "-"))
        self.msg = css(w.HTML(message_html(field.error)), "fb-msg")
        self.widget = css(w.VBox([self.box, self.msg], layout=w.Layout(width=width)), "fb-cell")
        self.box.observe(self._changed, names="value")

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
            m = message_html(self.field.error, last_good=last_good)
            if self.msg.value != m:
                self.msg.value = m
            if self.field.error:
                self.box.add_class("fb-bad")
            else:
                self.box.remove_class("fb-bad")
        finally:
            self._syncing = False

    def set_visible(self, visible: bool, keep_space: bool = False) -> None:
        """Show or hide; ``keep_space`` hides without moving the boxes after it (table-like rows)."""
        if keep_space:
            self.widget.layout.visibility = None if visible else "hidden"
        else:
            self.widget.layout.display = None if visible else "none"
