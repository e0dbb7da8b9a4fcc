"""Geometry of the two report charts, drawn as inline SVG by a jinja2 template.

The report layer sits below ``plots`` and must not import matplotlib, so the
charts are plain SVG: a variance-share bar chart and, where Monte Carlo ran,
a histogram of the output's trials.  Only rectangle coordinates are computed
here; ``templates/charts.svg.j2`` draws them.
"""

from __future__ import annotations

from .._display import fmt

__all__ = ["histogram_chart", "share_chart"]


def share_chart(data, width: float = 520.0) -> dict:
    """Horizontal bars of the variance shares (largest first), in SVG user units."""
    label_w, bar_w, row_h = 90.0, width - 160.0, 22.0
    bars = []
    for i, b in enumerate(data.bars(bar_w)):
        bars.append({"label": b["label"], "text": b["text"], "x": label_w, "y": 8 + row_h * i, "w": b["w"],
                     "h": row_h - 6, "tx": label_w + b["w"] + 6, "ty": 8 + row_h * i + row_h / 2})
    return {"width": width, "height": 16 + row_h * max(1, len(bars)), "bars": bars, "label_w": label_w,
            "title": f"Variance shares of the inputs in u_c({data.symbol})"}


def histogram_chart(data, width: float = 520.0, height: float = 150.0) -> dict | None:
    """Histogram of the Monte Carlo trials with the GUM estimate marked; ``None`` without a run."""
    hist = data.histogram
    if not hist:
        return None
    lo, hi = hist[0][0], hist[-1][1]
    top = max(c for _, _, c in hist) or 1
    span = (hi - lo) or 1.0
    pad, plot_h = 10.0, height - 40.0
    sx = (width - 2 * pad) / span
    bars = []
    for a, b, c in hist:
        h = plot_h * c / top
        bars.append({"x": pad + (a - lo) * sx, "w": max(0.5, (b - a) * sx), "y": 10 + plot_h - h, "h": h})
    gx = pad + (data.value - lo) * sx
    return {"width": width, "height": height, "bars": bars, "axis_y": 10 + plot_h, "gum_x": gx,
            "show_gum": 0.0 <= gx <= width, "lo": fmt(lo, 10), "hi": fmt(hi, 10), "pad": pad,
            "title": f"Monte Carlo distribution of {data.symbol} ({sum(c for *_, c in hist)} trials shown)"}
