"""Display helpers shared by every ``_repr_html_`` and text table.

Standard library only.  Every string that a user typed (symbols, units,
sources, notes) goes through :func:`escape` before it reaches HTML.
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Sequence

__all__ = ["escape", "fmt", "fmt_dof", "html_table", "text_table", "html_block"]


def escape(text: object) -> str:
    """HTML-escape ``text`` (quotes included)."""
    return html.escape(str(text), quote=True)


def fmt(x: float | None, digits: int = 6) -> str:
    """Format a number with ``digits`` significant digits; ``None`` -> empty, inf -> 'inf'."""
    if x is None:
        return ""
    if isinstance(x, float) and math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if isinstance(x, float) and math.isnan(x):
        return "nan"
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def fmt_dof(nu: float | None) -> str:
    """Degrees of freedom: 'inf' for infinite, one decimal otherwise."""
    if nu is None or math.isinf(nu):
        return "inf"
    return f"{nu:.1f}" if nu != int(nu) else f"{int(nu)}"


def html_table(
    columns: Sequence[str],
    rows: Iterable[Sequence[object]],
    *,
    caption: str | None = None,
    css_class: str = "fb-table",
    footer: Sequence[object] | None = None,
) -> str:
    """An HTML table; every cell is escaped."""
    out = [f'<table class="{escape(css_class)}">']
    if caption:
        out.append(f"<caption>{escape(caption)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{escape(c)}</th>" for c in columns) + "</tr></thead>")
    out.append("<tbody>")
    for row in rows:
        out.append("<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>")
    out.append("</tbody>")
    if footer is not None:
        out.append("<tfoot><tr>" + "".join(f"<td>{escape(c)}</td>" for c in footer) + "</tr></tfoot>")
    out.append("</table>")
    return "".join(out)


def html_block(title: str, body_html: str, css_class: str = "fb-block") -> str:
    """A titled div around already-escaped HTML."""
    return f'<div class="{escape(css_class)}"><strong>{escape(title)}</strong>{body_html}</div>'


def text_table(columns: Sequence[str], rows: Iterable[Sequence[object]]) -> str:
    """A fixed-width plain-text table for terminals."""
    rows = [[str(c) for c in r] for r in rows]
    widths = [len(c) for c in columns]
    for r in rows:
        for i, c in enumerate(r):
            widths[i] = max(widths[i], len(c))
    line = "  ".join(c.ljust(w) for c, w in zip(columns, widths))
    sep = "  ".join("-" * w for w in widths)
    body = ["  ".join(c.ljust(w) for c, w in zip(r, widths)) for r in rows]
    return "\n".join([line, sep, *body])
