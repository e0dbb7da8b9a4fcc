"""Charts with matplotlib (the ``jupyter`` extra): Monte Carlo histogram, variance shares, calibration curve.

The only module of fieldbudget that imports matplotlib.  Figures are built
with :class:`matplotlib.figure.Figure` directly, not pyplot, so they can be
drawn from the Monte Carlo worker thread and do not depend on a backend.

A bare ``Figure`` shows in Jupyter only when a pyplot backend has registered
a formatter for it; in a fresh kernel it prints ``<Figure size ...>``.
Importing this module registers a PNG formatter for every ``Figure`` with the
running IPython (when there is one), so each function here, and any other
function that returns a ``Figure``, displays as an image in a fresh kernel.
"""

from __future__ import annotations

import base64
import io
import itertools
import math
from typing import Any

from matplotlib.figure import Figure

from ._display import escape, fmt_si, pretty_unit

__all__ = ["calibration_curve", "img_html", "mc_histogram", "register_display", "share_chart", "to_png", "to_svg"]

# neutral palette of our own: slate, brick, plum, moss, grey
_COLOURS = {"mc": "#6b8bad", "symmetric": "#9c3d2e", "shortest": "#6a4c7d", "gum": "#3f6b3a", "bar": "#3b5b7a",
            "line": "#24292f", "band": "#b8c7d6", "grid": "#d0d7de"}
_DPI = 96


def register_display() -> bool:
    """Register :func:`to_png` as IPython's PNG formatter for ``Figure``; True when IPython is running."""
    try:
        from IPython import get_ipython
    except ImportError:  # pragma: no cover - IPython comes with the jupyter extra
        return False
    shell = get_ipython()
    if shell is None:
        return False
    shell.display_formatter.formatters["image/png"].for_type(Figure, to_png)
    return True


def _scale(values: list[float], unit: str) -> tuple[float, str]:
    """A factor and a prefixed unit that put the largest |value| between 1 and 1000 (T -> mT, µT)."""
    big = max((abs(v) for v in values if math.isfinite(v)), default=0.0)
    if not big or unit not in ("T", "Hz", "m", "s", "V", "A"):
        return 1.0, pretty_unit(unit)
    text = fmt_si(big, unit)
    prefixed = text.split(" ")[-1]
    factor = {"G": 1e-9, "M": 1e-6, "k": 1e-3, "m": 1e3, "\u00b5": 1e6, "n": 1e9, "p": 1e12}.get(
        prefixed[0] if len(prefixed) > len(unit) else "", 1.0)
    return factor, prefixed


