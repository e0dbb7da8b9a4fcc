"""Charts with matplotlib (the ``jupyter`` extra): the Monte Carlo histogram and the variance shares.

The only module of fieldbudget that imports matplotlib.  Figures are built
with :class:`matplotlib.figure.Figure` directly, not pyplot, so they can be
drawn from the Monte Carlo worker thread and do not depend on a backend.
"""

from __future__ import annotations

import base64
import io
import itertools
from typing import Any

from matplotlib.figure import Figure

__all__ = ["img_html", "mc_histogram", "share_chart", "to_png", "to_svg"]

_COLOURS = {"mc": "#4a7ab5", "symmetric": "#c0392b", "shortest": "#7d3c98", "gum": "#1e8449"}


def mc_histogram(mc: Any, gum: Any = None, *, ax: Any = None, title: str | None = None) -> Figure:
    """Histogram of the Monte Carlo output values with the coverage intervals drawn on it.

    Draws the probabilistically symmetric interval and the shortest interval
    of the Monte Carlo distribution (JCGM 101:2008, 7.7 and 7.8), and, when a
    GUM result is given, y +- U (JCGM 100:2008, 6.2.1).
    """
    counts, edges = mc.histogram
    # drawn as deviations from the Monte Carlo estimate: absolute values of a narrow
    # distribution far from zero make unreadable tick labels
    y0 = mc.estimate
    edges = [e - y0 for e in edges]
    fig = None
    if ax is None:
        fig = Figure(figsize=(6.4, 3.4), dpi=90)
        ax = fig.add_subplot()
    widths = [b - a for a, b in itertools.pairwise(edges)]
    ax.bar(edges[:-1], counts, width=widths, align="edge", color=_COLOURS["mc"], alpha=0.55,
           label=f"Monte Carlo, M = {mc.trials}")
    top = max(counts) if len(counts) else 1
    p = 100 * mc.coverage_probability

    def span(lo: float, hi: float, colour: str, label: str, y: float) -> None:
        lo, hi = lo - y0, hi - y0
        ax.axvline(lo, color=colour, lw=1.4)
        ax.axvline(hi, color=colour, lw=1.4)
        ax.annotate("", xy=(lo, y), xytext=(hi, y), arrowprops={"arrowstyle": "<->", "color": colour})
        ax.plot([], [], color=colour, label=label)

    span(*mc.interval, _COLOURS["symmetric"], f"symmetric {p:.4g} % interval (MC)", 1.05 * top)
    span(*mc.shortest_interval, _COLOURS["shortest"], f"shortest {p:.4g} % interval (MC)", 1.12 * top)
    if gum is not None:
        y, U = gum.estimate, gum.expanded_uncertainty
        span(y - U, y + U, _COLOURS["gum"], f"GUM y \u00b1 U (k = {gum.coverage_factor:.3g})", 1.19 * top)
    unit = getattr(mc, "unit", "") or ""
    name = getattr(mc, "output", "y")
    ax.set_xlabel(f"{name} \u2212 {y0:.12g} {unit}".rstrip() + (f"   (in {unit})" if unit else ""))
    ax.set_ylabel("trials per bin")
    ax.set_ylim(0, 1.3 * top)
    ax.legend(loc="upper left", fontsize="x-small", frameon=False)
    if title:
        ax.set_title(title)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def share_chart(result: Any, *, ax: Any = None) -> Figure:
    """Horizontal bars of each input's share of the variance of the result."""
    contribs = list(result.contributions)
    fig = None
    if ax is None:
        fig = Figure(figsize=(5.5, 0.35 * len(contribs) + 1.0), dpi=90)
        ax = fig.add_subplot()
    labels = [c.symbol for c in contribs][::-1]
    shares = [100 * (c.variance_share or 0.0) for c in contribs][::-1]
    ax.barh(labels, shares, color=_COLOURS["mc"])
    ax.set_xlabel("share of the variance of the result / %")
    ax.set_xlim(0, 100)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def to_png(fig: Figure) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


def to_svg(fig: Figure) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    return buf.getvalue()


def img_html(fig: Figure, css_class: str = "fb-figure") -> str:
    """An ``<img>`` tag with the figure as an inline PNG."""
    data = base64.b64encode(to_png(fig)).decode("ascii")
    return f'<img class="{css_class}" src="data:image/png;base64,{data}" alt="chart"/>'
