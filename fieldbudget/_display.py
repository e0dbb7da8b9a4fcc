"""Display helpers shared by every ``_repr_html_`` and text table.

Standard library only.  Every string that a user typed (symbols, units,
sources, notes) goes through :func:`escape` before it reaches HTML.
"""

from __future__ import annotations

import datetime as _dt
import html
import math
from collections.abc import Iterable, Sequence

__all__ = ["escape", "fmt", "fmt_dof", "fmt_si", "fmt_u", "fmt_ppm", "fmt_value", "group_digits", "html_table",
           "terminal_width", "text_table", "html_block", "pretty_unit", "pretty_symbol",
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


def fmt_u(u: float | None, unit: str) -> str:
    """An uncertainty on its own: two significant digits with an SI prefix (``fmt_u(4.86e-06, "T") == "4.9 µT"``).

    Two significant digits of an uncertainty is common practice (JCGM 100:2008, 7.2.6 allows "at most two").
    """
    if u is None:
        return ""
    if not math.isfinite(u) or u == 0:
        return f"{fmt(u)} {pretty_unit(unit)}".strip()
    return fmt_si(u, pretty_unit(unit), u)


_SUPERSCRIPT = str.maketrans("-0123456789", "\u207b\u2070\u00b9\u00b2\u00b3\u2074\u2075\u2076\u2077\u2078\u2079")


def fmt_value(value: float | None, unit: str, u: float | None = None) -> str:
    """A quantity's estimate for a table: :func:`fmt_si` when its unit takes a prefix, otherwise (a ratio,
    1/K) a power of ten once the digits set by ``u`` would need more than five decimals:
    ``fmt_value(2.1e-09, "", 5e-10) == "2.10×10⁻⁹"``.
    """
    nice = pretty_unit(unit)
    if value is None or not math.isfinite(value) or unit in PREFIXABLE_UNITS:
        return fmt_si(value, nice, u)
    if value == 0 and u:
        return f"0 {nice}".strip()
    ref = max(abs(value), abs(u or 0.0))
    if ref == 0 or ref >= 1e-3:
        return fmt_si(value, nice, u)
    e = math.floor(math.log10(ref))
    decimals = max(0, e - math.floor(math.log10(u)) + 1) if u else 3
    text = f"{value / 10 ** e:.{decimals}f}\u00d710{str(e).translate(_SUPERSCRIPT)}"
    return f"{text} {nice}".strip()


def fmt_ppm(x: float | None, u: float | None = None) -> str:
    """A relative quantity in parts per million (``fmt_ppm(4.2e-7) == "0.42 ppm"``), digits set by ``u``."""
    if x is None or not math.isfinite(x):
        return fmt(x)
    v = x * 1e6
    if u is not None and u > 0:
        decimals = max(0, 1 - math.floor(math.log10(u * 1e6)))
        return f"{v:.{decimals}f} ppm"
    return f"{v:.3g} ppm"


_UNIT_WORDS = (("degC", "\u00b0C"), ("deg", "\u00b0"), ("ohm", "\u03a9"), ("uT", "\u00b5T"), ("um", "\u00b5m"),
               ("us", "\u00b5s"), ("uV", "\u00b5V"), ("uA", "\u00b5A"), ("^-1", "\u207b\u00b9"),
               ("^2", "\u00b2"), ("^3", "\u00b3"), ("**2", "\u00b2"), ("*", "\u00b7"))


def pretty_unit(unit: str | None) -> str:
    """A unit as the eye reads it: ``degC`` -> °C, ``uT`` -> µT, ``ohm`` -> Ω, ``m^2`` -> m², ``1`` -> ''."""
    if not unit or unit.strip() == "1":
        return ""
    out = unit.strip()
    for plain, nice in _UNIT_WORDS:
        if plain == "deg" and "\u00b0C" in out:
            continue
        out = out.replace(plain, nice)
    return out


_GREEK = {"alpha": "\u03b1", "beta": "\u03b2", "gamma": "\u03b3", "delta": "\u03b4", "theta": "\u03b8",
          "chi": "\u03c7", "sigma": "\u03c3", "nu": "\u03bd", "mu": "\u03bc", "tau": "\u03c4",
          "omega": "\u03c9", "phi": "\u03c6", "rho": "\u03c1", "lambda": "\u03bb", "eta": "\u03b7"}


def pretty_symbol(symbol: str) -> str:
    """A model symbol for screens and reports, as HTML: greek names as letters, ``_sh`` (shielded) as a
    prime, the rest after the first ``_`` as a subscript: ``gamma_p_sh`` -> γ′<sub>p</sub>.

    The plain symbol stays the key everywhere else (files, records, the model expression).
    """
    parts = symbol.split("_")
    prime = ""
    if len(parts) > 1 and parts[-1] == "sh":
        parts, prime = parts[:-1], "\u2032"
    head = _GREEK.get(parts[0], parts[0])
    sub = "_".join(parts[1:])
    return escape(head) + prime + (f"<sub>{escape(sub)}</sub>" if sub else "")


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


def utc_now() -> str:
    """The current UTC time to the second, as ISO 8601 with a Z (how records, signatures and logs stamp it)."""
    return _dt.datetime.now(_dt.UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")