def mc_histogram(mc: Any, gum: Any = None, *, ax: Any = None, title: str | None = None) -> Figure:
    """Histogram of the Monte Carlo output values with the coverage intervals drawn on it.

    Draws the probabilistically symmetric interval and the shortest interval
    of the Monte Carlo distribution (JCGM 101:2008, 7.7 and 7.8), and, when a
    GUM result is given, y ± U (JCGM 100:2008, 6.2.1).  The legend sits below
    the axes, so it never covers the histogram or the interval marks.
    """
    counts, edges = mc.histogram
    # drawn as deviations from the Monte Carlo estimate: absolute values of a narrow
    # distribution far from zero make unreadable tick labels
    y0 = mc.estimate
    unit = getattr(mc, "unit", "") or ""
    spans = [mc.interval, mc.shortest_interval]
    if gum is not None:
        spans.append((gum.estimate - gum.expanded_uncertainty, gum.estimate + gum.expanded_uncertainty))
    factor, shown_unit = _scale([e - y0 for e in edges] + [v - y0 for s in spans for v in s], unit)
    xs = [(e - y0) * factor for e in edges]
    fig = None
    if ax is None:
        fig = Figure(figsize=(7.2, 4.2), dpi=_DPI)
        ax = fig.add_subplot()
    widths = [b - a for a, b in itertools.pairwise(xs)]
    ax.bar(xs[:-1], counts, width=widths, align="edge", color=_COLOURS["mc"], alpha=0.6,
           label=f"Monte Carlo trials (M = {mc.trials:,})".replace(",", "\u2009"))
    top = max(counts) if len(counts) else 1
    p = 100 * mc.coverage_probability

    def span(lo: float, hi: float, colour: str, style: str, label: str, y: float) -> None:
        lo, hi = (lo - y0) * factor, (hi - y0) * factor
        ax.axvline(lo, color=colour, lw=1.4, ls=style)
        ax.axvline(hi, color=colour, lw=1.4, ls=style)
        ax.annotate("", xy=(lo, y), xytext=(hi, y), arrowprops={"arrowstyle": "<->", "color": colour})
        ax.plot([], [], color=colour, ls=style, label=label)

    span(*mc.interval, _COLOURS["symmetric"], "-", f"Monte Carlo, probabilistically symmetric {p:.4g} % interval",
         1.05 * top)
    span(*mc.shortest_interval, _COLOURS["shortest"], "--", f"Monte Carlo, shortest {p:.4g} % interval", 1.12 * top)
    if gum is not None:
        span(*spans[2], _COLOURS["gum"], ":", f"GUM, y \u00b1 U (k = {gum.coverage_factor:.3g})", 1.19 * top)
    name = getattr(mc, "output", "y")
    ax.set_xlabel(f"{name} \u2212 {fmt_si(y0, unit, mc.standard_uncertainty)}, in {shown_unit}".rstrip(", in"))
    ax.set_ylabel("trials per bin")
    ax.set_ylim(0, 1.3 * top)
    ax.grid(axis="y", color=_COLOURS["grid"], lw=0.6)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize="small", frameon=False)
    if title:
        ax.set_title(title)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def share_chart(result: Any, *, ax: Any = None, label: Any = None) -> Figure:
    """Horizontal bars of each input's share of the variance of the result, largest on top.

    ``label(contribution)`` gives the text of a bar (the symbol by default).
    """
    contribs = sorted(result.contributions, key=lambda c: c.variance_share or 0.0, reverse=True)
    fig = None
    if ax is None:
        fig = Figure(figsize=(6.4, 0.26 * len(contribs) + 0.9), dpi=_DPI)
        ax = fig.add_subplot()
    names = [label(c) if label else c.symbol for c in contribs][::-1]
    shares = [100 * max(0.0, c.variance_share or 0.0) for c in contribs][::-1]
    bars = ax.barh(range(len(names)), shares, color=_COLOURS["bar"], height=0.7)
    ax.set_yticks(range(len(names)), names, fontsize="small")
    for bar, s in zip(bars, shares):
        ax.text(bar.get_width() + 1, bar.get_y() + bar.get_height() / 2, f"{s:.1f} %", va="center",
                fontsize="x-small")
    ax.set_xlabel("share of the variance of the result / %")
    ax.set_xlim(0, 110)
    ax.set_ylim(-0.6, len(names) - 0.4)
    ax.grid(axis="x", color=_COLOURS["grid"], lw=0.6)
    ax.set_axisbelow(True)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def calibration_curve(points: Any, curve: Any = None, *, title: str | None = None) -> Figure:
    """The instrument's error at each point with its expanded uncertainty as error bars, the fitted
    curve, and below it the residuals of the fit.

    ``points`` are calibration point results (``indication``, ``error``, ``expanded_uncertainty``);
    ``curve`` a calibration curve (or its ``CurveFit``) in error form, or ``None``.
    The error bars are y ± U(E) as reported (JCGM 100:2008, 6.2.1).
    """
    pts = list(points)
    x = [p.indication for p in pts]
    y = [p.error for p in pts]
    big_u = [p.expanded_uncertainty for p in pts]
    yfac, yunit = _scale([abs(a) + b for a, b in zip(y, big_u)], "T")
    fit = getattr(curve, "fit", curve)
    fig = Figure(figsize=(7.2, 4.8), dpi=_DPI)
    grid = fig.add_gridspec(2, 1, height_ratios=(3, 1.3), hspace=0.08)
    ax = fig.add_subplot(grid[0])
    ax.errorbar(x, [v * yfac for v in y], yerr=[u * yfac for u in big_u], fmt="o", color=_COLOURS["bar"],
                ecolor=_COLOURS["bar"], capsize=4, label="error E at each point, with U(E)")
    ax.axhline(0, color=_COLOURS["grid"], lw=0.8)
    if fit is not None:
        lo, hi = min(x), max(x)
        xs = [lo + (hi - lo) * i / 100 for i in range(101)]
        ax.plot(xs, [fit.value_at(v) * yfac for v in xs], color=_COLOURS["line"], lw=1.2,
                label=f"fitted curve, degree {fit.degree}")
    ax.set_ylabel(f"error E / {yunit}")
    ax.tick_params(labelbottom=False)
    ax.grid(color=_COLOURS["grid"], lw=0.5)
    ax.legend(loc="upper left", fontsize="small", frameon=False)
    if title:
        ax.set_title(title, fontsize="medium")
    res_ax = fig.add_subplot(grid[1], sharex=ax)
    if fit is not None:
        res = list(fit.residuals)
        rfac, runit = _scale(res + big_u, "T")
        res_ax.errorbar(list(fit.x), [r * rfac for r in res], yerr=[u * rfac for u in big_u[:len(res)]], fmt="s",
                        ms=4, color=_COLOURS["symmetric"], ecolor=_COLOURS["symmetric"], capsize=3)
        res_ax.set_ylabel(f"residual / {runit}", fontsize="small")
    res_ax.axhline(0, color=_COLOURS["line"], lw=0.8)
    res_ax.grid(color=_COLOURS["grid"], lw=0.5)
    res_ax.set_xlabel("indication / T")
    fig.subplots_adjust(left=0.12, right=0.97, top=0.93 if title else 0.97, bottom=0.12)
    return fig


def to_png(fig: Figure) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight")
    return buf.getvalue()


def to_svg(fig: Figure) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    return buf.getvalue()


def img_html(fig: Figure, css_class: str = "fb-figure", alt: str = "chart") -> str:
    """An ``<img>`` tag with the figure as an inline PNG."""
    data = base64.b64encode(to_png(fig)).decode("ascii")
    return f'<img class="{escape(css_class)}" src="data:image/png;base64,{data}" alt="{escape(alt)}"/>'


register_display()
