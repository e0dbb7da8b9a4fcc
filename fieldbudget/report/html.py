"""Self-contained HTML report: one file, inline CSS, charts as inline SVG, no scripts.

Also the source of the PDF (printed by headless chromium, see :mod:`.pdf`).
"""

from __future__ import annotations

from .. import __version__
from ._env import html_env
from .charts import histogram_chart, share_chart
from .tables import ReportData

__all__ = ["render_html"]


def render_html(data: ReportData) -> str:
    """The report as one HTML document (text)."""
    template = html_env().get_template("report.html.j2")
    return template.render(d=data, version=__version__, share_chart=share_chart(data),
                           histogram_chart=histogram_chart(data))
