"""Markdown report, for a lab's procedure documents (GitHub-flavoured tables; user text escaped)."""

from __future__ import annotations

from .. import __version__
from ._env import Raw, markdown_env
from .tables import ReportData

__all__ = ["render_markdown"]


def render_markdown(data: ReportData) -> str:
    return markdown_env().get_template("report.md.j2").render(d=data, Raw=Raw, version=__version__)
