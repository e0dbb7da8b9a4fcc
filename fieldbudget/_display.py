"""Display helpers shared by every ``_repr_html_`` and text table.

Standard library only.  Every string that a user typed (symbols, units,
sources, notes) goes through :func:`escape` before it reaches HTML.
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Sequence

__all__ = ["escape", "fmt", "fmt_dof", "fmt_si", "group_digits", "html_table", "terminal_width", "text_table",
           "html_block",
           "DOF_DISPLAY_LIMIT"]

#: Effective degrees of freedom above this are shown as "> 1000" everywhere
#: (the coverage factor no longer depends on them to the digits printed).
DOF_DISPLAY_LIMIT = 1000


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
    """Degrees of freedom: 'inf' for infinite, '> 1000' above 1000, one decimal otherwise.

    Every screen and report prints nu through this function, so a large nu_eff
    reads the same everywhere.
    """
    if nu is None or math.isinf(nu):
        return "inf"
    if nu > DOF_DISPLAY_LIMIT:
        return f"> {DOF_DISPLAY_LIMIT}"
    return f"{nu:.1f}" if nu != int(nu) else f"{int(nu)}"


_PREFIXES = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "\u00b5"), (1e-9, "n"),
             (1e-12, "p"))
#: Units that take an SI prefix in displays (compound units such as T/m are left alone).
PREFIXABLE_UNITS = frozenset({"T", "Hz", "m", "s", "V", "A", "W", "ohm", "\u03a9", "g", "Pa"})


def group_digits(text: str, sep: str = "\u2009") -> str:
    """Group the digits of a plain decimal number in threes on both sides of the point (thin space).

    ``group_digits("63871234.56789") == "63 871 234.567 89"`` with thin spaces (ISO 80000-1 7.3.1 allows
    groups of three separated by a small space). Four-digit runs are left whole, as usual practice does.
    """
    sign = ""
    if text[:1] in "+-":
        sign, text = text[0], text[1:]
    whole, dot, frac = text.partition(".")
    if not whole.isdigit() or (frac and not frac.isdigit()):
        return sign + text
    if len(whole) > 4:
        head = len(whole) % 3 or 3
        whole = whole[:head] + "".join(sep + whole[i:i + 3] for i in range(head, len(whole), 3))
    if len(frac) > 4:
        frac = sep.join(frac[i:i + 3] for i in range(0, len(frac), 3))
    return sign + whole + dot + frac


def fmt_si(value: float, unit: str, u: float | None = None, *, digits: int = 6, group: bool = True) -> str:
    """``value`` with an SI prefix on ``unit`` and its digits set by ``u`` (two significant digits of u).

    ``fmt_si(2.182e-05, "T") == "21.82 \u00b5T"``; ``fmt_si(1.5000123, "T", 4.1e-8)`` shows the value to the
    decimal place of u's second digit. Units not in :data:`PREFIXABLE_UNITS` keep their unit and get no
    prefix. Without ``u``, ``digits`` significant digits are shown.
    """
    if value is None or not math.isfinite(value):
        return f"{fmt(value)} {unit}".strip()
    scale, prefix = 1.0, ""
    if unit in PREFIXABLE_UNITS:
        ref = abs(value) if value != 0 else abs(u or 0.0)
        if ref > 0:
            for sc, pre in _PREFIXES:
                if ref >= sc * 0.9995:
                    scale, prefix = sc, pre
                    break
            else:
                scale, prefix = _PREFIXES[-1]
    v = value / scale
    if u is not None and u > 0 and math.isfinite(u):
        decimals = max(0, 1 - math.floor(math.log10(u / scale)))
        text = f"{v:.{decimals}f}"
    else:
        text = f"{v:.{digits}g}"
        if "e" in text:
            text = f"{v:.{digits}e}"
    if group and "e" not in text:
        text = group_digits(text)
    return f"{text} {prefix}{unit}".strip()


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


def terminal_width() -> int | None:
    """The width to fit, in characters: ``COLUMNS`` when set, else the terminal's; None when not a terminal.

    Output that goes to a file or a pipe is not wrapped (None), so it stays
    one line per row for tools that read it.
    """
    import os
    import shutil
    import sys

    env = os.environ.get("COLUMNS", "")
    if env.isdigit() and int(env) > 0:
        return int(env)
    try:
        if sys.stdout is not None and sys.stdout.isatty():
            return shutil.get_terminal_size((100, 24)).columns
    except (AttributeError, ValueError, OSError):
        pass
    return None


def text_table(columns: Sequence[str], rows: Iterable[Sequence[object]], width: int | None = None) -> str:
    """A fixed-width plain-text table for terminals.

    Text columns wrap so that every line fits ``width`` characters (default:
    :func:`terminal_width`, which honours ``COLUMNS``): the widest column whose
    cells hold words (the source, first of all) gives way first, down to 8
    characters, so a very narrow terminal gets lines longer than its width
    rather than unreadable columns.  Numbers never wrap.
    """
    import textwrap

    rows = [[str(c) for c in r] for r in rows]
    columns = [str(c) for c in columns]
    n = len(columns)
    widths = [len(c) for c in columns]
    for r in rows:
        for i, c in enumerate(r):
            widths[i] = max(widths[i], len(c))
    limit = terminal_width() if width is None else int(width)
    if limit is None:
        limit = 10**9  # not a terminal: no wrapping
    wrappable = [i for i in range(n) if any(" " in r[i] for r in rows if i < len(r))]
    floor = 8
    while sum(widths) + 2 * (n - 1) > limit:
        candidates = [i for i in wrappable if widths[i] > floor]
        if not candidates:
            break
        # the source column (last) gives way first, then the widest of the others
        i = n - 1 if n - 1 in candidates and widths[n - 1] >= max(widths[j] for j in candidates) / 2 else \
            max(candidates, key=lambda j: widths[j])
        widths[i] -= 1

    def lines_of(cells: Sequence[str]) -> list[str]:
        parts = [textwrap.wrap(c, w, break_long_words=True) or [""] if len(c) > w else [c]
                 for c, w in zip(cells, widths)]
        height = max(len(p) for p in parts) if parts else 1
        out = []
        for k in range(height):
            out.append("  ".join((p[k] if k < len(p) else "").ljust(w) for p, w in zip(parts, widths)).rstrip())
        return out

    sep = "  ".join("-" * w for w in widths)
    body = [text for r in rows for text in lines_of(r)]
    return "\n".join([*lines_of(columns), sep, *body])
