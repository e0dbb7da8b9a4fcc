"""Reports of a record: HTML, PDF, Markdown, LaTeX, CSV and XLSX from one neutral content.

>>> from fieldbudget.report import write_report
>>> write_report(record, "budget.html")            # format from the suffix  # doctest: +SKIP
>>> write_report(record, "budget.xlsx", to="xlsx")                         # doctest: +SKIP

Each report shows the model equation, the budget table with sources, the
rounded statement, the warnings, the traceability chain, the software
versions and the record's digest.  The report layer imports no plotting
library: charts are inline SVG.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..files.atomic import atomic_write_bytes
from .tables import ReportData, build_report_data

__all__ = ["FORMATS", "SUFFIXES", "ReportData", "build_report_data", "render", "write_report"]

FORMATS = ("html", "pdf", "md", "latex", "csv", "xlsx")
SUFFIXES = {".html": "html", ".htm": "html", ".pdf": "pdf", ".md": "md", ".tex": "latex", ".csv": "csv",
            ".xlsx": "xlsx"}


def _format(to: str | None, path: str | Path | None) -> str:
    if to is None and path is not None:
        to = SUFFIXES.get(Path(path).suffix.lower())
        if to is None:
            raise InputError("report format", Path(path).suffix or str(path),
                             f"given with --to, or a file suffix of {', '.join(sorted(SUFFIXES))}", "report")
    if to not in FORMATS:
        raise InputError("report format", to, f"one of {', '.join(FORMATS)}", "report")
    return to


def render(record, to: str) -> bytes:
    """The report of ``record`` in format ``to`` (one of :data:`FORMATS`), as bytes (text is UTF-8)."""
    to = _format(to, None)
    if getattr(record, "kind", None) == "fieldbudget calibration record":
        # a calibration's report is its certificate
        from .certificate import CERTIFICATE_FORMATS, render_certificate

        if to not in CERTIFICATE_FORMATS:
            raise InputError("report format", to, f"one of {', '.join(CERTIFICATE_FORMATS)} for a calibration "
                             "record (its certificate)", "report")
        return render_certificate(record, to)
    data = build_report_data(record)
    if to == "html":
        from .html import render_html
        return render_html(data).encode("utf-8")
    if to == "pdf":
        from .html import render_html
        from .pdf import html_to_pdf
        return html_to_pdf(render_html(data))
    if to == "md":
        from .markdown import render_markdown
        return render_markdown(data).encode("utf-8")
    if to == "latex":
        from .latex import render_latex
        return render_latex(data).encode("utf-8")
    if to == "csv":
        from .csv_ import render_csv
        return render_csv(data).encode("utf-8")
    from .xlsx import render_xlsx
    return render_xlsx(data, record)


def write_report(record, path: str | Path, to: str | None = None) -> Path:
    """Write the report of ``record`` to ``path`` (atomically); the format comes from ``to`` or the suffix."""
    fmt = _format(to, path)
    return atomic_write_bytes(path, render(record, fmt))
