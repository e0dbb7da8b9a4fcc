"""The kit's stylesheet (``fieldbudget.css`` beside this module) as a widget.

Each top-level view puts one :func:`style_widget` in front of its parts; the
rules are scoped to ``.fb-app`` and ``.fb-proc``, so a page with several forms
is styled once and nothing else on the page changes.
"""

from __future__ import annotations

from functools import cache
from importlib.resources import files

import ipywidgets as w

__all__ = ["stylesheet", "style_widget"]


@cache
def stylesheet() -> str:
    return files(__package__).joinpath("fieldbudget.css").read_text(encoding="utf-8")


def style_widget() -> w.HTML:
    """An HTML widget holding the stylesheet (takes no space on the page)."""
    box = w.HTML(f"<style>{stylesheet()}</style>", layout=w.Layout(display="none"))
    box.add_class("fb-style")
    return box
